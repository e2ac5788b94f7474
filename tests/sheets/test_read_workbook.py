"""Workbooks written by two independent writers (openpyxl, xlsxwriter) and by hand (ODS).

Every value and every state read back is compared with the table written. Values are
also cross-checked with openpyxl's own reader (``data_only=True``), an independent
reader of the same file. The ODS file follows OASIS OpenDocument 1.2 part 1, sec. 9.1
(table:table, table:table-row, table:table-cell with office:value-type).
"""

from __future__ import annotations

import datetime as dt
import math
import zipfile
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

import numpy as np
import openpyxl
import pandas as pd
import pytest
import xlsxwriter

from imputer_app.sheets._model import Sheet
from imputer_app.sheets._read import list_sheets, read_sheet
from tests.sheets.test_read_bad_input import biff8_workbook
from tests.sheets.test_read_text import note

NAN = math.nan
OBS, M, C, T = "observed", "missing", "censored", "text_in_number"

# File rows 1-10: a title, a blank row, the header (a blank and a duplicate name), a
# units row, data with one blank row (7). Cells hold numbers, text, markers, censored
# entries, a limit column, text in a number column, dates, booleans and padded text.
HEADER: list[Any] = [
    "sample",
    "site",
    "sampled",
    "pH",
    "nitrate",
    "nitrate LOD",
    "conductivity",
    "temp",
    None,
    "pH",
    "flag",
]
UNITS: list[Any] = [None, None, None, None, "mg/L", "mg/L", "µS/cm", "°C", None, None, None]
DATA: list[list[Any]] = [
    ["S1", " north ", dt.date(2024, 3, 1), 7.2, 0.5, 0.05, 250, 12.5, 1, 7.1, True],
    ["S2", "south", dt.date(2024, 3, 2), "lost", "<0.05", 0.05, "NA", 13.0, 2, 7.0, False],
    [],
    ["S3", "north", dt.date(2024, 3, 3), 7.4, "< LOD", 0.04, "broken vial", -999, 3, "-", True],
    ["S4", "east", dt.date(2024, 3, 4), "?", ">2000", None, 260, None, 4, 6.9, False],
    ["S5", "south", "2024-03-05", 7.0, "below LOD", None, "-999", "--", 5, "missing", True],
]
ROWS = [5, 6, 8, 9, 10]
EXPECTED: dict[str, tuple[str, str | None, list[object], list[str]]] = {
    # name: (kind, unit, values, states)
    "sample": ("identifier", None, ["S1", "S2", "S3", "S4", "S5"], [OBS] * 5),
    "site": ("category", None, ["north", "south", "north", "east", "south"], [OBS] * 5),
    "sampled": ("date", None, [pd.Timestamp(2024, 3, d) for d in range(1, 6)], [OBS] * 5),
    "pH": ("number", None, [7.2, NAN, 7.4, NAN, 7.0], [OBS, M, OBS, M, OBS]),
    "nitrate": ("number", "mg/L", [0.5, NAN, NAN, NAN, NAN], [OBS, C, C, C, C]),
    "nitrate LOD": ("number", "mg/L", [0.05, 0.05, 0.04, NAN, NAN], [OBS, OBS, OBS, M, M]),
    "conductivity": ("number", "µS/cm", [250.0, NAN, NAN, 260.0, -999.0], [OBS, M, T, OBS, OBS]),
    "temp": ("number", "°C", [12.5, 13.0, -999.0, NAN, NAN], [OBS, OBS, OBS, M, M]),
    "column 9": ("number", None, [1.0, 2.0, 3.0, 4.0, 5.0], [OBS] * 5),
    "pH (2)": ("number", None, [7.1, 7.0, NAN, 6.9, NAN], [OBS, OBS, M, OBS, M]),
    "flag": ("category", None, ["TRUE", "FALSE", "TRUE", "FALSE", "TRUE"], [OBS] * 5),
}


def _openpyxl_book(path: Path) -> Path:
    book = openpyxl.Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Survey"
    sheet.append(["Lake survey 2024"])
    sheet.append([])
    sheet.append(HEADER)
    sheet.append(UNITS)
    for row in DATA:
        sheet.append(row)
    book.save(path)
    return path


def _xlsxwriter_book(path: Path) -> Path:
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Survey")
    date_format = book.add_format({"num_format": "yyyy-mm-dd"})
    sheet.write(0, 0, "Lake survey 2024")
    placed: list[tuple[int, list[Any]]] = [(2, HEADER), (3, UNITS), *((4 + i, r) for i, r in enumerate(DATA))]
    for rownum, row in placed:
        for col, value in enumerate(row):
            if isinstance(value, dt.date):
                sheet.write_datetime(rownum, col, value, date_format)
            elif rownum == 4 and col == 3:
                # a formula whose cached value is what a reader must return (Excel stores both)
                sheet.write_formula(rownum, col, "=7+0.2", None, 7.2)
            elif value is not None:
                sheet.write(rownum, col, value)
    book.close()
    return path


WRITERS = {"openpyxl": _openpyxl_book, "xlsxwriter": _xlsxwriter_book}


def _assert_column(sheet: Sheet, name: str, values: list[Any], states: list[str]) -> None:
    got = sheet.frame[name].tolist()
    for row, actual, expected in zip(ROWS, got, values, strict=True):
        if isinstance(expected, float) and math.isnan(expected):
            assert pd.isna(actual), (name, row, actual)
        else:
            assert actual == expected, (name, row, actual, expected)
    assert sheet.states[name].astype(str).tolist() == states, name


@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_every_value_and_state(tmp_path: Path, writer: str) -> None:
    path = WRITERS[writer](tmp_path / f"{writer}.xlsx")
    sheet = read_sheet(path)
    assert (sheet.source.sheet, sheet.source.header_row, sheet.source.units_row) == ("Survey", 3, 4)
    assert sheet.source.file_format == "xlsx" and sheet.source.delimiter is None
    assert sheet.frame.index.tolist() == ROWS
    assert list(sheet.frame.columns) == list(EXPECTED)
    for name, (kind, unit, values, states) in EXPECTED.items():
        assert sheet.column(name).kind == kind, name
        assert sheet.column(name).unit == unit, name
        _assert_column(sheet, name, values, states)
    assert sheet.frame["pH"].dtype == np.float64 and sheet.frame["site"].dtype == object


@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_cell_notes_and_problems(tmp_path: Path, writer: str) -> None:
    sheet = read_sheet(WRITERS[writer](tmp_path / "notes.xlsx"))
    notes = sheet.cell_notes.set_index(["row", "column"])
    assert list(sheet.cell_notes.columns) == ["row", "column", "state", "text", "side", "limit"]
    censored = notes[notes["state"] == C]
    assert censored["text"].to_dict() == {
        (6, "nitrate"): "<0.05",
        (8, "nitrate"): "< LOD",
        (9, "nitrate"): ">2000",
        (10, "nitrate"): "below LOD",
    }
    assert censored["side"].tolist() == ["<", "<", ">", "<"]
    # "< LOD" takes its limit from the same row of "nitrate LOD"; "below LOD" has none there
    np.testing.assert_array_equal(censored["limit"].to_numpy(), [0.05, 0.04, 2000.0, NAN])
    bad = note(sheet, 8, "conductivity")
    assert (bad["state"], bad["text"]) == (T, "broken vial")
    assert (note(sheet, 6, "pH")["state"], note(sheet, 6, "pH")["text"]) == (M, "lost")
    text_problem = [p for p in sheet.problems if "broken vial" in p]
    assert text_problem == [
        "'conductivity' row 8 (cell G8): 'broken vial' is not a number; it is read as a gap "
        "and marked text_in_number"
    ]
    assert any("'nitrate': 1 censored cell(s) such as 'below LOD'" in p for p in sheet.problems)
    assert any("column 9 has no header" in p for p in sheet.problems)
    assert any("header 'pH' appears more than once" in p for p in sheet.problems)
    assert any("blank row" in p and "row 7" in p for p in sheet.problems)
    assert sheet.column("column 9").original_name == ""
    assert sheet.column("pH (2)").original_name == "pH"
    assert sheet.column("pH (2)").notes and "more than once" in sheet.column("pH (2)").notes[0]
    assert any("'nitrate LOD'" in n for n in sheet.column("nitrate").notes)


@pytest.mark.parametrize("marker", ["-999", -999, -999.0])
def test_numeric_marker_only_when_given(tmp_path: Path, marker: str | float) -> None:
    path = _openpyxl_book(tmp_path / "m.xlsx")
    sheet = read_sheet(path, markers=[marker])
    _assert_column(sheet, "conductivity", [250.0, NAN, NAN, 260.0, NAN], [OBS, M, T, OBS, M])
    _assert_column(sheet, "temp", [12.5, 13.0, NAN, NAN, NAN], [OBS, OBS, M, M, M])


def test_values_match_openpyxl_reader(tmp_path: Path) -> None:
    """Every observed number equals what openpyxl (an independent reader) sees in that cell."""
    path = _xlsxwriter_book(tmp_path / "x.xlsx")
    sheet = read_sheet(path)
    reference = openpyxl.load_workbook(path, data_only=True)["Survey"]
    observed = sheet.states == OBS
    checked = 0
    for col, name in enumerate(sheet.frame.columns, start=1):
        if sheet.column(name).kind != "number":
            continue
        for row in sheet.frame.index[observed[name]]:
            cell = reference.cell(row=row, column=col).value
            assert float(str(cell)) == sheet.frame.loc[row, name], (row, name)
            checked += 1
    assert checked == 21


def test_kinds_override(tmp_path: Path) -> None:
    sheet = read_sheet(
        _openpyxl_book(tmp_path / "k.xlsx"), kinds={"column 9": "category", "sample": "category"}
    )
    assert sheet.column("column 9").kind == "category"
    assert sheet.frame["column 9"].tolist() == ["1", "2", "3", "4", "5"]
    assert "set to category by the user (detected number)" in sheet.column("column 9").notes[-1]
    assert sheet.column("sample").kind == "category"
    forced = read_sheet(tmp_path / "k.xlsx", kinds={"site": "number"})
    assert forced.states["site"].astype(str).tolist() == [T] * 5
    assert sum("'site' row" in p for p in forced.problems) == 5


def _merged_book(path: Path, writer: str) -> Path:
    """Title merged across, "Site" merged down into the sub-header row, group labels, merged data."""
    rows: list[list[Any]] = [
        ["Trace panel"],
        ["Site", "Anions", None, None, "Cations", None],
        [None, "Cl", "NO3", "SO4", "Na", "K"],
        [None, "mg/L", "mg/L", "mg/L", "mg/L", "mg/L"],
        ["north", 10.5, 2.1, 30.0, 8.0, 1.5],
        [None, 11.0, 2.3, 31.0, 8.2, 1.6],
        ["south", 20.0, 5.0, 40.0, 12.0, 2.5],
    ]
    merges = ["A1:F1", "A2:A3", "B2:D2", "E2:F2", "A5:A6"]
    if writer == "openpyxl":
        book = openpyxl.Workbook()
        sheet = book.active
        assert sheet is not None
        for row in rows:
            sheet.append(row)
        for merge in merges:
            sheet.merge_cells(merge)
        book.save(path)
        return path
    xbook = xlsxwriter.Workbook(str(path))
    xsheet = xbook.add_worksheet()
    for r, row in enumerate(rows):
        for c, value in enumerate(row):
            if value is not None:
                xsheet.write(r, c, value)
    for merge in merges:
        first = merge.split(":")[0]
        xsheet.merge_range(merge, _value_at(rows, first))
    xbook.close()
    return path


def test_title_over_the_header_and_repeated_names_in_groups(tmp_path: Path) -> None:
    path = tmp_path / "groups.xlsx"
    book = xlsxwriter.Workbook(str(path))
    xsheet = book.add_worksheet()
    xsheet.merge_range("A1:E1", "Harvest panel (invented)")  # a title right above the group row
    xsheet.write_row(1, 1, ["Soil", None, "Water"])
    xsheet.merge_range("B2:C2", "Soil")
    xsheet.merge_range("D2:E2", "Water")
    xsheet.write_row(2, 0, ["Plot", "Ca", "Mg", "Ca", "pH"])
    for r in range(3, 7):
        xsheet.write_row(r, 0, [f"P{r}", 1.0 + r, 2.0 + r, 3.0 + r, 6.0 + r / 10])
    book.close()
    sheet = read_sheet(path)
    assert [c.name for c in sheet.columns] == ["Plot", "Soil: Ca", "Mg", "Water: Ca", "pH"]
    assert [c.group_label for c in sheet.columns] == ["", "Soil", "Soil", "Water", "Water"]

    title = tmp_path / "title.xlsx"
    book = xlsxwriter.Workbook(str(title))
    xsheet = book.add_worksheet()
    xsheet.merge_range("A1:C1", "Harvest panel (invented)")  # right above the header
    xsheet.write_row(1, 0, ["Plot", "pH", "Ca"])
    for r in range(2, 6):
        xsheet.write_row(r, 0, [f"P{r}", 6.0 + r / 10, 1.0 + r])
    book.close()
    assert [c.name for c in read_sheet(title).columns] == ["Plot", "pH", "Ca"]


def _value_at(rows: list[list[Any]], ref: str) -> Any:
    r, c = openpyxl.utils.cell.coordinate_to_tuple(ref)
    return rows[r - 1][c - 1]


@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_merged_header_cells(tmp_path: Path, writer: str) -> None:
    sheet = read_sheet(_merged_book(tmp_path / "merged.xlsx", writer))
    assert (sheet.source.header_row, sheet.source.units_row) == (3, 4)
    # group labels are column facts; they enter names only where names would repeat
    assert [c.name for c in sheet.columns] == ["Site", "Cl", "NO3", "SO4", "Na", "K"]
    assert [c.group_label for c in sheet.columns] == ["", "Anions", "Anions", "Anions", "Cations", "Cations"]
    assert sheet.units["NO3"] == "mg/L" and sheet.units["Site"] is None
    assert sheet.frame["Site"].tolist() == ["north", "north", "south"]  # merged data cell spread
    assert sheet.states["Site"].astype(str).tolist() == [OBS, OBS, OBS]
    assert sheet.frame["K"].tolist() == [1.5, 1.6, 2.5]
    assert any("merged cell range" in p for p in sheet.problems)


def test_header_label_merged_across_columns(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.append(["sample", "nitrate", None, "pH"])
    sheet.append(["S1", 0.5, "ok", 7.1])
    sheet.append(["S2", 0.7, "check", 7.3])
    sheet.merge_cells("B1:C1")
    book.save(tmp_path / "across.xlsx")
    read = read_sheet(tmp_path / "across.xlsx")
    assert [c.name for c in read.columns] == ["sample", "nitrate", "nitrate (2)", "pH"]


def test_sheet_choice_and_listing(tmp_path: Path) -> None:
    path = tmp_path / "many.xlsx"
    book = xlsxwriter.Workbook(str(path))
    hidden = book.add_worksheet("Hidden")
    survey = book.add_worksheet("Survey")
    chart_sheet = book.add_chartsheet("Chart")
    notes = book.add_worksheet("Notes")
    for sheet, value in ((hidden, 1), (survey, 2), (notes, 3)):
        sheet.write_row(0, 0, ["name", "value"])
        sheet.write_row(1, 0, ["a", value])
    chart = book.add_chart({"type": "line"})
    chart.add_series({"values": "=Survey!$B$2:$B$2"})
    chart_sheet.set_chart(chart)
    survey.activate()
    hidden.hide()
    book.close()
    assert list_sheets(path) == ["Hidden", "Survey", "Notes"]
    assert read_sheet(path).source.sheet == "Survey"  # first visible worksheet
    cases: dict[str | int, tuple[str, float]] = {
        0: ("Hidden", 1.0), 2: ("Notes", 3.0), "Survey": ("Survey", 2.0), " notes ": ("Notes", 3.0),
        "1": ("Survey", 2.0),
    }  # fmt: skip
    for choice, (name, expected) in cases.items():
        sheet = read_sheet(path, sheet=choice)
        assert (sheet.source.sheet, sheet.frame["value"].iloc[0]) == (name, expected), choice


@pytest.mark.parametrize("suffix", ["xlsx", "xlsm"])
def test_macro_workbook_suffix(tmp_path: Path, suffix: str) -> None:
    source = _openpyxl_book(tmp_path / "base.xlsx")
    path = tmp_path / f"book.{suffix}"
    path.write_bytes(source.read_bytes())
    sheet = read_sheet(path)
    assert sheet.source.file_format == suffix
    _, _, values, states = EXPECTED["nitrate LOD"]
    _assert_column(sheet, "nitrate LOD", values, states)


def test_xls_written_by_hand(tmp_path: Path) -> None:
    """A BIFF8 .xls (record layout after [MS-XLS], see test_read_bad_input) reads like the others."""
    cells: list[tuple[int, int, float | str]] = [
        (0, 0, "Lake survey"),
        (2, 0, "site"), (2, 1, "nitrate"), (2, 2, "pH"),
        (3, 1, "mg/L"),
        (4, 0, "north"), (4, 1, 0.5), (4, 2, 7.25),
        (5, 0, "south"), (5, 1, "<0.05"), (5, 2, "lost"),
        (6, 0, "east"), (6, 1, 1.5), (6, 2, 6.75),
    ]  # fmt: skip
    path = tmp_path / "old.xls"
    path.write_bytes(biff8_workbook("Survey", cells))
    assert list_sheets(path) == ["Survey"]
    sheet = read_sheet(path)
    assert (sheet.source.file_format, sheet.source.header_row, sheet.source.units_row) == ("xls", 3, 4)
    assert sheet.frame.index.tolist() == [5, 6, 7]
    assert sheet.frame["site"].tolist() == ["north", "south", "east"]
    assert sheet.units == {"site": None, "nitrate": "mg/L", "pH": None}
    assert sheet.frame["nitrate"].iloc[[0, 2]].tolist() == [0.5, 1.5]
    assert sheet.states["nitrate"].astype(str).tolist() == [OBS, C, OBS]
    assert sheet.states["pH"].astype(str).tolist() == [OBS, M, OBS]


def _ods_cell(value: object) -> str:
    if value is None:
        return "<table:table-cell/>"
    if isinstance(value, dt.date):
        return f'<table:table-cell office:value-type="date" office:date-value="{value.isoformat()}"/>'
    if isinstance(value, int | float) and not isinstance(value, bool):
        attributes, text = f'office:value-type="float" office:value="{value}"', str(value)
    else:
        attributes, text = 'office:value-type="string"', escape(str(value))
    return f"<table:table-cell {attributes}><text:p>{text}</text:p></table:table-cell>"


def test_ods_written_by_hand(tmp_path: Path) -> None:
    rows: list[list[Any]] = [["Lake survey 2024"], [], HEADER, UNITS, *DATA[:2], [], *DATA[3:]]
    body = "".join(
        "<table:table-row>"
        + "".join(_ods_cell(v if not isinstance(v, bool) else str(v).upper()) for v in row)
        + "</table:table-row>"
        if row
        else '<table:table-row><table:table-cell table:number-columns-repeated="11"/></table:table-row>'
        for row in rows
    )
    content = (
        '<?xml version="1.0" encoding="UTF-8"?>'
        '<office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2">'
        f'<office:body><office:spreadsheet><table:table table:name="Survey">{body}</table:table>'
        "</office:spreadsheet></office:body></office:document-content>"
    )
    path = tmp_path / "survey.ods"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr(
            zipfile.ZipInfo("mimetype"), "application/vnd.oasis.opendocument.spreadsheet", zipfile.ZIP_STORED
        )
        archive.writestr("content.xml", content)
        archive.writestr(
            "META-INF/manifest.xml",
            '<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
            'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
            '<manifest:file-entry manifest:full-path="/" '
            'manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
            '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
            "</manifest:manifest>",
        )
    assert list_sheets(path) == ["Survey"]
    sheet = read_sheet(path)
    assert (sheet.source.file_format, sheet.source.header_row, sheet.source.units_row) == ("ods", 3, 4)
    assert sheet.frame.index.tolist() == ROWS
    for name, (kind, unit, values, states) in EXPECTED.items():
        assert (sheet.column(name).kind, sheet.column(name).unit) == (kind, unit), name
        _assert_column(sheet, name, values, states)


@pytest.mark.parametrize("seed", [0, 1, 2])
@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_random_table_every_cell(tmp_path: Path, seed: int, writer: str) -> None:
    """A random 40 x 6 table of numbers, blanks, markers and censored text: every cell checked."""
    rng = np.random.default_rng(seed)
    values = rng.normal(50, 20, (40, 6)).round(4)
    kind = rng.choice(["number", "blank", "marker", "censored"], size=(40, 6), p=[0.8, 0.08, 0.06, 0.06])
    kind[0] = "number"  # the first data row stays numeric so nothing looks like a units row
    cells: list[list[Any]] = [
        [
            float(v)
            if k == "number"
            else None
            if k == "blank"
            else "lost"
            if k == "marker"
            else f"<{abs(v):.2f}"
            for v, k in zip(row, kinds, strict=True)
        ]
        for row, kinds in zip(values, kind, strict=True)
    ]
    header = [f"m{j}" for j in range(6)]
    path = tmp_path / f"random.{writer}.xlsx"
    if writer == "openpyxl":
        book = openpyxl.Workbook()
        sheet = book.active
        assert sheet is not None
        sheet.append(header)
        for row in cells:
            sheet.append(row)
        book.save(path)
    else:
        xbook = xlsxwriter.Workbook(str(path))
        xsheet = xbook.add_worksheet()
        xsheet.write_row(0, 0, header)
        for r, row in enumerate(cells, start=1):
            for c, value in enumerate(row):
                if value is not None:
                    xsheet.write(r, c, value)
        xbook.close()
    read = read_sheet(path)
    assert read.frame.shape == (40, 6) and read.frame.index.tolist() == list(range(2, 42))
    expected_state = {"number": OBS, "blank": M, "marker": M, "censored": C}
    for j, name in enumerate(header):
        assert read.states[name].astype(str).tolist() == [expected_state[k] for k in kind[:, j]]
        numbers = kind[:, j] == "number"
        np.testing.assert_array_equal(read.frame[name].to_numpy()[numbers], values[numbers, j])
        assert read.frame[name].isna().to_numpy()[~numbers].all()
    censored = read.cell_notes[read.cell_notes["state"] == C]
    expected_limits = np.round(np.abs(values[kind == "censored"]), 2)
    assert sorted(censored["limit"].tolist()) == sorted(expected_limits.tolist())
    assert set(censored["side"]) <= {"<"}
