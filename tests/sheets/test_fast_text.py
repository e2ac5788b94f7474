"""The fast paths for long text agree with the exact ones: ``csv.reader`` and ``pandas.to_numeric``.

Both are accelerators (README "Benchmarks": reading a long csv); these tests pin that
they return the same cells and numbers as the reference code they stand in for, and
hand back the input they must not take.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd
import pytest

from imputer_app.sheets import _fast_text
from imputer_app.sheets._fast_text import plain_number_values, split_plain_text
from imputer_app.sheets._grid import rows_to_grid
from tests.sheets.both_paths import read_both_ways


@pytest.fixture
def always_fast(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)


def _csv_reader_grid(text: str, delimiter: str) -> np.ndarray:
    """The reference: Python's csv module, short rows padded as the reader pads them."""
    return rows_to_grid(list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=False)))


def _random_text(seed: int, delimiter: str, line_end: str) -> str:
    rng = np.random.default_rng(seed)
    pool = ["7.21", "", " 3", "n.d.", "<0.05", "Größe", "a b", "-", "1e-3", "NA", "x\ty"]
    pool = [p for p in pool if delimiter not in p]
    rows = [[pool[i] for i in rng.integers(0, len(pool), 6)] for _ in range(40)]
    return line_end.join(delimiter.join(row) for row in rows) + (line_end if seed % 2 else "")


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
@pytest.mark.parametrize("line_end", ["\n", "\r\n", "\r"])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_split_equals_csv_reader(always_fast: None, delimiter: str, line_end: str, seed: int) -> None:
    # reference: Python's csv module (the exact path the reader uses otherwise)
    text = _random_text(seed, delimiter, line_end)
    fast = split_plain_text(text, delimiter)
    if line_end == "\r":  # lone carriage returns: left to csv.reader
        assert fast is None
        return
    assert fast is not None
    expected = _csv_reader_grid(text, delimiter)
    assert fast.cells.shape == expected.shape
    assert (fast.cells == expected).all()


@pytest.mark.parametrize(
    ("text", "why"),
    [
        ('a,b\n"1,5",2\n', "a quote"),
        ("title\na,b\n1,2\n", "rows of different widths"),
        ("a,b\n1,2\n\n3,4\n", "a blank line inside"),
        ("a,b\n1,2,3\n", "a long row"),
    ],
)
def test_split_hands_back_what_it_must_not_take(always_fast: None, text: str, why: str) -> None:
    assert split_plain_text(text, ",") is None, why


def test_short_text_goes_to_csv_reader() -> None:
    assert split_plain_text("a,b\n1,2\n", ",") is None


def _to_numeric_reference(values: np.ndarray, decimal: str) -> np.ndarray:
    """The reference: ``pandas.to_numeric`` over the texts (with decimal "," texts holding
    "." are left out, since "1.234" may group thousands)."""
    texts = pd.Series(values, dtype=object)
    grouped = texts.str.contains(".", regex=False).to_numpy(dtype=bool) if decimal == "," else None
    if decimal == ",":
        texts = texts.str.replace(",", ".", regex=False)
    found = pd.to_numeric(texts, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    plain = np.isfinite(found) if grouped is None else np.isfinite(found) & ~grouped
    return np.where(plain, found, np.nan)


EDGE_TEXTS = [
    "5", " 5", "5 ", "5\t", "5.", "+5", ".5", "-.5", "1e5", "1E+05", "1e400", "1e-400", "inf",
    "nan", "NaN", "1_000", "0x10", "1,5", "1.234,5", "1,234", "\u0661\u0662", "\u00a05", "00012",
    "-0", "1.5e-3", "1e", "e5", "+-5", "5..", "", "12345678901234567890", "\v5", "4.9e-324",
    "0.1000000000000000055511151231257827", "<0.05", "n.d.",
]  # fmt: skip


@pytest.mark.parametrize("decimal", [".", ","])
def test_plain_numbers_equal_to_numeric_on_edge_texts(decimal: str) -> None:
    # reference: pandas.to_numeric
    values = np.array(EDGE_TEXTS, dtype=object)
    fast = plain_number_values(values, decimal)
    expected = _to_numeric_reference(values, decimal)
    np.testing.assert_array_equal(fast, expected)


@pytest.mark.parametrize("decimal", [".", ","])
def test_plain_numbers_equal_to_numeric_on_random_texts(decimal: str) -> None:
    # reference: pandas.to_numeric, on short texts drawn from digits, marks, signs,
    # letters of inf/nan/e/x, spaces, underscores and a non-ASCII digit
    rng = np.random.default_rng(7)
    alphabet = list("0123456789.,+-eEinfatyx _\t\u0661\u2212")
    texts = ["".join(rng.choice(alphabet, rng.integers(1, 7))) for _ in range(30_000)]
    values = np.array(texts, dtype=object)
    expected = _to_numeric_reference(values, decimal)
    np.testing.assert_array_equal(plain_number_values(values, decimal), expected)


@pytest.mark.parametrize(
    "texts",
    [["1", "2\x003", "", "4", "x"], ["\x00", "5"], ["", "", "7.5"], ["north", "", "6", "n.d."], [""]],
)
@pytest.mark.parametrize("decimal", [".", ","])
def test_plain_numbers_with_blank_texts_and_separator_bytes(texts: list[str], decimal: str) -> None:
    # reference: pandas.to_numeric; a NUL inside a text (the joining separator) and empty
    # texts must not shift which text a byte belongs to
    values = np.array(texts, dtype=object)
    expected = _to_numeric_reference(values, decimal)
    np.testing.assert_array_equal(plain_number_values(values, decimal), expected)


def test_plain_numbers_equal_to_numeric_on_many_values() -> None:
    # reference: pandas.to_numeric; repr, 17 significant digits and exponent forms
    rng = np.random.default_rng(1)
    x = rng.lognormal(0, 5, 20_000) * rng.choice([-1, 1], 20_000)
    texts = [repr(float(v)) for v in x] + [f"{v:.17g}" for v in x] + [f"{v:.3e}" for v in x]
    values = np.array(texts, dtype=object)
    np.testing.assert_array_equal(plain_number_values(values, "."), _to_numeric_reference(values, "."))
    commas = np.array([t.replace(".", ",") for t in texts], dtype=object)
    np.testing.assert_array_equal(plain_number_values(commas, ","), _to_numeric_reference(commas, ","))


def test_read_sheet_same_through_both_paths(tmp_path, monkeypatch: pytest.MonkeyPatch) -> None:
    # the whole reader, once through the fast path and once through csv.reader: same sheet
    rng = np.random.default_rng(3)
    n = 400
    values = rng.lognormal(1, 0.8, (n, 4)).round(3).astype(str).astype(object)
    values[rng.random((n, 4)) < 0.1] = ""
    values[rng.random((n, 4)) < 0.02] = "n.d."
    values[rng.random((n, 4)) < 0.02] = "<0.05"
    sites = np.array(["north", "south"])[rng.integers(0, 2, n)]
    lines = ["sample;site;a;b;c;d"] + [
        ";".join([f"S{i:04d}", sites[i], *(v.replace(".", ",") for v in values[i])]) for i in range(n)
    ]
    path = tmp_path / "long.csv"
    path.write_text("\r\n".join(lines) + "\r\n", encoding="utf-8")
    fast, exact = read_both_ways(monkeypatch, path)
    pd.testing.assert_frame_equal(fast.frame, exact.frame)
    pd.testing.assert_frame_equal(fast.states, exact.states)
    assert (fast.raw_text == exact.raw_text).all()
    assert fast.source.delimiter == ";" and fast.frame["a"].notna().sum() > 300
