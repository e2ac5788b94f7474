"""Cached formula errors in .xls and .ods read as "formula error", as in .xlsx; .xls sizes are checked first.

The workbook is written by xlsxwriter and converted to .xls and .ods by LibreOffice
(headless), so the files come from writers independent of Kinfill. The workbook parser
(python-calamine) gives an error cell of either format as an empty cell; Kinfill finds
the errors in the file itself: BIFF8 FORMULA and BOOLERR records ([MS-XLS] sec. 2.4.127
and 2.4.24; record layouts quoted from memory) and LibreOffice's
``calcext:value-type="error"`` cells in an .ods content.xml.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import xlsxwriter
from python_calamine import CalamineWorkbook

from imputer_app.engine import impute
from imputer_app.errors import SheetError
from imputer_app.plan import FillPlan
from imputer_app.sheets import _extent, _workbook, list_sheets, read_sheet
from tests.sheets.libreoffice_support import convert, needs_soffice
from tests.sheets.package_support import ods, ods_cell, ods_row
from tests.sheets.test_read_bad_input import biff8_workbook

# Column b: row 4 divides by zero, row 6 is NA(), row 7 adds text to a number, row 8 a gap.
# (LibreOffice shows some errors in its own words, SQRT(-1) as "Err:502": not used here.)
FORMULAS = {4: ("=1/0", "#DIV/0!"), 6: ("=NA()", "#N/A"), 7: ('="x"+1', "#VALUE!")}
A = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0]
B = [2.0, 4.1, None, 8.2, None, None, None, 16.1]
STATES = (
    ["observed", "observed", "formula_error", "observed"] + ["formula_error"] * 2 + ["missing", "observed"]
)


@pytest.fixture(scope="module")
def books(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("errors")
    source = folder / "errors.xlsx"
    book = xlsxwriter.Workbook(str(source))
    sheet = book.add_worksheet("Data")
    sheet.write_row(0, 0, ["a", "b"])
    for row, (a, b) in enumerate(zip(A, B, strict=True), start=2):
        sheet.write_number(row - 1, 0, a)
        if row in FORMULAS:
            formula, shown = FORMULAS[row]
            sheet.write_formula(row - 1, 1, formula, None, shown)
        elif b is not None:
            sheet.write_number(row - 1, 1, b)
    book.close()
    return {"xlsx": source, "xls": convert(source, "xls", folder), "ods": convert(source, "ods", folder)}


@needs_soffice
@pytest.mark.parametrize("fmt", ["xlsx", "xls", "ods"])
def test_formula_errors_have_their_own_state(books: dict[str, Path], fmt: str) -> None:
    sheet = read_sheet(books[fmt])
    assert sheet.states["b"].astype(str).tolist() == STATES
    assert sheet.frame["b"].isna().tolist() == [b is None for b in B]
    notes = sheet.cell_notes.set_index("row")
    assert {row: notes.loc[row, "text"] for row in FORMULAS} == {r: text for r, (_, text) in FORMULAS.items()}
    assert any("'b': 3 cell(s) hold a formula error such as '#DIV/0!' (cell B4)" in p for p in sheet.problems)


@needs_soffice
@pytest.mark.parametrize("fmt", ["xls", "ods"])
def test_the_parser_alone_reads_an_error_as_a_blank(books: dict[str, Path], fmt: str) -> None:
    # Why Kinfill reads the errors from the file itself: calamine gives "" for them.
    rows = CalamineWorkbook.from_path(str(books[fmt])).get_sheet_by_index(0).to_python(skip_empty_area=False)
    assert [rows[row - 1][1] for row in FORMULAS] == ["", "", ""]


@needs_soffice
@pytest.mark.parametrize("fmt", ["xls", "ods"])
def test_formula_errors_are_filled_only_when_asked(books: dict[str, Path], fmt: str) -> None:
    sheet = read_sheet(books[fmt])
    plan = FillPlan(k=2, similarity_columns=("a",), fill_columns=("b",))
    filled = impute(sheet, plan).filled["b"]
    assert filled[filled].index.tolist() == [8]  # the gap only
    everything = impute(sheet, plan.replace(fill_formula_errors=True)).filled["b"]
    assert everything[everything].index.tolist() == [4, 6, 7, 8]


def test_an_xls_far_cell_is_refused_before_the_parser_opens_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # A BIFF8 sheet holds at most 65,536 x 256 cells, below the real limit: lowered here.
    monkeypatch.setattr(_extent, "MAX_CELLS", 10_000)

    def never(*args: object) -> None:
        raise AssertionError("the parser opened the file")

    monkeypatch.setattr(_workbook, "_open", never)
    cells = [(0, 0, "a"), (0, 1, "b"), (1, 0, 1.0), (1, 1, 2.0), (65_535, 255, 3.0)]
    path = tmp_path / "far.xls"
    path.write_bytes(biff8_workbook("Data", cells))
    for read in (read_sheet, list_sheets):
        with pytest.raises(SheetError) as caught:
            read(path)
        message = str(caught.value)
        assert "\n" not in message and "sheet 'Data' of 'far.xls' reaches cell IV65536" in message
        assert "65,536 rows x 256 columns = 16,777,216 cells" in message and "(10,000)" in message


def test_an_xls_within_the_limit_is_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_extent, "MAX_CELLS", 10_000)
    cells = [(0, 0, "a"), (0, 1, "b"), *((r, c, float(r * 10 + c)) for r in range(1, 99) for c in range(2))]
    path = tmp_path / "near.xls"
    path.write_bytes(biff8_workbook("Data", cells))
    sheet = read_sheet(path)
    assert sheet.frame.shape == (98, 2) and sheet.frame.loc[99, "b"] == 981.0


@needs_soffice
def test_an_xls_made_by_libreoffice_is_measured(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    source = tmp_path / "wide.xlsx"
    book = xlsxwriter.Workbook(str(source))
    sheet = book.add_worksheet("Wide")
    sheet.write_row(0, 0, ["a", "b"])
    sheet.write_row(1, 0, [1.0, 2.0])
    sheet.write_number(199, 99, 5.0)  # CV200: 200 rows x 100 columns
    book.close()
    path = convert(source, "xls", tmp_path)
    assert read_sheet(path).frame.shape[1] >= 2  # 20,000 cells: read under the real limit
    monkeypatch.setattr(_extent, "MAX_CELLS", 19_999)
    with pytest.raises(SheetError, match=r"reaches cell CV200 \(200 rows x 100 columns = 20,000 cells\)"):
        read_sheet(path)


def test_repeated_ods_error_cells_are_each_an_error(tmp_path: Path) -> None:
    # LibreOffice writes equal neighbouring cells once, with a repeat count (ODF 1.2 Part 1,
    # sec. 9.1.3 and 9.1.4): two rows of two "#DIV/0!" cells here.
    calcext = "urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0"
    error = (
        f'<table:table-cell xmlns:calcext="{calcext}" '
        'table:number-columns-repeated="2" table:formula="of:=1/0" office:value-type="string" '
        'office:string-value="" calcext:value-type="error"><text:p>#DIV/0!</text:p></table:table-cell>'
    )
    rows = (
        ods_row(ods_cell("a") + ods_cell("b") + ods_cell("c"))
        + ods_row(ods_cell(1.0) + error, 2)
        + "".join(ods_row(ods_cell(float(r)) + ods_cell(2.0 * r) + ods_cell(3.0 * r)) for r in (4, 5))
    )
    sheet = read_sheet(ods(tmp_path / "repeated.ods", rows))
    for name in ("b", "c"):
        assert sheet.states[name].astype(str).tolist() == ["formula_error"] * 2 + ["observed"] * 2
    assert sheet.states["a"].astype(str).tolist() == ["observed"] * 4
