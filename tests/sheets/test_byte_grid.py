"""The byte splitter cut into pieces gives the cells ``csv.reader`` gives, wherever the pieces end.

The splitter (README "Benchmarks": reading a long csv) finds cells a piece of text at a
time in two threads; these tests make the pieces a few bytes long so that piece ends
fall on every kind of place (inside a cell, on a separator, between CR and LF, on the
last line without a line end) and compare with Python's csv module, and read whole
sheets through both paths.
"""

from __future__ import annotations

import csv
import io
import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.errors import Cancelled
from imputer_app.sheets import _byte_grid, _cells, _fast_text, _read, _text, read_sheet
from imputer_app.sheets._fast_text import split_plain_text
from imputer_app.sheets._grid import rows_to_grid
from imputer_app.sheets._word_numbers import words_of
from tests.sheets.both_paths import read_both_ways


@pytest.fixture
def always_fast(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)


def _csv_reader_grid(text: str, delimiter: str) -> np.ndarray:
    """The reference: Python's csv module."""
    return rows_to_grid(list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=False)))


POOL = [
    "7.21",
    "",
    " 3",
    "n.d.",
    "<0.05",
    "Größe",
    "-1.5e-3",
    "12345678",
    "123456789",
    "é" * 40,
    "x" * 70,
    "-0",
]


def _text_of(seed: int, width: int, line_end: str, final: bool) -> str:
    rng = np.random.default_rng(seed)
    rows = [[POOL[i] for i in rng.integers(0, len(POOL), width)] for _ in range(60)]
    return line_end.join(",".join(row) for row in rows) + (line_end if final else "")


@pytest.mark.parametrize("piece", [1, 7, 64, 1 << 20])
@pytest.mark.parametrize("line_end", ["\n", "\r\n"])
@pytest.mark.parametrize(("width", "final"), [(1, True), (3, False), (6, True)])
def test_pieces_split_like_csv_reader(
    always_fast: None, monkeypatch: pytest.MonkeyPatch, piece: int, line_end: str, width: int, final: bool
) -> None:
    # reference: Python's csv module
    monkeypatch.setattr(_byte_grid, "PIECE_BYTES", piece)
    for seed in range(3):
        text = _text_of(seed, width, line_end, final)
        split = split_plain_text(text, ",")
        assert split is not None
        expected = _csv_reader_grid(text, ",")
        while width == 1 and expected[-1, 0] == "":  # blank lines at the very end are no rows
            expected = expected[:-1]
        assert split.cells.tolist() == expected.tolist()
        for j, codes in enumerate(split.codes):
            if codes is None:  # a cell over 64 bytes
                assert any(len(cell.encode()) > 64 for cell in expected[:, j])
                continue
            texts = [bytes(codes[:, i]).rstrip(b"\x00").decode("utf-8") for i in range(codes.shape[1])]
            assert texts == expected[:, j].tolist()
            words = words_of(codes)
            if words is not None:  # the words are the cells' bytes, zero past each text
                as_bytes = words.view(np.uint8).reshape(-1, 8)
                assert [bytes(r).rstrip(b"\x00").decode() for r in as_bytes] == texts
                assert not (as_bytes[:, codes.shape[0] :]).any()


@pytest.mark.parametrize("piece", [1, 5, 1 << 20])
@pytest.mark.parametrize(
    ("text", "why"),
    [
        ("a,b\n1,2\n3,4\n5\n6,7\n", "a short row late in the text"),
        ("a,b\n1,2\n3,4\n5,6,7\n", "a long last row"),
        ("a,b\n1,2\n3,4\n\n6,7\n", "a blank line late in the text"),
        ("a,b\n1,2\n3,4\n5,6\n7", "a short last line without a line end"),
    ],
)
def test_pieces_hand_back_ragged_text(
    always_fast: None, monkeypatch: pytest.MonkeyPatch, piece: int, text: str, why: str
) -> None:
    monkeypatch.setattr(_byte_grid, "PIECE_BYTES", piece)
    assert split_plain_text(text, ",") is None, why


def _long_sheet_text(rows: int, turn: int) -> str:
    """A numeric column that turns to text at row ``turn``, markers, censored entries, signs."""
    rng = np.random.default_rng(9)
    values = rng.lognormal(1, 0.8, (rows, 3)).round(3)
    lines = ["sample,a,b,c"]
    odd = ["n.d.", "<0.02", "NA", "-", "", "1e-3", " 4.5", "+2", "-.5", "5.", "-0", "< LOD", ">100", "7 "]
    for i in range(rows):
        a = "high" if i >= turn and i % 3 == 0 else str(values[i, 0])
        b = odd[i % len(odd)] if i % 4 == 0 else str(values[i, 1])
        c = "" if i % 20 == 0 else f"{values[i, 2]:.6f}"
        lines.append(f"S{i:05d},{a},{b},{c}")
    return "\r\n".join(lines)  # no line end after the last line


@pytest.mark.parametrize("piece", [13, 4096])
def test_long_sheet_same_through_both_paths(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, piece: int
) -> None:
    # the whole reader, through the pieces and through csv.reader: the same sheet
    monkeypatch.setattr(_byte_grid, "PIECE_BYTES", piece)
    path = tmp_path / "long.csv"
    path.write_bytes(_long_sheet_text(3000, 2700).encode("utf-8"))
    fast, exact = read_both_ways(monkeypatch, path)
    pd.testing.assert_frame_equal(fast.frame, exact.frame)
    pd.testing.assert_frame_equal(fast.states, exact.states)
    pd.testing.assert_frame_equal(fast.cell_notes, exact.cell_notes)
    assert fast.columns == exact.columns and fast.problems == exact.problems
    assert fast.raw_text.tolist() == exact.raw_text.tolist()
    assert fast.columns[0].kind == "identifier" or fast.columns[0].kind == "category"
    assert (fast.states["b"] == "censored").sum() > 100


def test_long_sheet_same_with_any_number_of_threads(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, always_fast: None
) -> None:
    # pieces and columns are worked on by WORKERS threads; one thread or three read the same sheet
    monkeypatch.setattr(_byte_grid, "PIECE_BYTES", 512)
    path = tmp_path / "long.csv"
    path.write_bytes(_long_sheet_text(3000, 2700).encode("utf-8"))
    sheets = []
    for workers in (1, 3):
        monkeypatch.setattr(_byte_grid, "WORKERS", workers)
        monkeypatch.setattr(_read, "WORKERS", workers)
        sheets.append(read_sheet(path))
    one, three = sheets
    for part in ("frame", "states", "cell_notes"):
        pd.testing.assert_frame_equal(getattr(one, part), getattr(three, part))
    assert one.columns == three.columns and one.problems == three.problems
    assert one.raw_text.tolist() == three.raw_text.tolist()


@pytest.mark.parametrize(
    ("encoding", "prefix"), [("utf-8", b""), ("utf-8", b"\xef\xbb\xbf"), ("cp1252", b""), ("utf-16", b"")]
)
def test_file_bytes_cut_as_they_are_or_encoded_again(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, encoding: str, prefix: bytes
) -> None:
    # a UTF-8 file (with or without a byte-order mark) is cut from its own bytes, another
    # encoding from its text encoded as UTF-8: the same sheet as csv.reader either way
    lines = ["Größe;Wert;Einheit"] + [
        f"{i},5;{i % 7},25;µg" if i % 9 else f"n.d.;<0,5;é{i}" for i in range(400)
    ]
    path = tmp_path / "enc.csv"
    path.write_bytes(prefix + "\n".join(lines).encode(encoding))
    monkeypatch.setattr(_byte_grid, "PIECE_BYTES", 100)
    given: list[bool] = []
    split = _text.split_plain_text
    monkeypatch.setattr(_text, "split_plain_text", lambda *a: given.append(a[2] is not None) or split(*a))
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    fast = read_sheet(path)
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 1 << 62)
    exact = read_sheet(path)
    assert given[0] == (encoding == "utf-8")
    assert type(fast.raw_text.dtype) is np.dtypes.StringDType
    pd.testing.assert_frame_equal(fast.frame, exact.frame)
    pd.testing.assert_frame_equal(fast.states, exact.states)
    assert fast.raw_text.tolist() == exact.raw_text.tolist()
    assert fast.columns == exact.columns and fast.source == exact.source
    assert list(fast.frame.columns) == ["Größe", "Wert", "Einheit"]


def test_cancel_while_columns_are_classified_in_threads(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # a cancel set while the columns of a long csv are classified side by side stops the
    # read with Cancelled; the columns not yet begun are dropped
    width = 12
    path = tmp_path / "wide.csv"
    rows = [",".join(f"{i * width + j}.5" for j in range(width)) for i in range(500)]
    path.write_text("\n".join([",".join(f"c{j}" for j in range(width)), *rows]), encoding="utf-8")
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    flag = threading.Event()
    started: list[int] = []
    parse = _cells.parse_column

    def slow_parse(*args: object) -> object:
        started.append(1)
        if len(started) > 1:  # the later columns wait for the cancel
            flag.wait(5)
        return parse(*args)  # type: ignore[arg-type]

    monkeypatch.setattr(_read, "parse_column", slow_parse)
    seen: list[int] = []

    def progress(done: int, total: int) -> None:
        seen.append(done)
        if done > _read._GRID_DONE:  # the first column is classified: cancel
            flag.set()

    with pytest.raises(Cancelled):
        read_sheet(path, progress=progress, cancel=flag)
    assert seen == sorted(seen) and seen[-1] < _read._COLUMNS_DONE
    assert len(started) < width // 2
