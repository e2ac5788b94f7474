"""An .ods or .xls workbook comes back as an .xlsx copy: every sheet, its values, the fill marked.

The input files are made by LibreOffice from an xlsxwriter workbook, never by Kinfill
(:mod:`tests.sheets.office_fixture`). The export is read back with openpyxl, with
python-calamine and as a zip listing.
"""

from __future__ import annotations

import datetime as dt
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from imputer_app.cli.entry import main
from imputer_app.engine import impute
from imputer_app.errors import ExportError
from imputer_app.plan import FillPlan
from imputer_app.sheets import export_limits, read_sheet, write_result
from tests.sheets import office_fixture as office
from tests.sheets.write_support import about, calamine_cells, raw_comments, raw_fills

pytestmark = office.needs_soffice

PLAN = FillPlan(k=3)
FILLED_COLOUR = "D2E7EF"
HEADERS, FIRST, GAPS, MARKED = office.HEADERS, office.FIRST, office.GAPS, office.MARKED


@pytest.fixture(scope="module")
def sources(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("lab")
    source = office.build_source(folder / "lab.xlsx")
    return {fmt: office.convert(source, fmt, folder) for fmt in ("ods", "xls")}


@pytest.fixture(scope="module", params=["ods", "xls"])
def exported(request: pytest.FixtureRequest, sources: dict[str, Path], tmp_path_factory):
    fmt = request.param
    sheet = read_sheet(sources[fmt])
    result = impute(sheet, PLAN)
    out = tmp_path_factory.mktemp(f"out_{fmt}") / "lab.filled.xlsx"
    assert write_result(out, sheet, result, PLAN) == [out]
    return fmt, sources[fmt], sheet, result, out


def test_every_sheet_comes_back_in_order_with_our_sheets_added(exported) -> None:
    fmt, _, sheet, _, out = exported
    assert sheet.source.file_format == fmt and sheet.source.sheet == "Results"
    book = openpyxl.load_workbook(out)
    assert book.sheetnames == ["Results", "Methods", "Fill log", "Pictures", "About this fill"]
    assert [book["Methods"].cell(row * 2 + 1, 1).value for row in range(2)] == list(office.METHODS)
    results = book["Results"]
    assert results.cell(1, 1).value == office.TITLE
    assert [str(r) for r in results.merged_cells.ranges] == ["A1:F1"]  # the title stays merged
    assert [results.cell(2, j + 1).value for j in range(len(HEADERS))] == list(HEADERS)
    with zipfile.ZipFile(out) as package:
        names = package.namelist()
    assert sum(n.startswith("xl/worksheets/sheet") and n.endswith(".xml") for n in names) == 5
    assert any(n.startswith("xl/comments") for n in names)  # the filled cells' notes


def test_values_stay_and_only_the_gaps_change(exported) -> None:
    fmt, source, sheet, result, out = exported
    before, after = calamine_cells(source, "Results"), calamine_cells(out, "Results")
    if fmt == "ods":  # the formula column stays formulas, stored results dropped (recomputed on opening)
        before = {k: v for k, v in before.items() if k[1] != 6 or k[0] < FIRST}
        after = {k: v for k, v in after.items() if k[1] != 6 or k[0] < FIRST}
    filled = result.filled.to_numpy()
    written = {}
    for i, j in zip(*np.nonzero(filled), strict=True):
        row, col = int(sheet.frame.index[i]), HEADERS.index(sheet.frame.columns[j]) + 1
        written[(row, col)] = float(result.frame.iat[i, j])
    # the three gaps and the NA marker are filled; nothing else is
    assert len(written) == sum(len(v) for v in GAPS.values()) + len(MARKED)
    assert {k: v for k, v in after.items() if k not in written} == {
        k: v for k, v in before.items() if k not in written
    }
    assert {k: after[k] for k in written} == pytest.approx(written)
    assert after[(FIRST + MARKED["pH"], 3)] != "NA"


def test_filled_cells_are_marked_with_their_columns_format_and_a_note(exported) -> None:
    fmt, _, sheet, result, out = exported
    results = openpyxl.load_workbook(out)["Results"]
    fills, notes = raw_fills(out, "Results"), raw_comments(out, "Results")
    rows, cols = np.nonzero(result.filled.to_numpy())
    refs = set()
    for i, j in zip(rows, cols, strict=True):
        name = sheet.frame.columns[j]
        cell = results.cell(int(sheet.frame.index[i]), HEADERS.index(name) + 1)
        refs.add(cell.coordinate)
        assert fills[cell.coordinate] == FILLED_COLOUR
        assert notes[cell.coordinate].startswith("Filled by Kinfill")
        # .ods names its number formats, and the filled cell takes its column's; .xls gives none
        assert cell.number_format == ({"pH": "0.00", "Ca": "0.000"}[name] if fmt == "ods" else "General")
    assert set(fills) == refs  # no other cell is marked


def test_formulas_stay_formulas_from_ods_values_from_xls_and_dates_stay_dates(exported) -> None:
    fmt, _, _, _, out = exported
    results = openpyxl.load_workbook(out)["Results"]
    stored = results.cell(FIRST, 6)
    if fmt == "ods":  # LibreOffice's of:=SUM([.D3:.E3]) written again as an .xlsx formula
        assert stored.data_type == "f" and stored.value == f"=SUM(D{FIRST}:E{FIRST})"
    else:
        assert stored.data_type == "n" and isinstance(stored.value, float)  # a value, no formula
        assert stored.value == pytest.approx(
            round(float(office.values_of()["Ca"][0] + office.values_of()["Mg"][0]), 3)
        )
    date = results.cell(FIRST + 2, 2)
    assert date.value == dt.datetime(2025, 4, 3) and date.number_format == "yyyy-mm-dd"
    if fmt == "ods":
        assert results.cell(FIRST, 4).number_format == "0.000"


def test_the_limits_are_said_in_about_this_fill(exported) -> None:
    fmt, _, sheet, _, out = exported
    limits = export_limits(sheet, out)
    assert limits.startswith(f"from the .{fmt} input: an .xlsx copy")
    assert ("formulas are kept as their values" in limits) == (fmt == "xls") and "charts, images" in limits
    assert ("kept as formulas, others as their values" in limits) == (fmt == "ods")
    assert ("number formats (dates show as yyyy-mm-dd)" in limits) == (fmt == "xls")
    output = about(out)["This export"]
    assert output["not kept"] == limits
    assert output["formulas"].startswith("kept as their values" if fmt == "xls" else "kept as formulas")


def test_the_command_line_summary_says_what_was_not_kept(sources, tmp_path, capsys) -> None:
    out = tmp_path / "lab.filled.xlsx"
    assert main(["fill", str(sources["ods"]), "--out", str(out), "--k", "3"]) == 0
    printed = capsys.readouterr().out
    line = next(line for line in printed.splitlines() if "lab.filled.xlsx" in line)
    assert 'a copy of your workbook; filled cells marked in sheet "Results"' in line
    assert export_limits(read_sheet(sources["ods"]), out) in line


def test_table_layout_and_csv_say_nothing_about_the_copy(sources, tmp_path) -> None:
    sheet = read_sheet(sources["xls"])
    assert export_limits(sheet, tmp_path / "x.csv") == ""
    assert export_limits(sheet, tmp_path / "x.xlsx", layout="table") == ""
    out = tmp_path / "flat.xlsx"
    write_result(out, sheet, impute(sheet, PLAN), PLAN, layout="table")
    assert openpyxl.load_workbook(out).sheetnames[0] == "Filled"


def test_a_workbook_changed_since_reading_is_refused(sources, tmp_path) -> None:
    changed = tmp_path / "lab.ods"
    changed.write_bytes(sources["ods"].read_bytes())
    sheet = read_sheet(changed)
    result = impute(sheet, PLAN)
    changed.write_bytes(sources["ods"].read_bytes() + b"\0")
    with pytest.raises(ExportError, match="changed since it was read"):
        write_result(tmp_path / "out.xlsx", sheet, result, PLAN)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lab.ods"]


def test_libreoffice_recomputes_the_ods_formula_column_from_the_filled_inputs(sources, tmp_path) -> None:
    # LibreOffice computes a formula cell that has no stored result: the sums of the rows
    # whose Ca was a gap now add the filled Ca
    sheet = read_sheet(sources["ods"])
    result = impute(sheet, PLAN)
    out = tmp_path / "lab.filled.xlsx"
    write_result(out, sheet, result, PLAN)
    lines = office.convert(out, "csv", tmp_path / "csv").read_text().splitlines()
    for row in sheet.frame.index:
        cells = lines[int(row) - 1].split(",")
        ca, mg = (float(result.frame.loc[row, name]) for name in ("Ca", "Mg"))
        assert float(cells[5]) == pytest.approx(ca + mg, abs=1e-9), row
    assert result.filled["Ca"].sum() == len(GAPS["Ca"])
