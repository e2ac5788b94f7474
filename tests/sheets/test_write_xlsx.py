"""The xlsx export read back by two independent readers (openpyxl, python-calamine).

References: Office Open XML, ECMA-376 Part 1 (a package both readers and ``zipfile``
accept; inline strings sec. 18.3.1.53, ``_xHHHH_`` escapes sec. 22.4.2.4); OWASP
"CSV Injection" (text that looks like a formula must stay text).
"""

from __future__ import annotations

import io
import sys
import zipfile
from datetime import datetime
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl.utils import get_column_letter
from openpyxl.utils.escape import unescape

from imputer_app import CAUTIONS
from imputer_app.engine import impute
from imputer_app.sheets import _write_xlsx, write_result
from tests.sheets.write_support import (
    LAB_PLAN,
    about,
    calamine_cells,
    fake_result,
    lab_sheet,
    openpyxl_cells,
    raw_comments,
    raw_fills,
    sheet_xml,
)

FILLED, CENSORED = _write_xlsx.FILLED_COLOUR[1:], _write_xlsx.CENSORED_COLOUR[1:]


@pytest.fixture
def lab(tmp_path: Path):
    sheet = lab_sheet(tmp_path)
    result = impute(sheet, LAB_PLAN)
    out = tmp_path / "lab.filled.xlsx"
    assert write_result(out, sheet, result, LAB_PLAN, layout="table") == [out]
    return SimpleNamespace(sheet=sheet, result=result, path=out)


def expected_filled(sheet, result) -> dict[tuple[int, int], object]:
    """What sheet "Filled" must hold: header row 2, units row 3, data at its own row numbers."""
    cells: dict[tuple[int, int], object] = {}
    for j, info in enumerate(sheet.columns, start=1):
        cells[(2, j)] = info.name
        if info.unit:
            cells[(3, j)] = info.unit
    texts = {(r, c): t for r, c, t in sheet.cell_notes[["row", "column", "text"]].itertuples(index=False)}
    for row in result.frame.index:
        for j, column in enumerate(result.frame.columns, start=1):
            value = result.frame.loc[row, column]
            if pd.notna(value):
                cells[(row, j)] = value
            elif sheet.states.loc[row, column] in ("censored", "text_in_number"):
                cells[(row, j)] = texts[(row, column)]
    return cells


def test_both_readers_see_every_value_in_place(lab) -> None:
    expected = expected_filled(lab.sheet, lab.result)
    assert openpyxl_cells(lab.path, "Filled") == expected
    assert calamine_cells(lab.path, "Filled") == expected
    # Row numbers are kept: the fill log's row label is the row in both files.
    assert all(row >= 4 for row, _ in [k for k, v in expected.items() if k[0] not in (2, 3)])


def test_package_is_accepted_by_zipfile_and_both_readers(lab) -> None:
    with zipfile.ZipFile(lab.path) as package:
        assert package.testzip() is None
        assert package.namelist()[0] == "[Content_Types].xml"
    names = ["Filled", "Fill log", "Pictures", "About this fill"]  # Pictures: numbers were filled
    assert openpyxl.load_workbook(lab.path).sheetnames == names
    from python_calamine import CalamineWorkbook

    assert CalamineWorkbook.from_path(str(lab.path)).sheet_names == names


def _refs(mask: pd.DataFrame) -> set[str]:
    rows, cols = np.nonzero(mask.to_numpy())
    return {f"{get_column_letter(c + 1)}{mask.index[r]}" for r, c in zip(rows, cols, strict=True)}


def test_marks_are_the_results_filled_and_censored_cells(lab) -> None:
    result = lab.result
    filled = _refs(result.filled & ~result.censored)
    censored = _refs(result.censored)
    assert filled and censored
    expected = {ref: FILLED for ref in filled} | {ref: CENSORED for ref in censored}
    assert raw_fills(lab.path, "Filled") == expected
    ws = openpyxl.load_workbook(lab.path)["Filled"]
    for ref in filled:
        assert ws[ref].fill.fgColor.rgb == "FF" + FILLED and ws[ref].font.i
    for ref in censored:
        assert ws[ref].fill.fgColor.rgb == "FF" + CENSORED
    assert ws["A4"].fill.patternType is None and not ws["A4"].font.i


def test_comments_give_each_cells_evidence(lab) -> None:
    comments = raw_comments(lab.path, "Filled")
    ws = openpyxl.load_workbook(lab.path)["Filled"]
    assert comments == {ref: ws[ref].comment.text for ref in comments}
    assert set(comments) == _refs(lab.result.filled | lab.result.censored)
    columns = list(lab.result.frame.columns)
    for entry in lab.result.log.itertuples(index=False):
        text = comments[f"{get_column_letter(columns.index(entry.column) + 1)}{entry.row}"]
        if entry.method == "knn":
            assert f"kNN from {entry.k} donor(s)" in text
            assert "Donor rows: " + "; ".join(map(str, entry.donors)) in text
            assert f"Support: {entry.support}" in text
    assert '"<0.5"' in comments["D6"] and "half the limit (0.25)" in comments["D6"]
    assert '">9"' in comments["E7"]
    assert 'Original entry: "see lab book"' in comments["C9"]


def test_fill_log_sheet_has_one_row_per_log_row(lab) -> None:
    log = lab.result.log
    for cells in (openpyxl_cells(lab.path, "Fill log"), calamine_cells(lab.path, "Fill log")):
        header = [cells[(1, j)] for j in range(1, 15)]
        assert header == ["row", "column", "original_state", "method", "value", "lower", "upper", "k",
                          "donors", "distances", "donor_values", "spread", "support", "note"]  # fmt: skip
        assert max(r for r, _ in cells) == len(log) + 1
        for i, entry in enumerate(log.itertuples(index=False), start=2):
            row = {header[j - 1]: cells.get((i, j), "") for j in range(1, 15)}
            assert row["row"] == entry.row and row["column"] == entry.column
            assert row["original_state"] == entry.original_state and row["method"] == entry.method
            assert row["value"] == entry.value
            assert row["donors"] == "; ".join(map(str, entry.donors))
            assert row["distances"] == "; ".join(f"{d:.6g}" for d in entry.distances)
            assert row["support"] == entry.support and row["note"] == entry.note
            if entry.method == "knn":
                assert row["k"] == entry.k
                assert row["spread"] == pytest.approx(entry.spread, rel=1e-15)


def test_about_sheet_holds_the_run_record_and_bold_cautions(lab) -> None:
    ws = openpyxl.load_workbook(lab.path)["About this fill"]
    caution = next(r for r in ws.iter_rows(max_col=2) if r[0].value == "Cautions")
    assert caution[1].value == CAUTIONS and caution[0].font.b and caution[1].font.b
    sections = about(lab.path)
    source = sections["Input file"]
    assert source["SHA-256"] == lab.sheet.source.sha256 and source["file"] == "lab.xlsx"
    assert source["sheet"] == "Data" and source["header row"] == 2 and source["units row"] == 3
    counts = sections["Counts"]
    assert counts["filled"] == int(lab.result.filled.to_numpy().sum())
    assert counts["censored"] == int(lab.result.censored.to_numpy().sum())
    assert counts["weak support"] == int((lab.result.log["support"] == "weak").sum())
    assert sections["Plan (as given)"]["carried columns"] == "sample; note"
    assert sections["Plan (as used, columns resolved)"]["fill columns"]
    assert sections["Units"] == {"nitrate": "mg/L", "lead": "µg/L"}
    assert sections["Software"]["kinfill"] and sections["Software"]["python-calamine"]
    assert sections["Warnings"]["1"] == lab.sheet.problems[0]  # the sheet's problems travel along
    export = sections["This export"]
    assert export["file"] == "lab.filled.xlsx" and "keeps its row number" in export["row numbers"]
    assert export["filled cells"] == f"fill colour #{FILLED}, italic text"
    marks = {r[0].value: r[1].fill.fgColor.rgb for r in ws.iter_rows(max_col=2) if r[0].value}
    assert marks["filled cells"] == "FF" + FILLED and marks["censored cells"] == "FF" + CENSORED


@pytest.mark.parametrize("limit, comments_written", [(20_000, True), (2, False)])
def test_comments_only_up_to_the_limit(tmp_path, monkeypatch, limit, comments_written) -> None:
    monkeypatch.setattr(_write_xlsx, "MAX_COMMENTS", limit)
    sheet = lab_sheet(tmp_path)
    result = impute(sheet, LAB_PLAN)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, result, LAB_PLAN, layout="table")
    assert bool(raw_comments(out, "Filled")) is comments_written
    assert about(out)["This export"]["cell comments"].startswith("left out") is not comments_written
    assert raw_fills(out, "Filled")  # marks stay either way


FORMULA_LIKE = [
    "=1+1",
    "+1",
    "-1",
    "@SUM(A1)",
    "\t=1",
    "\r=1",
    '=HYPERLINK("http://x.test","click")',
    "=cmd|' /C calc'!A0",
]


@pytest.mark.parametrize("text", FORMULA_LIKE)
def test_formula_like_text_stays_text(tmp_path, text) -> None:
    """OWASP CSV Injection: such cells must reach a spreadsheet program as text, not formulas."""
    frame = pd.DataFrame({"note": [text, "ok"], "x": [1.0, -2.0]})
    out = tmp_path / "out.xlsx"
    write_result(out, None, fake_result(frame), fake_result(frame).plan)
    assert "<f>" not in sheet_xml(out, "Filled")
    ws = openpyxl.load_workbook(out)["Filled"]
    assert ws["A2"].data_type == "s" and unescape(ws["A2"].value) == text
    assert ws["B3"].data_type == "n" and ws["B3"].value == -2.0
    assert calamine_cells(out, "Filled")[(2, 1)] == text


SPECIAL = [
    "a & b < c > d",
    "ctrl\x01char",
    "cr\rlf\nnl",
    "_x0041_ literal",
    "  lead",
    "trail  ",
    "µg/L ÄÖ 😀",
    "",
]


def test_special_text_round_trips(tmp_path) -> None:
    """ECMA-376 sec. 22.4.2.4: characters XML cannot carry travel as _xHHHH_ escapes."""
    frame = pd.DataFrame({"text": SPECIAL})
    out = tmp_path / "out.xlsx"
    write_result(out, None, fake_result(frame), fake_result(frame).plan)
    by_calamine = calamine_cells(out, "Filled")
    by_openpyxl = openpyxl_cells(out, "Filled")
    for i, text in enumerate(SPECIAL, start=2):
        assert by_calamine.get((i, 1), "") == text
        # openpyxl leaves _xHHHH_ escapes of inline strings for the caller to decode.
        assert unescape(by_openpyxl.get((i, 1), "")) == text


def test_long_text_is_cut_to_the_cell_limit(tmp_path) -> None:
    frame = pd.DataFrame({"text": ["x" * 40_000]})
    out = tmp_path / "out.xlsx"
    write_result(out, None, fake_result(frame), fake_result(frame).plan)
    assert calamine_cells(out, "Filled")[(2, 1)] == "x" * 32_767


def test_types_survive(tmp_path) -> None:
    when = pd.to_datetime(["2024-03-01", "2024-03-02 13:30", None], format="ISO8601")
    frame = pd.DataFrame(
        {
            "count": np.array([1, 2, 3], dtype=np.int64),
            "when": when,
            "flag": [True, False, True],
            "ratio": [0.1, np.inf, -1e-300],
            "mixed": pd.Series([1.5, "a", None], dtype=object),
        }
    )
    out = tmp_path / "out.xlsx"
    write_result(out, None, fake_result(frame), fake_result(frame).plan)
    cells = openpyxl_cells(out, "Filled")
    assert [cells[(r, 1)] for r in (2, 3, 4)] == [1, 2, 3]
    assert cells[(2, 2)] == datetime(2024, 3, 1) and cells[(3, 2)] == datetime(2024, 3, 2, 13, 30)
    assert (4, 2) not in cells
    assert [cells[(r, 3)] for r in (2, 3, 4)] == [True, False, True]
    assert cells[(2, 4)] == 0.1 and cells[(3, 4)] == "inf" and cells[(4, 4)] == -1e-300
    assert cells[(2, 5)] == 1.5 and cells[(3, 5)] == "a" and (4, 5) not in cells
    assert openpyxl.load_workbook(out)["Filled"]["B3"].number_format == "yyyy-mm-dd hh:mm:ss"
    by_calamine = calamine_cells(out, "Filled")
    assert by_calamine[(3, 2)] == datetime(2024, 3, 2, 13, 30) and by_calamine[(4, 4)] == -1e-300


def test_plain_table_starts_at_row_two_and_says_so(tmp_path) -> None:
    frame = pd.DataFrame({"a": [1.0, np.nan, 3.0], "b": [4.0, 5.0, 6.0]}, index=[10, 20, 30])
    result = fake_result(frame, {(20, "a"): 2.0})
    out = tmp_path / "out.xlsx"
    write_result(out, None, result, result.plan)
    cells = calamine_cells(out, "Filled")
    assert cells == {(1, 1): "a", (1, 2): "b", (2, 1): 1.0, (2, 2): 4.0, (3, 1): 2.0, (3, 2): 5.0,
                     (4, 1): 3.0, (4, 2): 6.0}  # fmt: skip
    assert raw_fills(out, "Filled") == {"A3": FILLED}
    rows_note = about(out)["This export"]["row numbers"]
    assert "data rows start at row 2" in rows_note and "index labels" in rows_note
    assert calamine_cells(out, "Fill log")[(2, 1)] == 20


def test_units_row_is_added_when_the_input_had_no_room(tmp_path) -> None:
    sheet = lab_sheet(tmp_path)
    sheet.frame.index = sheet.states.index = pd.Index([2, 3, 4, 5, 6, 7])
    sheet.cell_notes["row"] -= 2
    sheet.source = type(sheet.source)(**{**sheet.source.__dict__, "header_row": 1, "units_row": None})
    result = impute(sheet, LAB_PLAN)
    out = tmp_path / "out.xlsx"
    write_result(out, sheet, result, LAB_PLAN, layout="table")
    cells = calamine_cells(out, "Filled")
    assert cells[(1, 3)] == "nitrate" and cells[(2, 3)] == "mg/L" and cells[(3, 1)] == "S1"
    assert "data rows start at row 3" in about(out)["This export"]["row numbers"]


def test_not_filled_sheet_lists_cells_left_empty(tmp_path) -> None:
    frame = pd.DataFrame({"a": [1.0, np.nan], "b": [np.nan, np.nan]})
    unfilled = pd.DataFrame({"row": [1, 0, 1], "column": ["a", "b", "b"], "reason": ["no donor"] * 3})
    result = fake_result(frame, unfilled=unfilled)
    out = tmp_path / "out.xlsx"
    write_result(out, None, result, result.plan)
    cells = calamine_cells(out, "Not filled")
    assert [cells[(1, j)] for j in (1, 2, 3)] == ["row", "column", "reason"]
    assert [cells[(r, 2)] for r in (2, 3, 4)] == ["a", "b", "b"]
    sections = about(out)
    assert sections["Cells left empty, by reason"] == {"no donor": 3} and sections["Counts"]["unfilled"] == 3


def fake_report() -> SimpleNamespace:
    table = pd.DataFrame({"k": [1, 3, 5], "score": [0.9, 0.5, 0.55], "se": [0.05, 0.04, 0.04]})
    return SimpleNamespace(
        to_frame=lambda: table.set_index("k"),
        best_k=3,
        best_k_1se=3,
        ks=(1, 3, 5),
        settings={"hide_fraction": 0.1, "repeats": 5, "seed": 0, "masking": "random"},
        baseline=pd.DataFrame({"score": [1.0]}, index=["overall"]),
    )


def _png() -> bytes:
    from matplotlib.figure import Figure

    buffer = io.BytesIO()
    Figure(figsize=(2, 1)).savefig(buffer, format="png")
    return buffer.getvalue()


def test_recovery_sheet_holds_table_chosen_k_and_chart(tmp_path, monkeypatch) -> None:
    monkeypatch.setattr(_write_xlsx, "chart_png", lambda report: (_png(), "chart included"))
    frame = pd.DataFrame({"a": [1.0, 2.0]})
    result = fake_result(frame)
    out = tmp_path / "out.xlsx"
    write_result(out, None, result, result.plan, fake_report())
    cells = calamine_cells(out, "Recovery test")
    assert [cells[(1, j)] for j in (1, 2, 3)] == ["k", "score", "se"]
    assert [cells[(r, 1)] for r in (2, 3, 4)] == [1, 3, 5] and cells[(3, 2)] == 0.5
    labels = {cells[(r, 1)]: cells.get((r, 2)) for r in range(6, 10)}
    assert labels["Chosen k (used for this fill)"] == 1 and labels["Best k (lowest mean error)"] == 3
    with zipfile.ZipFile(out) as package:
        images = [n for n in package.namelist() if n.startswith("xl/media/")]
        assert len(images) == 1 and package.read(images[0]).startswith(b"\x89PNG\r\n\x1a\n")


def test_recovery_sheet_without_the_chart_module_says_so(tmp_path, monkeypatch) -> None:
    monkeypatch.setitem(sys.modules, "imputer_app.charts.error_vs_k", None)  # import fails
    frame = pd.DataFrame({"a": [1.0, 2.0]})
    result = fake_result(frame)
    out = tmp_path / "out.xlsx"
    write_result(out, None, result, result.plan, fake_report())
    assert about(out)["This export"]["chart"].startswith("chart not included")
    assert calamine_cells(out, "Recovery test")[(1, 5)].startswith("chart not included")


@pytest.mark.parametrize("suffix", [".xlsx", ".csv"])
def test_a_plain_table_may_repeat_a_column_name(tmp_path, suffix) -> None:
    frame = pd.DataFrame([[1.0, "a", 2.0], [np.nan, "b", 4.0]], columns=["x", "y", "x"])
    result = fake_result(frame)
    files = write_result(tmp_path / f"out{suffix}", None, result, result.plan)
    if suffix == ".xlsx":
        cells = calamine_cells(files[0], "Filled")
        assert [cells[(1, j)] for j in (1, 2, 3)] == ["x", "y", "x"] and cells[(3, 3)] == 4.0
    else:
        assert files[0].read_text(encoding="utf-8-sig").splitlines() == ["x,y,x", "1,a,2", ",b,4"]


ANY_TEXT = st.text(alphabet=st.characters(exclude_categories=("Cs",)), max_size=40)  # Cs: lone surrogates


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(texts=st.lists(ANY_TEXT, min_size=1, max_size=25))
def test_any_text_round_trips_through_calamine(tmp_path, texts) -> None:
    """Property: whatever the characters, python-calamine reads back exactly what was written."""
    frame = pd.DataFrame({"text": pd.Series(texts, dtype=object)})
    out = tmp_path / "prop.xlsx"
    write_result(out, None, fake_result(frame), fake_result(frame).plan)
    cells = calamine_cells(out, "Filled")
    assert [cells.get((i, 1), "") for i in range(2, len(texts) + 2)] == texts
