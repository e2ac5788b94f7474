"""`kinfill fill`: --layout, --marker, and a summary that names the workbook's data sheet."""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from imputer_app.sheets import read_export_plan
from tests.cli.helpers import run
from tests.sheets import lab_fixture

ND_ROW = lab_fixture.FIRST_DATA_ROW + lab_fixture.ND_ROW


@pytest.fixture
def lab(tmp_path: Path) -> Path:
    return lab_fixture.build(tmp_path / "lab.xlsx")


def _log(path: Path) -> pd.DataFrame:
    return pd.read_excel(path, sheet_name="Fill log", engine="openpyxl")


def test_workbook_layout_is_the_default_and_names_the_data_sheet(lab: Path, capsys) -> None:
    out_path = lab.with_name("lab.filled.xlsx")
    code, out, err = run(["fill", lab], capsys)
    assert code == 0, err
    assert f'  {out_path}  (your workbook, every sheet kept; filled cells marked in sheet "Results"' in out
    names = openpyxl.load_workbook(out_path, read_only=True).sheetnames
    assert names[:2] == ["Results", "Methods"] and "Filled" not in names
    log = _log(out_path).set_index(["row", "column"])
    # "n.d." is below an unknown limit of detection by default; the log keeps its text
    assert log.loc[(ND_ROW, "pH"), ["original_state", "original_text"]].tolist() == ["censored", "n.d."]
    assert not {"Notes", "Base sum", "Sample ID", "Sampled"} & set(log.index.get_level_values("column"))
    # rows are named as the lab names them: the first carried identifier
    assert log.loc[(ND_ROW, "pH"), "sample_id"] == f"S-{lab_fixture.ND_ROW + 1:03d}"
    note = openpyxl.load_workbook(out_path)["Results"][f"C{ND_ROW}"].comment
    assert note is not None and "(samples S-0" in note.text


def test_table_layout_and_marker_meaning(lab: Path, capsys) -> None:
    out_path = lab.with_name("flat.xlsx")
    code, out, err = run(
        ["fill", lab, "--out", out_path, "--layout", "table", "--marker", "n.d.=missing"], capsys
    )
    assert code == 0, err
    assert f'  {out_path}  (cleaned sheet "Filled"' in out
    assert "Filled" in openpyxl.load_workbook(out_path, read_only=True).sheetnames
    log = _log(out_path).set_index(["row", "column"])
    assert log.loc[(ND_ROW, "pH"), ["original_state", "original_text"]].tolist() == ["missing", "n.d."]
    assert read_export_plan(out_path).markers == {"n.d.": "missing"}


@pytest.mark.parametrize("bad", ["n.d.", "n.d.=gone", "=missing"])
def test_a_bad_marker_option_is_one_line(lab: Path, capsys, bad: str) -> None:
    code, _, err = run(["fill", lab, "--marker", bad], capsys)
    assert code == 2 and len(err.strip().splitlines()) <= 3 and "--marker" in err
