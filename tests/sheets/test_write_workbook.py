"""The workbook export: a lab workbook written by xlsxwriter comes back whole.

The export is checked with readers independent of Kinfill's writer: openpyxl and
python-calamine (two separate xlsx implementations), the raw zip listing and, where
installed, LibreOffice recomputing the formulas.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import threading
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from python_calamine import CalamineWorkbook

from imputer_app.engine import impute
from imputer_app.errors import Cancelled, ExportError
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, write_result
from tests.sheets import workbook_fixture as lab

PLAN = FillPlan(k=3, carried_columns=("Sample", "Base sum", "Notes"))
COLUMNS = {"pH": "B", "Ca": "C", "Mg": "D", "K": "E"}
FORMATS = {"pH": "0.00", "Ca": "0.00", "Mg": "0.000", "K": "0.000"}
CELL = re.compile(r"<c\b[^>]*?/>|<c\b[^>]*>.*?</c>", re.S)


def export(folder: Path, suffix: str = ".xlsx", *, report: bool = False, **build: object):
    source = lab.build(folder / f"lab{'.xlsm' if build.get('macros') else '.xlsx'}", **build)  # type: ignore[arg-type]
    sheet = read_sheet(source)
    result = impute(sheet, PLAN)
    recovery = None
    if report:
        from imputer_app import validation

        recovery = validation.recovery_test(sheet, PLAN, ks=(1, 2, 3), repeats=2, seed=0)
    out = folder / f"lab.filled{suffix}"
    assert write_result(out, sheet, result, PLAN, recovery) == [out]
    return source, out, sheet, result


def filled_cells(sheet, result) -> dict[str, float]:
    """Cell reference -> written value of every filled cell."""
    cells = {}
    rows, cols = np.nonzero(np.asarray(result.filled))
    for i, j in zip(rows, cols, strict=True):
        name = sheet.frame.columns[j]
        cells[f"{COLUMNS[name]}{sheet.frame.index[i]}"] = float(result.frame.iat[i, j])
    return cells


def sheet_xml(path: Path, part: str = "xl/worksheets/sheet1.xml") -> str:
    with zipfile.ZipFile(path) as package:
        return package.read(part).decode("utf-8")


def cells_by_ref(xml: str) -> dict[str, str]:
    return {re.search(r'\sr="([A-Z]+\d+)"', c).group(1): c for c in CELL.findall(xml)}  # type: ignore[union-attr]


def test_filled_values_land_in_their_cells_with_the_column_format(tmp_path: Path) -> None:
    source, out, sheet, result = export(tmp_path)
    expected = filled_cells(sheet, result)
    # The fixture's gaps: pH row 8, Mg rows 8 and 14, K row 9, Ca row 11 (row 10 is blank).
    assert set(expected) == {"B8", "D8", "E9", "C11", "D14"}
    before = openpyxl.load_workbook(source)["Harvest"]
    after = openpyxl.load_workbook(out)["Harvest"]
    for ref, value in expected.items():
        cell = after[ref]
        assert cell.value == pytest.approx(value, rel=1e-12)
        column = next(n for n, letter in COLUMNS.items() if ref.startswith(letter))
        assert cell.number_format == FORMATS[column]
        assert cell.font.name == "Arial"  # the column's font, kept
        assert cell.fill.fgColor.rgb == "FFD2E7EF"
        assert "Filled by Kinfill: kNN from 3 donor(s)" in cell.comment.text
    for row in range(1, 18):
        for col in range(1, 8):
            ref = f"{'ABCDEFG'[col - 1]}{row}"
            if ref not in expected:
                assert after[ref].value == before[ref].value, ref
                assert after[ref].number_format == before[ref].number_format, ref
    assert after["A6"].comment.text == "First sample of the season"
    assert after["B10"].value is None  # the blank row stays blank


def test_only_gap_cells_change_in_the_sheet_xml(tmp_path: Path) -> None:
    source, out, sheet, result = export(tmp_path)
    before, after = cells_by_ref(sheet_xml(source)), cells_by_ref(sheet_xml(out))
    assert set(after) - set(before) == {"D8", "D14"}  # the Mg gaps had no cell element
    changed = {ref for ref in before if before[ref] != after[ref]} | (set(after) - set(before))
    formulas = {ref for ref, c in before.items() if "<f>" in c}
    assert changed == set(filled_cells(sheet, result)) | formulas
    for ref in formulas:  # a formula cell loses only its stored result
        assert re.sub(r"<v>.*?</v>", "", before[ref]) == after[ref]
        assert "<v>" not in after[ref] and "<f>" in after[ref]
    old, new = sheet_xml(source), sheet_xml(out)
    old_body, new_body = old.split("<sheetData>")[0], new.split("<sheetData>")[0]
    assert old_body == new_body  # views, frozen panes, columns: same bytes
    assert new.split("</sheetData>")[1].startswith(old.split("</sheetData>")[1].split("<legacyDrawing")[0])


def test_workbook_items_survive(tmp_path: Path) -> None:
    source, out, _, _ = export(tmp_path)
    before, after = openpyxl.load_workbook(source), openpyxl.load_workbook(out)
    assert after.sheetnames == ["Harvest", "Methods", "Fill log", "Pictures", "About this fill"]
    old, new = before["Harvest"], after["Harvest"]
    assert [str(r) for r in new.merged_cells.ranges] == ["A1:G1"]
    assert new.freeze_panes == old.freeze_panes == "B5"
    assert [str(r.sqref) for r in new.conditional_formatting] == ["B6:B16"]
    assert [str(v.sqref) for v in new.data_validations.dataValidation] == ["B6:B16"]
    assert new.data_validations.dataValidation[0].formula2 == "14"
    assert after.defined_names["PhValues"].attr_text == "Harvest!$B$6:$B$16"
    for letter in "ABCDEFG":
        assert new.column_dimensions[letter].width == old.column_dimensions[letter].width
    assert new["A1"].value == "Harvest panel (invented)" and new["A1"].font.sz == 14
    assert after["Methods"]["A1"].value == before["Methods"]["A1"].value
    assert after["Methods"]["A2"].value == "=SUM(Harvest!C6:C8)"
    assert after["Fill log"]["A1"].value == "row" and after["Fill log"].max_row == 6
    assert after.active.title == "Harvest"
    with zipfile.ZipFile(out) as package:
        app = package.read("docProps/app.xml").decode()
    titles = "".join(
        f"<vt:lpstr>{n}</vt:lpstr>" for n in ("Harvest", "Methods", "Fill log", "Pictures", "About this fill")
    )
    assert titles + "<vt:lpstr>PhValues</vt:lpstr>" in app and "<vt:i4>5</vt:i4>" in app


def test_unchanged_parts_are_byte_identical(tmp_path: Path) -> None:
    source, out, _, _ = export(tmp_path)
    with zipfile.ZipFile(source) as a, zipfile.ZipFile(out) as b:
        old = {n: a.read(n) for n in a.namelist()}
        new = {n: b.read(n) for n in b.namelist()}
    edited = {
        "[Content_Types].xml", "docProps/app.xml", "xl/workbook.xml", "xl/_rels/workbook.xml.rels",
        "xl/styles.xml", "xl/worksheets/sheet1.xml", "xl/worksheets/sheet2.xml",
        "xl/comments1.xml", "xl/drawings/vmlDrawing1.vml",
    }  # fmt: skip
    assert set(old) <= set(new)
    for name in set(old) - edited:
        assert new[name] == old[name], name
    for kept in ("xl/charts/chart1.xml", "xl/drawings/drawing1.xml", "xl/media/image1.png"):
        assert kept in new
    assert new["xl/media/image1.png"] == lab.tiny_png()
    # Styles are only appended to: the old cellXfs come first, unchanged.
    old_xfs = re.search(r"<cellXfs[^>]*>(.*)</cellXfs>", old["xl/styles.xml"].decode(), re.S).group(1)  # type: ignore[union-attr]
    assert old_xfs in new["xl/styles.xml"].decode()


def test_formulas_stay_formulas_without_a_stored_result(tmp_path: Path) -> None:
    _, out, _, _ = export(tmp_path)
    xml = sheet_xml(out)
    formula_cells = [c for c in CELL.findall(xml) if "<f>" in c]
    assert len(formula_cells) == len(lab.ROWS)
    assert all("<v>" not in c for c in formula_cells)
    assert "<f>C8+D8+E8</f>" in xml
    with zipfile.ZipFile(out) as package:
        assert 'fullCalcOnLoad="1"' in package.read("xl/workbook.xml").decode()
        methods = package.read("xl/worksheets/sheet2.xml").decode()
        assert "<v>" not in next(c for c in CELL.findall(methods) if "<f>" in c)
    # calamine reads stored results only: none is left to be stale.
    rows = CalamineWorkbook.from_path(str(out)).get_sheet_by_name("Harvest").to_python()
    assert [rows[r - 1][5] for r in lab.file_rows()] == [""] * len(lab.ROWS)


def test_calamine_reads_the_filled_values(tmp_path: Path) -> None:
    _, out, sheet, result = export(tmp_path)
    book = CalamineWorkbook.from_path(str(out))
    assert book.sheet_names == ["Harvest", "Methods", "Fill log", "Pictures", "About this fill"]
    rows = book.get_sheet_by_name("Harvest").to_python()
    for ref, value in filled_cells(sheet, result).items():
        col, row = "ABCDEFG".index(ref[0]), int(ref[1:])
        assert rows[row - 1][col] == pytest.approx(value, rel=1e-12)
    assert rows[2][:3] == ["Sample", "pH", "Ca"] and rows[3][2] == "mmol/L"
    log = book.get_sheet_by_name("Fill log").to_python()
    assert sorted((int(r[0]), r[1]) for r in log[1:]) == [
        (8, "Mg"),
        (8, "pH"),
        (9, "K"),
        (11, "Ca"),
        (14, "Mg"),
    ]


def test_name_collision_gets_a_free_name(tmp_path: Path) -> None:
    _, out, _, _ = export(tmp_path, extra_sheets=("Fill log", "about this fill", "Pictures"))
    names = openpyxl.load_workbook(out).sheetnames
    assert names == [
        "Harvest",
        "Methods",
        "Fill log",
        "about this fill",
        "Pictures",
        "Fill log (2)",
        "Pictures (2)",
        "About this fill (2)",
    ]
    assert openpyxl.load_workbook(out)["Fill log"]["A1"].value == "the lab's own sheet"


def test_recovery_test_sheet_and_chart_are_added(tmp_path: Path) -> None:
    _, out, _, _ = export(tmp_path, report=True)
    book = openpyxl.load_workbook(out)
    assert book.sheetnames[2:] == ["Fill log", "Recovery test", "Pictures", "About this fill"]
    with zipfile.ZipFile(out) as package:
        names = package.namelist()
        assert "xl/media/image1.png" in names and "xl/charts/chart1.xml" in names
        media = [n for n in names if n.startswith("xl/media/")]
    # the lab's image, our chart, and one image per picture on the Pictures sheet
    assert len(media) == 2 + len(book["Pictures"]._images) and book["Pictures"]._images


@pytest.mark.parametrize(("suffix", "kept"), [(".xlsm", True), (".xlsx", False)])
def test_macros_kept_only_in_xlsm(tmp_path: Path, suffix: str, kept: bool) -> None:
    source, out, _, _ = export(tmp_path, suffix, macros=True)
    with zipfile.ZipFile(source) as a, zipfile.ZipFile(out) as b:
        assert a.read("xl/vbaProject.bin") == lab.VBA_BYTES
        types = b.read("[Content_Types].xml").decode()
        assert ("xl/vbaProject.bin" in b.namelist()) is kept
        assert ("macroEnabled" in types) is kept
        if kept:
            assert b.read("xl/vbaProject.bin") == lab.VBA_BYTES
        else:
            assert "vbaProject" not in b.read("xl/_rels/workbook.xml.rels").decode()
    about = CalamineWorkbook.from_path(str(out)).get_sheet_by_name("About this fill").to_python()
    assert any("cannot hold macros" in str(r[1]) for r in about) is not kept
    assert openpyxl.load_workbook(out).sheetnames[:2] == ["Harvest", "Methods"]


def test_calc_chain_is_removed(tmp_path: Path) -> None:
    source = lab.build(tmp_path / "plain.xlsx")
    chained = tmp_path / "lab.xlsx"
    with zipfile.ZipFile(source) as a, zipfile.ZipFile(chained, "w") as b:
        for name in a.namelist():
            data = a.read(name)
            if name == "[Content_Types].xml":
                data = data.replace(
                    b"</Types>",
                    b'<Override PartName="/xl/calcChain.xml" ContentType="application/vnd.openxmlformats-'
                    b'officedocument.spreadsheetml.calcChain+xml"/></Types>',
                )
            if name == "xl/_rels/workbook.xml.rels":
                data = data.replace(
                    b"</Relationships>",
                    b'<Relationship Id="rId99" Type="http://schemas.openxmlformats.org/officeDocument/2006/'
                    b'relationships/calcChain" Target="calcChain.xml"/></Relationships>',
                )
            b.writestr(name, data)
        b.writestr("xl/calcChain.xml", b'<calcChain xmlns="x"><c r="F6" i="1"/></calcChain>')
    sheet = read_sheet(chained)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, impute(sheet, PLAN), PLAN)
    with zipfile.ZipFile(out) as package:
        assert "xl/calcChain.xml" not in package.namelist()
        assert b"calcChain" not in package.read("[Content_Types].xml")
        assert b"calcChain" not in package.read("xl/_rels/workbook.xml.rels")
    assert openpyxl.load_workbook(out).sheetnames[0] == "Harvest"


def test_table_layout_keeps_the_flat_export(tmp_path: Path) -> None:
    source = lab.build(tmp_path / "lab.xlsx")
    sheet = read_sheet(source)
    out = tmp_path / "flat.xlsx"
    write_result(out, sheet, impute(sheet, PLAN), PLAN, layout="table")
    assert openpyxl.load_workbook(out).sheetnames == ["Filled", "Fill log", "Pictures", "About this fill"]


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice is not installed")
def test_libreoffice_recomputes_the_formula_column(tmp_path: Path) -> None:
    _, out, _, result = export(tmp_path)
    profile = (tmp_path / "profile").as_uri()
    subprocess.run(
        ["soffice", "--headless", "--norestore", f"-env:UserInstallation={profile}",
         "--convert-to", "csv", "--outdir", str(tmp_path / "csv"), str(out)],
        check=True, capture_output=True, timeout=180,
    )  # fmt: skip
    lines = (tmp_path / "csv" / "lab.filled.csv").read_text().splitlines()
    for i, row in enumerate(lab.file_rows()):
        cells = lines[row - 1].split(",")
        ca, mg, k = (float(result.frame[name].iloc[i]) for name in ("Ca", "Mg", "K"))
        assert float(cells[5]) == pytest.approx(ca + mg + k, abs=1e-9), row
    assert lines[7].split(",")[5] != "5.991"  # the stale sum of row 8 (Mg was a gap) is gone


def test_a_workbook_changed_since_reading_is_refused(tmp_path: Path) -> None:
    source = lab.build(tmp_path / "lab.xlsx")
    sheet = read_sheet(source)
    result = impute(sheet, PLAN)
    lab.build(source, extra_sheets=("Later",))
    out = tmp_path / "out.xlsx"
    with pytest.raises(ExportError, match="changed since it was read"):
        write_result(out, sheet, result, PLAN)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lab.xlsx"]


def test_a_censored_entry_replaced_by_the_plan_gets_the_censored_mark(tmp_path: Path) -> None:
    source = lab.build(tmp_path / "lab.xlsx", censored=True)
    sheet = read_sheet(source)
    plan = FillPlan(k=3, carried_columns=("Sample", "Base sum", "Notes"), censored="half_limit")
    result = impute(sheet, plan)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, result, plan)
    cell = openpyxl.load_workbook(out)["Harvest"]["E16"]
    assert cell.value == pytest.approx(0.125)  # half of the limit 0.250
    assert cell.fill.fgColor.rgb == "FFF4E3C9" and cell.number_format == "0.000"
    assert '"<0.250"' in cell.comment.text


def test_notes_on_a_sheet_without_notes_or_relationships(tmp_path: Path) -> None:
    source, out, sheet, result = export(tmp_path, bare=True)
    with zipfile.ZipFile(source) as package:
        assert "xl/worksheets/_rels/sheet1.xml.rels" not in package.namelist()
    with zipfile.ZipFile(out) as package:
        names = package.namelist()
        rels = package.read("xl/worksheets/_rels/sheet1.xml.rels").decode()
        types = package.read("[Content_Types].xml").decode()
        xml = package.read("xl/worksheets/sheet1.xml").decode()
    assert "xl/comments1.xml" in names and "xl/drawings/vmlDrawing1.vml" in names
    assert 'Target="../comments1.xml"' in rels and 'Target="../drawings/vmlDrawing1.vml"' in rels
    assert 'PartName="/xl/comments1.xml"' in types and 'Extension="vml"' in types
    assert re.search(r'<legacyDrawing r:id="rId\d"/></worksheet>$', xml)
    harvest = openpyxl.load_workbook(out)["Harvest"]
    noted = {f"{c.column_letter}{c.row}" for row in harvest.iter_rows() for c in row if c.comment}
    assert noted == set(filled_cells(sheet, result))


@pytest.mark.parametrize("stop_at", [1, 2, 3])
def test_cancel_leaves_nothing_behind_and_progress_only_grows(tmp_path: Path, stop_at: int) -> None:
    source = lab.build(tmp_path / "lab.xlsx")
    sheet = read_sheet(source)
    result = impute(sheet, PLAN)
    full: list[tuple[int, int]] = []
    write_result(tmp_path / "full.xlsx", sheet, result, PLAN, progress=lambda d, t: full.append((d, t)))
    assert [d for d, _ in full] == sorted(d for d, _ in full) and full[-1][0] == full[-1][1]
    stop = threading.Event()
    calls: list[int] = []

    def progress(done: int, total: int) -> None:
        calls.append(done)
        if len(calls) == stop_at:
            stop.set()

    with pytest.raises(Cancelled):
        write_result(tmp_path / "out.xlsx", sheet, result, PLAN, progress=progress, cancel=stop)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["full.xlsx", "lab.xlsx"]


def test_a_workbook_written_by_openpyxl_with_marker_text_in_gaps(tmp_path: Path) -> None:
    # openpyxl writes numbers as t="n", text as shared strings and no stored formula results.
    book = openpyxl.Workbook()
    sheet_ = book.active
    sheet_.title = "Data"
    sheet_.append(["x", "y", "total"])
    values = [(1.0, 2.0), (2.0, "NA"), (3.0, 6.0), (4.0, 8.0), ("NA", 10.0), (6.0, 12.0)]
    for row, (x, y) in enumerate(values, start=2):
        sheet_.append([x, y, f"=A{row}+B{row}"])
        sheet_.cell(row, 2).number_format = "0.0"
    source = tmp_path / "plain.xlsx"
    book.save(source)
    sheet = read_sheet(source)
    plan = FillPlan(k=2, carried_columns=("total",))
    result = impute(sheet, plan)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, result, plan)
    data = openpyxl.load_workbook(out)["Data"]
    assert data["B3"].value == pytest.approx(float(result.frame.loc[3, "y"]))
    assert data["A6"].value == pytest.approx(float(result.frame.loc[6, "x"]))
    assert data["B3"].number_format == "0.0" and data["C3"].value == "=A3+B3"
    before, after = cells_by_ref(sheet_xml(source)), cells_by_ref(sheet_xml(out))
    assert {ref for ref in before if before[ref] != after[ref]} == {"B3", "A6"}
