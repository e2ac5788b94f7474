"""A long csv read through the byte splitter gives the same sheet as ``csv.reader``, cell for cell.

The fast path (README "Benchmarks": reading a long csv) keeps every cell's text in a
numpy ``StringDType`` grid and reads simple decimals from their bytes; these tests read
awkward files once through it and once through the exact path and compare values,
states, raw text, cell notes and each column's decimals, and check that a csv export
of a sheet with nothing filled is the input byte for byte.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import Sheet, _fast_text, _text, read_sheet, write_result
from imputer_app.sheets._fast_text import plain_number_values, split_plain_text

#: Number-like and awkward cell texts for a decimal point file (no "," inside: the separator).
POINT_TEXTS = [
    "7.21", "6.40", "0.5", "", "", "  7 ", "1e3", "1.5e-3", "-0", "+5", "5.", ".5", "007", "NA", "n.d.",
    "-", "?", "missing", "<0.5", "< 0.05", "<LOD", "BDL", ">100", "NaN", "nan", "inf", "-inf", "Infinity",
    "12345678901234567890", "0.1000000000000000055511151231257827", "123456789012345.6", "1234567890123456",
    "1." + "0" * 70 + "1", "1e400", "4.9e-324", "\u22125", "abc", "Größe", "#DIV/0!", "1_000", "-999",
    "9.99", "3.14159", "  ", "1e", "+-5", "5..",
]  # fmt: skip
#: The same for a decimal comma file (";" separator): "1,5" is one and a half, "1.234" grouped.
COMMA_TEXTS = [
    "7,21", "6,40", "0,5", "", "", "  7 ", "1e3", "1,5e-3", "-0", "+5", "5,", ",5", "007", "NA", "n.d.",
    "-", "<0,5", "<LOD", "1.234", "1.234,5", "NaN", "inf", "12345678901234567890", "1,1234567890123",
    "\u22125", "abc", "9,99", "1e400", "5,,",
]  # fmt: skip
LONG_NOTE = "a long note " * 10


def _awkward_text(seed: int, texts: list[str], delimiter: str, line_end: str) -> str:
    """A header and 300 rows: an ID, a note column and four columns drawn mostly from numbers."""
    rng = np.random.default_rng(seed)
    numbers = [t for t in texts if t and t[0] in "0123456789."]
    lines = [delimiter.join(["sample", "note", "a", "b", "c", "d"])]
    for i in range(300):
        cells = [f"S{i:04d}", LONG_NOTE if i % 37 == 0 else ("Größe" if i % 5 == 0 else "ok")]
        for _ in range(4):
            pool = texts if rng.random() < 0.3 else numbers
            cells.append(pool[rng.integers(0, len(pool))])
        lines.append(delimiter.join(cells))
    return line_end.join(lines) + line_end


def _read_both(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, text: str, **options: object
) -> tuple[Sheet, Sheet, bool]:
    path = tmp_path / "long.csv"
    path.write_bytes(text.encode("utf-8"))
    taken: list[object] = []
    split = _text.split_plain_text
    monkeypatch.setattr(_text, "split_plain_text", lambda *a: taken.append(split(*a)) or taken[-1])
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    fast = read_sheet(path, **options)
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 1 << 62)
    exact = read_sheet(path, **options)
    return fast, exact, taken[0] is not None


def _assert_same_sheet(fast: Sheet, exact: Sheet) -> None:
    pd.testing.assert_frame_equal(fast.frame, exact.frame)
    pd.testing.assert_frame_equal(fast.states, exact.states)
    pd.testing.assert_frame_equal(fast.cell_notes, exact.cell_notes)
    assert fast.columns == exact.columns  # kinds, units, notes and decimals
    assert fast.problems == exact.problems
    assert fast.markers == exact.markers
    assert fast.raw_text.shape == exact.raw_text.shape
    assert fast.raw_text.tolist() == exact.raw_text.tolist()
    assert all(type(cell) is str for row in fast.raw_text.tolist() for cell in row)


@pytest.mark.parametrize("line_end", ["\n", "\r\n"])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_point_file_same_through_both_paths(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, seed: int, line_end: str
) -> None:
    text = _awkward_text(seed, POINT_TEXTS, ",", line_end)
    fast, exact, took = _read_both(tmp_path, monkeypatch, text, markers=["-999"])
    assert took  # the byte splitter did the splitting
    _assert_same_sheet(fast, exact)
    assert fast.frame["a"].notna().sum() > 150


@pytest.mark.parametrize("seed", [0, 3])
def test_comma_file_same_through_both_paths(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, seed: int
) -> None:
    text = _awkward_text(seed, COMMA_TEXTS, ";", "\r\n")
    fast, exact, took = _read_both(tmp_path, monkeypatch, text)
    assert took
    assert fast.source.decimal == ","
    _assert_same_sheet(fast, exact)


@pytest.mark.parametrize(
    "text",
    [
        'a,b,c\n1,"2,5",3\n4,5,6\n',  # quotes: csv.reader's rules
        "a,b,c\n1,2\n4,5,6,7\n",  # ragged rows
        "a,b,c\n1,2,3\n\n4,5,6\n",  # a blank line inside
        "a,b\r1,2\r3,4\r",  # lone carriage returns
    ],
)
def test_files_the_splitter_refuses_read_the_same(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, text: str
) -> None:
    fast, exact, took = _read_both(tmp_path, monkeypatch, text)
    assert not took
    _assert_same_sheet(fast, exact)


def test_long_and_multibyte_cells_split_like_csv_reader(monkeypatch: pytest.MonkeyPatch) -> None:
    # reference: Python's csv module; cells over 64 bytes and UTF-8 characters of 2-4 bytes
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    rows = [["x" * 200, "é", "€5", "\U0001f600", ""], ["1", "µg/L", "z" * 65, " ", "é" * 40]] * 3
    text = "\n".join(",".join(row) for row in rows)
    split = split_plain_text(text, ",")
    assert split is not None
    assert split.cells.tolist() == rows
    assert split.codes[0] is None and split.codes[2] is None  # columns with a cell over 64 bytes
    assert bytes(split.codes[1][:, 1]).rstrip(b"\x00").decode("utf-8") == "µg/L"


def test_simple_decimals_equal_float(monkeypatch: pytest.MonkeyPatch) -> None:
    # reference: Python's float (correctly rounded); texts of 1 to 17 digits with and
    # without a mark, signs and leading zeros, so both sides of the 15-digit limit
    rng = np.random.default_rng(5)
    texts = []
    for _ in range(20_000):
        digits = "".join(rng.choice(list("0123456789"), rng.integers(1, 18)))
        cut = int(rng.integers(0, len(digits) + 1))
        mark = "." if rng.random() < 0.8 else ""
        sign = rng.choice(["", "", "-", "+"])
        texts.append(f"{sign}{digits[:cut]}{mark}{digits[cut:]}")
    texts += ["-0", "-0.000", "+0", "0", "999999999999999", "9999999999999999", "0.000000000000001"]
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    split = split_plain_text("\n".join(texts), ",")
    assert split is not None
    found = plain_number_values(split.cells[:, 0], ".", split.codes[0])
    expected = np.array([float(t) for t in texts])
    np.testing.assert_array_equal(found, expected)
    assert np.array_equal(np.signbit(found), np.signbit(expected))  # "-0" keeps its sign


@pytest.mark.parametrize("guarded", [False, True])
def test_export_of_unfilled_sheet_is_the_input(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, guarded: bool
) -> None:
    # a long csv read through the byte splitter, exported with nothing filled: the same
    # bytes as the input, and as the export after the exact path. Text that a spreadsheet
    # program would run as a formula ("-inf", "+-5") is the one designed exception: it
    # gets a leading ' (README: exports guard such text).
    pool = POINT_TEXTS if guarded else [t for t in POINT_TEXTS if t not in ("-inf", "+-5")]
    lines = _awkward_text(4, pool, ",", "\r\n").split("\r\n")
    # one more column without gaps, the fill column: the fill has nothing to fill
    lines = [f"{line},{i}.5" if i else f"{line},full" for i, line in enumerate(lines[:-1])]
    source = tmp_path / "in.csv"
    source.write_bytes("\r\n".join([*lines, ""]).encode("utf-8"))
    plan = FillPlan(k=2, similarity_columns=("full",), fill_columns=("full",))
    exports = []
    for fast in (True, False):
        monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0 if fast else 1 << 62)
        sheet = read_sheet(source)
        assert (type(sheet.raw_text.dtype) is np.dtypes.StringDType) == fast
        result = impute(sheet, plan)
        assert not result.filled.to_numpy().any()
        target = tmp_path / f"out_{fast}.csv"
        write_result(target, sheet, result, plan)
        exports.append(target.read_bytes())
    assert exports[0] == exports[1]
    if not guarded:
        assert exports[0] == source.read_bytes()
    else:
        assert exports[0] != source.read_bytes()
        assert exports[0].replace(b",'-inf", b",-inf").replace(b",'+-5", b",+-5") == source.read_bytes()
