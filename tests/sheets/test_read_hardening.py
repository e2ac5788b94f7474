"""Hostile and odd workbooks: far cells, repeated rows, formula errors, blank header names."""

from __future__ import annotations

from pathlib import Path

import pytest

from imputer_app.errors import SheetError
from imputer_app.sheets import list_sheets, read_sheet
from imputer_app.sheets._extent import MAX_CELLS
from tests.sheets.package_support import number_cell, ods, ods_cell, ods_row, text_cell, xlsx

_HEAD = f'<row r="1">{text_cell("A1", "a")}{text_cell("B1", "b")}</row>'
_BODY = "".join(
    f'<row r="{r}">{number_cell(f"A{r}", r)}{number_cell(f"B{r}", 2 * r)}</row>' for r in (2, 3, 4)
)


@pytest.mark.parametrize(
    ("far", "rows", "columns"),
    [("XFD1048576", 1_048_576, 16_384), ("SZ1048576", 1_048_576, 520), ("B50000001", 50_000_001, 2)],
)
def test_far_cell_refused_before_any_grid(tmp_path: Path, far: str, rows: int, columns: int) -> None:
    # One value far away would make the parser allocate rows x columns cells from A1.
    path = xlsx(tmp_path / "far.xlsx", _HEAD + _BODY + f'<row r="{rows}">{number_cell(far, 1)}</row>')
    assert path.stat().st_size < 5_000
    with pytest.raises(SheetError) as caught:
        read_sheet(path)
    message = str(caught.value)
    assert "\n" not in message and far in message and "far.xlsx" in message
    if rows <= 1_048_576:
        assert f"{rows * columns:,} cells" in message and f"{MAX_CELLS:,}" in message
    else:
        assert "1,048,576 rows x 16,384 columns" in message


def test_ods_repeated_rows_and_columns_refused(tmp_path: Path) -> None:
    # 16,000 repeated value cells in a row repeated a million times: 1.6e10 cells in < 1 KB.
    rows = ods_row(ods_cell("a") + ods_cell("b")) + ods_row(ods_cell(1.0, 16_000), 1_000_000)
    path = ods(tmp_path / "repeated.ods", rows)
    for reader in (read_sheet, list_sheets):
        with pytest.raises(SheetError, match=r"reaches cell WQJ1000001 .*16,000,016,000 cells"):
            reader(path)


def test_ods_trailing_repeated_empty_rows_are_fine(tmp_path: Path) -> None:
    # Spreadsheet programs write the unused rest of a table as repeated empty rows.
    empty = ods_row('<table:table-cell table:number-columns-repeated="1024"/>', 1_048_000)
    rows = ods_row(ods_cell("a") + ods_cell("b")) + ods_row(ods_cell(1.5, 2), 3) + empty
    sheet = read_sheet(ods(tmp_path / "tidy.ods", rows))
    assert sheet.frame.shape == (3, 2)
    assert sheet.frame["b"].tolist() == [1.5, 1.5, 1.5]


def test_formula_errors_are_their_own_state(tmp_path: Path) -> None:
    body = (
        f'<row r="2">{number_cell("A2", 1)}<c r="B2" t="e"><f>1/0</f><v>#DIV/0!</v></c></row>'
        f'<row r="3">{number_cell("A3", 2)}{number_cell("B3", 4)}</row>'
        f'<row r="4">{number_cell("A4", 3)}<c r="B4" t="e"><v>#N/A</v></c></row>'
        f'<row r="5">{number_cell("A5", 4)}<c r="B5"><f>A5*2</f></c></row>'
        f'<row r="6">{number_cell("A6", 5)}{number_cell("B6", 10)}</row>'
    )
    sheet = read_sheet(xlsx(tmp_path / "errors.xlsx", _HEAD + body))
    states = sheet.states["b"].astype(str).tolist()
    # a formula with no stored value is a formula too: left alone, not a gap
    assert states == ["formula_error", "observed", "formula_error", "formula_error", "observed"]
    assert sheet.frame["b"].isna().tolist() == [True, False, True, True, False]
    assert sheet.column("b").kind == "number"
    notes = sheet.cell_notes.set_index("row")
    assert notes.loc[2, "text"] == "#DIV/0!" and notes.loc[4, "text"] == "#N/A"  # "#N/A" is no marker here
    assert notes.loc[5, "text"] == "formula with no stored value" and notes.loc[5, "state"] == "formula_error"
    assert any("2 cell(s) hold a formula error such as '#DIV/0!' (cell B2)" in p for p in sheet.problems)
    assert any("cell B5 have no stored value" in p for p in sheet.problems)


def test_formula_column_without_any_stored_value(tmp_path: Path) -> None:
    body = "".join(
        f'<row r="{r}">{number_cell(f"A{r}", r)}<c r="B{r}"><f>A{r}*2</f></c></row>' for r in (2, 3, 4)
    )
    sheet = read_sheet(xlsx(tmp_path / "uncalculated.xlsx", _HEAD + body))
    assert sheet.column("b").kind == "empty"
    assert not any("every cell is blank or a missing marker" in p for p in sheet.problems)
    assert any("formulas with no stored value" in p for p in sheet.problems)


@pytest.mark.parametrize(
    ("text", "names", "n_rows"),
    [
        ("a,b,,\n1,2,3,4\n5,6,7,8\n9,1,2,3\n", ["a", "b", "column 3", "column 4"], 3),
        ("a,,b,c\n1,2,3,4\n5,6,7,8\n", ["a", "column 2", "b", "c"], 2),
        ("Survey 2024\n\nsite,,ph,\n1,2,3,4\n5,6,7,8\n", ["site", "column 2", "ph", "column 4"], 2),
    ],
)
def test_header_with_blank_names_is_kept(tmp_path: Path, text: str, names: list[str], n_rows: int) -> None:
    path = tmp_path / "blanks.csv"
    path.write_text(text, encoding="utf-8")
    sheet = read_sheet(path)
    assert list(sheet.frame.columns) == names
    assert sheet.frame.shape[0] == n_rows
    for name in names:
        blank = name.startswith("column ")
        assert bool(sheet.column(name).notes) == blank
        if blank:
            assert "header cell was blank" in sheet.column(name).notes[0]


def test_numbers_only_first_row_is_still_no_header(tmp_path: Path) -> None:
    path = tmp_path / "plain.csv"
    path.write_text("1,2,3\n4,5,6\n7,8,9\n", encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.source.header_row == 0 and sheet.frame.shape == (3, 3)


@pytest.mark.parametrize(
    ("far_cell", "far"),
    [
        ('<row r="4"><c r="XFD1048576"><v>1</v></c></row>', "XFD1048576"),  # a cell beyond its row
        ('<row r="4"><c s="0" r="XFD99999"><v>1</v></c></row>', "XFD99999"),  # r not the first attribute
        ('<row r="4"><c t="n" r="ZZZ99999"><v>1</v></c></row>', "ZZZ99999"),
    ],
)
def test_far_cell_found_whatever_the_row_tags_say(tmp_path: Path, far_cell: str, far: str) -> None:
    path = xlsx(tmp_path / "odd.xlsx", _HEAD + _BODY + far_cell)
    with pytest.raises(SheetError, match=far):
        read_sheet(path)


def test_wide_sheet_within_limits_is_read(tmp_path: Path) -> None:
    # two-letter columns and five-digit rows: every cell reference is measured (the far
    # cell is AB20000, well within the limits), and the sheet is read
    head = '<row r="1">' + "".join(text_cell(f"{c}1", f"n{c}") for c in ("A", "B", "AB")) + "</row>"
    body = "".join(
        f'<row r="{r}">' + "".join(number_cell(f"{c}{r}", r) for c in ("A", "B", "AB")) + "</row>"
        for r in (2, 3, 20_000)
    )
    sheet = read_sheet(xlsx(tmp_path / "wide.xlsx", head + body))
    assert list(sheet.frame.columns) == ["nA", "nB", "nAB"]
    assert sheet.frame.index.tolist() == [2, 3, 20_000]


def test_formula_errors_saved_as_text_in_a_csv(tmp_path: Path) -> None:
    path = tmp_path / "errors.csv"
    path.write_text("a,b\n1,2\n2,#DIV/0!\n3,#N/A\n4,#value!\n5,6\n", encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.states["b"].astype(str).tolist() == [
        "observed",
        "formula_error",
        "missing",  # "#N/A" is a missing marker
        "formula_error",
        "observed",
    ]
    assert sheet.column("b").kind == "number"
    assert sheet.frame["b"].isna().tolist() == [False, True, True, True, False]
    assert not any("is not a number" in p for p in sheet.problems)
