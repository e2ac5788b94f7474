"""A sample counter is carried, not used to decide which samples are similar."""

from __future__ import annotations

import pytest

from imputer_app.engine import default_roles
from imputer_app.sheets import read_sheet


def test_running_number_is_an_identifier_and_carried_by_default(tmp_path):
    path = tmp_path / "counted.csv"
    rows = "".join(f"{i},{7 + i / 100},{'' if i == 3 else 2 + i / 10}\n" for i in range(1, 13))
    path.write_text("No,pH,Nitrate\n" + rows, encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.column("No").kind == "identifier"
    assert "running number" in " ".join(sheet.column("No").notes)
    assert default_roles(sheet)["No"] == "carried"
    assert sheet.frame["No"].tolist() == [str(i) for i in range(1, 13)]  # kept as written


@pytest.mark.parametrize("values", [[12, 13, 15, 14] * 3, list(range(1, 10))])
def test_whole_numbers_that_are_not_a_long_counter_stay_numbers(tmp_path, values):
    path = tmp_path / "counts.csv"
    path.write_text("Colonies,pH\n" + "".join(f"{v},7.1\n" for v in values), encoding="utf-8")
    assert read_sheet(path).column("Colonies").kind == "number"


def test_evenly_stepped_decimals_stay_numbers(tmp_path):
    path = tmp_path / "steps.csv"
    path.write_text("Depth,pH\n" + "".join(f"{i + 0.5},7.1\n" for i in range(12)), encoding="utf-8")
    assert read_sheet(path).column("Depth").kind == "number"
