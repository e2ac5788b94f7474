"""Problems a reader must say in words: a column with no value, text read as a gap."""

from __future__ import annotations

from pathlib import Path

import pytest

from imputer_app.sheets import read_sheet


@pytest.mark.parametrize("cells", [["", "", ""], ["NA", "", "lost"]])
def test_a_column_without_any_value_is_reported(tmp_path: Path, cells: list[str]) -> None:
    # Such a column becomes a carried column and stays empty; without a word about it
    # the summary said "left empty: none" while a whole column stayed blank.
    path = tmp_path / "lab.csv"
    rows = "".join(f"S{i},{i}.5,{cell}\n" for i, cell in enumerate(cells))
    path.write_text("id,a,b\n" + rows, encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.kinds["b"] == "empty"
    assert sheet.problems == ["column 'b' holds no value (every cell is blank or a missing marker)"]


def test_text_in_a_number_column_is_read_as_a_gap(tmp_path: Path) -> None:
    # The engine fills such a cell when its column is a fill column, so the words must
    # not promise that the cell is "left empty".
    path = tmp_path / "lab.csv"
    path.write_text("id,a\nS1,1.5\nS2,oops\nS3,2.5\n", encoding="utf-8")
    problems = read_sheet(path).problems
    assert problems == ["'a' row 3: 'oops' is not a number; it is read as a gap and marked text_in_number"]
