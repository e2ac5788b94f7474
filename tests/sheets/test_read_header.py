"""Header row, units row and column names (common lab-sheet layouts, common practice, no source)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from imputer_app.sheets._header import is_unit, unique_names, unit_from_name
from imputer_app.sheets._model import Sheet
from imputer_app.sheets._read import read_sheet


@pytest.mark.parametrize(
    "text",
    ["mg/L", "µg/L", "μg/L", "ug/L", "µS/cm", "mS/m", "°C", "%", "‰", "NTU", "mmol/L", "g/kg", "mg L-1",
     "cfu/100 mL", "m³/s", "m3/s", "ppm", "ppb", "mV", "(mg/L)", "[°C]", "mg/L as N", "kg/m^3", "mol/kg"],
)  # fmt: skip
def test_is_unit(text: str) -> None:
    assert is_unit(text)


@pytest.mark.parametrize(
    "text",
    ["north", "lab", "sample", "Site A", "7.2", "", "broken vial", "pH meter", "nitrate", "2024-03-01"],
)
def test_is_not_unit(text: str) -> None:
    assert not is_unit(text)


@pytest.mark.parametrize(
    ("name", "unit"),
    [
        ("nitrate [mg/L]", "mg/L"),
        ("nitrate (mg/L)", "mg/L"),
        ("Temperature (°C)", "°C"),
        ("EC [µS/cm]", "µS/cm"),
        ("ratio [-]", "-"),
        ("pH (lab)", None),
        ("site (code)", None),
        ("nitrate", None),
        ("(mg/L)", None),
    ],
)
def test_unit_from_name(name: str, unit: str | None) -> None:
    assert unit_from_name(name) == unit


def test_unique_names() -> None:
    names, notes, problems = unique_names(["pH", "", "pH", "pH (2)", "", "pH"], [0, 1, 2, 3, 4, 6])
    # "pH (2)" is already a header, so the second "pH" becomes "pH (3)"
    assert names == ["pH", "column 2", "pH (3)", "pH (2)", "column 5", "pH (4)"]
    assert notes[0] == () and "blank" in notes[1][0] and "more than once" in notes[2][0]
    assert problems[0] == "column 2 has no header; it is named 'column 2'"
    assert len(problems) == 4


def _read_text(tmp_path: Path, text: str, **options: Any) -> Sheet:
    path = tmp_path / "h.csv"
    path.write_text(text, encoding="utf-8")
    return read_sheet(path, **options)


def test_title_metadata_and_blank_rows_skipped(tmp_path: Path) -> None:
    text = (
        "River survey,,,\n"
        "Lab:,Acme water lab,,\n"
        "Date:,2024-06-01,,\n"
        ",,,\n"
        "station,nitrate,phosphate,temperature\n"
        ",mg/L,mg/L,°C\n"
        "ST-01,0.5,0.02,12.5\n"
        "ST-02,0.7,<0.02,13.0\n"
    )
    sheet = _read_text(tmp_path, text)
    assert (sheet.source.header_row, sheet.source.units_row) == (5, 6)
    assert sheet.frame.index.tolist() == [7, 8]
    assert sheet.units == {"station": None, "nitrate": "mg/L", "phosphate": "mg/L", "temperature": "°C"}


def test_units_in_names_when_no_units_row(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "site,nitrate [mg/L],temp (°C),pH (lab)\nA,0.5,12,7.1\nB,0.6,13,7.2\n")
    assert sheet.source.units_row is None
    assert sheet.units == {"site": None, "nitrate [mg/L]": "mg/L", "temp (°C)": "°C", "pH (lab)": None}


def test_first_data_row_of_text_is_not_a_units_row(tmp_path: Path) -> None:
    """IDs such as "S1" or "m2" look like units, but no number column lies under them."""
    sheet = _read_text(tmp_path, "id,zone,value\nS1,m2,1.5\nS2,m3,2.5\n")
    assert sheet.source.units_row is None
    assert sheet.frame["zone"].tolist() == ["m2", "m3"]


def test_units_row_with_placeholders(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "id;pH;cond;note\n;-;µS/cm;\nA;7,1;250;ok\nB;7,3;260;\n")
    assert sheet.source.units_row == 2
    assert sheet.units == {"id": None, "pH": None, "cond": "µS/cm", "note": None}


def test_sheet_without_header(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "1.5,2.5,3.5\n4.5,NA,6.5\n")
    assert sheet.source.header_row == 0
    assert [c.name for c in sheet.columns] == ["column 1", "column 2", "column 3"]
    assert sheet.frame.index.tolist() == [1, 2]
    assert sheet.problems[0].startswith("no header row found")


@pytest.mark.parametrize(("header_row", "first_name", "rows"), [(2, "a", [3, 4]), (3, "1", [4])])
def test_header_row_override(tmp_path: Path, header_row: int, first_name: str, rows: list[int]) -> None:
    sheet = _read_text(tmp_path, "title\na,b\n1,2\n3,4\n", header_row=header_row)
    assert sheet.source.header_row == header_row
    assert sheet.columns[0].name == first_name
    assert sheet.frame.index.tolist() == rows


def test_header_row_zero_means_no_header(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "a,b\n1,2\n", header_row=0)
    assert [c.name for c in sheet.columns] == ["column 1", "column 2"]
    assert sheet.frame.index.tolist() == [1, 2]


def test_header_with_line_breaks_and_spaces(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, '" site ","Nitrate\n(mg/L)"\nA,0.5\nB,0.6\n')
    assert [c.name for c in sheet.columns] == ["site", "Nitrate (mg/L)"]
    assert sheet.units["Nitrate (mg/L)"] == "mg/L"


def test_footer_note_after_a_blank_row_is_left_out(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "id,x,y\nA,1,2\nB,3,4\n,,\nValues below LOD are shown as <LOD,,\n")
    assert sheet.frame.index.tolist() == [2, 3]
    assert any("row(s) 5 below the table look like notes" in p for p in sheet.problems)


def test_empty_columns_without_header_are_dropped(tmp_path: Path) -> None:
    sheet = _read_text(tmp_path, "id,,x,empty\nA,,1,\nB,,2,\n")
    assert [c.name for c in sheet.columns] == ["id", "x", "empty"]
    assert sheet.column("empty").kind == "empty"


def test_lone_id_after_a_blank_row_stays_data(tmp_path: Path) -> None:
    """A sample whose measurements are all missing is not mistaken for a note."""
    sheet = _read_text(tmp_path, "id,x,y\nA,1,2\nB,3,4\n,,\nS99,,\n")
    assert sheet.frame.index.tolist() == [2, 3, 5]
    assert [str(sheet.states.at[5, name]) for name in ("id", "x", "y")] == ["observed", "missing", "missing"]
