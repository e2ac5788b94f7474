"""Text cells that were not filled leave a workbook exactly as they came, spaces included.

The input is written by xlsxwriter (not by Kinfill), converted to .ods and .xls by
LibreOffice, and every export is read back by openpyxl, so neither side of the round
trip is Kinfill's own code.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, write_result
from tests.sheets.libreoffice_support import convert, needs_soffice

NBSP = "\u00a0"
# Carried text with spaces, tabs and non-breaking spaces around it.
NOTES = ["  lead", "trail\t", f"{NBSP}nbsp{NBSP}", " both  ", "in\tside", "plain", "x\t ", "  ok"]
# A category column: the fill matches on the trimmed text ("river", "lake").
SITES = ["river ", " river", f"lake{NBSP}", "lake", "\triver", "lake ", None, "river"]
X = [1.0, 1.1, 5.0, 5.2, 1.05, 5.1, 1.02, 0.98]
Y = [2.0, 2.1, 9.0, 9.4, None, 9.2, 2.05, 1.9]
PLAN = FillPlan(
    k=2, similarity_columns=("x",), fill_columns=("site", "y"), carried_columns=("sample", "note")
)


def _workbook(path: Path) -> Path:
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    sheet.write_row(0, 0, ["sample", "note", "site", "x", "y"])
    for i, (note, site, x, y) in enumerate(zip(NOTES, SITES, X, Y, strict=True), start=1):
        sheet.write_string(i, 0, f"S{i}")
        sheet.write_string(i, 1, note)
        if site is not None:
            sheet.write_string(i, 2, site)
        sheet.write_number(i, 3, x)
        if y is not None:
            sheet.write_number(i, 4, y)
    book.close()
    return path


def _read_back(path: Path, sheet: str) -> list[tuple[object, ...]]:
    rows = openpyxl.load_workbook(path)[sheet].iter_rows(min_row=2, max_col=5, values_only=True)
    return [tuple(row) for row in rows]


@pytest.fixture
def filled(tmp_path: Path):
    source = _workbook(tmp_path / "lab.xlsx")
    sheet = read_sheet(source)
    return sheet, impute(sheet, PLAN)


def test_the_fill_matches_trimmed_text(filled) -> None:
    sheet, result = filled
    assert sorted(set(sheet.frame["site"].dropna())) == ["lake", "river"]
    assert list(sheet.frame["note"]) == [n.strip() for n in NOTES]
    # row 8's site is filled from its two nearest rows by x (rows 2 and 9, both "river")
    assert result.frame.loc[8, "site"] == "river"
    assert result.filled.loc[8, "site"] and result.filled.loc[6, "y"]


@pytest.mark.parametrize("layout", ["table", "workbook"])
def test_xlsx_export_writes_text_cells_as_read(tmp_path: Path, filled, layout: str) -> None:
    sheet, result = filled
    out = tmp_path / f"out.{layout}.xlsx"
    write_result(out, sheet, result, PLAN, layout=layout)
    rows = _read_back(out, "Filled" if layout == "table" else "Data")
    assert [r[0] for r in rows] == [f"S{i}" for i in range(1, 9)]
    assert [r[1] for r in rows] == NOTES
    assert [r[2] for r in rows] == [s if s is not None else "river" for s in SITES]
    assert [r[3] for r in rows] == X
    assert rows[4][4] == pytest.approx(np.mean([2.0, 2.1]))  # row 6: donors rows 2 and 3 by x


def test_csv_export_writes_text_cells_as_read(tmp_path: Path, filled) -> None:
    sheet, result = filled
    out = tmp_path / "out.csv"
    write_result(out, sheet, result, PLAN)
    with out.open(encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))[1:]
    assert [r[1] for r in rows] == NOTES
    # a text beginning with a tab is guarded with ' (OWASP CSV Injection)
    expected = [("'" + s if s.startswith("\t") else s) if s is not None else "river" for s in SITES]
    assert [r[2] for r in rows] == expected


@needs_soffice
@pytest.mark.parametrize("layout", ["table", "workbook"])
@pytest.mark.parametrize("fmt", ["ods", "xls"])
def test_other_workbooks_keep_their_text_too(tmp_path: Path, fmt: str, layout: str) -> None:
    source = convert(_workbook(tmp_path / "lab.xlsx"), fmt, tmp_path / "converted")
    # The workbook parser (python-calamine) drops an .ods tab (<text:tab/>) from text:
    # such a cell leaves as it was read, without its tab. Spaces of every kind are kept.
    read = (lambda text: text.replace("\t", "")) if fmt == "ods" else (lambda text: text)
    sheet = read_sheet(source)
    assert list(sheet.frame["note"]) == [read(n).strip() for n in NOTES]
    result = impute(sheet, PLAN)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, result, PLAN, layout=layout)  # the workbook layout: an .xlsx copy
    rows = _read_back(out, "Filled" if layout == "table" else "Data")
    assert [r[1] for r in rows] == [read(n) for n in NOTES]
    assert [r[2] for r in rows] == [read(s) if s is not None else "river" for s in SITES]
