"""The column classifier's quick paths give the same cells as the general path.

``parse_column`` chooses its work by ``infer_dtype`` and splits mixed columns by each
cell's type with floats first (README "Benchmarks": reading a 100,000 x 20 xlsx). The
general path below is the classifier as it was before those paths: every non-blank
cell, then one type lookup per cell. Both run on the cells calamine returns for an
awkward workbook written by xlsxwriter, and on hand-made object columns.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.errors import SheetError
from imputer_app.sheets import _cells as cells
from imputer_app.sheets import _text_classes as text_classes
from imputer_app.sheets import read_sheet
from imputer_app.sheets._cells import ParsedColumn, parse_column
from imputer_app.sheets._grid import NO_VALUE, FormulaError
from imputer_app.sheets._markers import make_markers
from imputer_app.sheets._workbook import read_workbook
from tests.sheets.awkward_workbook import HEADER, build, lying_dimension
from tests.sheets.package_support import number_cell, text_cell, xlsx

_FIELDS = ("raw", "cls", "number", "text", "side", "limit", "token")


def _general(raw: np.ndarray, decimal: str, markers: cells.Markers) -> ParsedColumn:
    """The reference: the non-blank cells, all numbers or all text by ``infer_dtype``, else one
    type lookup per cell."""
    n = raw.shape[0]
    parsed = ParsedColumn(
        raw=raw,
        cls=np.full(n, cells.BLANK, dtype=np.int8),
        number=np.full(n, np.nan),
        text=np.full(n, "", dtype=object),
        side=np.full(n, "", dtype=object),
        limit=np.full(n, np.nan),
        token=np.full(n, "", dtype=object),
    )
    where = np.flatnonzero(raw != "")
    values = raw[where]
    inferred = pd.api.types.infer_dtype(values, skipna=False)
    if inferred in ("floating", "integer", "mixed-integer-float"):
        _numbers(parsed, where, values, markers)
    elif inferred == "string":
        cells._take_strings(parsed, where, values, decimal, markers)
    elif values.size:
        types = pd.Series([type(v) for v in values], dtype=object)
        numeric = types.isin(cells._NUMBER_TYPES).to_numpy()
        strings = types.isin(cells._STRING_TYPES).to_numpy()
        others = ~(numeric | strings)
        _numbers(parsed, where[numeric], values[numeric], markers)
        cells._take_strings(parsed, where[strings], values[strings], decimal, markers)
        cells._take_others(parsed, where[others], values[others])
    return parsed


def _numbers(parsed: ParsedColumn, where: np.ndarray, values: np.ndarray, markers: cells.Markers) -> None:
    numbers = values.astype(float)
    finite = np.isfinite(numbers)
    marker = markers.match_numbers(numbers)
    parsed.number[where[finite & ~marker]] = numbers[finite & ~marker]
    parsed.cls[where] = np.where(marker, cells.MARKER, np.where(finite, cells.NUMBER, cells.BLANK))


def _assert_same(fast: ParsedColumn, general: ParsedColumn) -> None:
    for name in _FIELDS:
        a, b = getattr(fast, name), getattr(general, name)
        assert a.dtype == b.dtype and a.shape == b.shape, name
        if a.dtype == float:
            np.testing.assert_array_equal(a, b, err_msg=name)
        else:
            assert [(type(x), x) for x in a.tolist()] == [(type(x), x) for x in b.tolist()], name


@pytest.fixture(scope="module")
def awkward(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build(tmp_path_factory.mktemp("awkward") / "awkward.xlsx")


@pytest.mark.parametrize("decimal", [".", ","])
@pytest.mark.parametrize("column", range(len(HEADER)))
def test_workbook_columns_classified_as_by_the_general_path(awkward: Path, column: int, decimal: str) -> None:
    grid = read_workbook(awkward.read_bytes(), awkward, "xlsx", None).cells
    raw = grid[1:, column]
    markers = make_markers(["-999"], {"-": "below-limit"}) if column == 1 else make_markers()
    _assert_same(parse_column(raw, decimal, markers), _general(raw, decimal, markers))


_COLUMNS = {
    "floats only": [1.5, 2.0, -0.25, 1e300],
    "floats with non-finite": [1.5, float("nan"), float("inf"), 2.0],
    "whole and float": [1, 2.5, 3, np.int64(4), np.float32(0.5)],
    "numbers and blanks": [1.5, "", 2.0, "", ""],
    "numbers, blanks and spaces": [1.5, " ", 2.0, "\t", ""],
    "numeric marker": [-999.0, 1.5, "", "-999", 2.0],
    "texts only": ["a", "", " b ", "NA", "<0.5", "7,25", "1.234,5"],
    "numpy strings": [np.str_("1.5"), np.str_(""), "2", np.str_("n.d.")],
    "blank only": ["", "", ""],
    "empty": [],
    "booleans": [True, False, True],
    "numpy integers": [np.int16(3), np.uint8(4), np.int8(-1)],
    "numpy integers and blanks": [np.int16(3), "", np.uint8(4)],
    "numpy integers and text": [np.int16(3), "x", 2.5],
    "none first": [None, "a", "", "1.5"],
    "dates and times": [dt.datetime(2024, 1, 1), dt.date(2024, 1, 2), dt.time(8, 30), dt.timedelta(hours=2)],
    "everything": [
        1.5, "", " 7,5 ", "n.d.", True, dt.datetime(2024, 1, 1), 3, "<2", "x", None,
        FormulaError("#DIV/0!"), NO_VALUE, np.float64(2.5), "#N/A", "#VALUE!", "> 100", "< LOD",
    ],
}  # fmt: skip


@pytest.mark.parametrize("decimal", [".", ","])
@pytest.mark.parametrize("name", sorted(_COLUMNS))
def test_object_columns_classified_as_by_the_general_path(name: str, decimal: str) -> None:
    raw = np.empty(len(_COLUMNS[name]), dtype=object)
    raw[:] = _COLUMNS[name]
    markers = make_markers(["-999"])
    _assert_same(parse_column(raw, decimal, markers), _general(raw, decimal, markers))


_TEXTS = [
    "",
    " ",
    "\u00a0x\u2003",
    "Größe",
    "ÉCOLE",
    "ǅ",
    "İ",
    "\U0001d518x",
    "  n.d. ",
    "<0,5",
    "#n/a",
    "é",
    "ß",
]


def test_text_helpers_equal_pandas_string_methods() -> None:
    # reference: pandas' .str.strip(), .str.lower() and .str[:1] on a str Series
    values = np.array([*_TEXTS, np.str_(" ab ")], dtype=object)
    series = pd.Series(values, dtype=str)
    assert text_classes.strip_texts(values).tolist() == series.str.strip().tolist()
    assert text_classes._LOWER(values).tolist() == series.str.lower().tolist()
    assert text_classes._first_chars(series).tolist() == series.str[:1].tolist()


def test_lying_dimension_reads_the_same(awkward: Path, tmp_path: Path) -> None:
    honest = read_sheet(awkward)
    lying = read_sheet(lying_dimension(awkward, tmp_path / "lying.xlsx"))
    pd.testing.assert_frame_equal(lying.frame, honest.frame)
    pd.testing.assert_frame_equal(lying.states, honest.states)
    pd.testing.assert_frame_equal(lying.cell_notes, honest.cell_notes)
    assert lying.problems == honest.problems and lying.columns == honest.columns
    assert honest.frame.shape == (120, len(HEADER))


def test_small_dimension_does_not_hide_a_far_cell(tmp_path: Path) -> None:
    head = f'<row r="1">{text_cell("A1", "a")}</row><row r="2">{number_cell("A2", 1)}</row>'
    path = xlsx(tmp_path / "far.xlsx", head + f'<row r="3">{number_cell("XFD1048576", 1)}</row>')
    lying = lying_dimension(path, tmp_path / "lying.xlsx", "A1:A2")
    with pytest.raises(SheetError, match="XFD1048576"):
        read_sheet(lying)


@pytest.mark.parametrize("decimal", [".", ","])
def test_texts_known_from_earlier_columns_classify_the_same(awkward: Path, decimal: str) -> None:
    # one KnownTexts for a whole sheet, as the reader keeps it: the same texts recur in
    # column after column (untrimmed and numpy variants among them)
    grid = read_workbook(awkward.read_bytes(), awkward, "xlsx", None).cells[1:]
    columns = [grid[:, j] for j in range(grid.shape[1])]
    for values in [*_COLUMNS.values(), [" n.d.", "n.d.", np.str_("n.d."), "<0,5", "< 0.5", "", 1.0]]:
        raw = np.empty(len(values), dtype=object)
        raw[:] = values
        columns.append(raw)
    markers = make_markers(["-999"], {"-": "below-limit"})
    known = text_classes.KnownTexts(decimal, markers)
    for raw in columns * 2:
        _assert_same(parse_column(raw, decimal, markers, known), _general(raw, decimal, markers))


_A_B = '<row r="1">' + text_cell("A1", "a") + text_cell("B1", "b") + "</row>"
_A_B_D = _A_B.replace("</row>", text_cell("D1", "d") + "</row>")


@pytest.mark.parametrize(
    ("head", "body"),
    [
        # one block of the grid: every column, no row left out
        (
            _A_B,
            "".join(
                f'<row r="{r}">{number_cell(f"A{r}", r)}{text_cell(f"B{r}", f" t{r} ")}</row>'
                for r in (2, 3, 4)
            ),
        ),
        # a blank row inside the table and an empty column C between used ones
        (
            _A_B_D,
            "".join(
                f'<row r="{r}">{number_cell(f"A{r}", r)}{text_cell(f"D{r}", f" t{r} ")}</row>'
                for r in (2, 4, 5)
            ),
        ),
    ],
)
def test_cells_as_read_are_the_kept_cells_of_the_grid(tmp_path: Path, head: str, body: str) -> None:
    # the reader hands out a block of its grid when it can, else the kept cells stacked;
    # either way the cells of the kept rows and columns, text untrimmed
    path = xlsx(tmp_path / "block.xlsx", head + body)
    sheet = read_sheet(path)
    grid = read_workbook(path.read_bytes(), path, "xlsx", None).cells
    positions = [["a", "b", "c", "d"].index(name) for name in sheet.frame.columns]
    expected = grid[np.ix_(sheet.frame.index.to_numpy() - 1, positions)]
    assert sheet.raw_text is not None and sheet.raw_text.shape == expected.shape
    assert [(type(x), x) for x in sheet.raw_text.ravel().tolist()] == [
        (type(x), x) for x in expected.ravel().tolist()
    ]
