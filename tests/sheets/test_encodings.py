"""Encoding and separator detection: the hand rules against well-kept libraries.

The corpus (``messy_corpus.py``) is scored with Kinfill's rules, with the rules as they
were before UTF-32 and mixed-encoding handling, with charset-normalizer (encodings) and
with clevercsv (dialect; van den Burg, Nazabal & Sutton 2019, Data Mining and Knowledge
Discovery 33:1799-1820, quoted from memory). Kinfill keeps the rules that are right more
often, and those must be right on every file. Scores at the time of writing:

- encodings, 16 files: Kinfill's rules 16, the old rules 13 (UTF-32 read as UTF-16 twice,
  the mixed file decoded as Windows-1252), charset-normalizer 14 (the short euro-sign file
  taken for another code page; the mixed file decoded without a word);
- separators, the 15 files that have one text: Kinfill's rules 15, clevercsv 15 (a tie:
  the rules stay, as they need no dependency).

The libraries are needed only here (the ``test`` extra); without them those scores skip.
"""

from __future__ import annotations

import codecs
from collections.abc import Callable
from pathlib import Path

import pytest

from imputer_app.errors import SheetError
from imputer_app.sheets import read_sheet
from imputer_app.sheets._text import decode, detect_delimiter
from tests.sheets.messy_corpus import CORPUS, Messy

_PATH = Path("messy.csv")


def _rules(data: bytes) -> str | None:
    try:
        return decode(data, _PATH)[0]
    except SheetError:
        return None


def _old_rules(data: bytes) -> str | None:
    """The rules before: UTF-8 mark, UTF-16 mark, else UTF-8, Windows-1252, Latin-1."""
    if data.startswith(codecs.BOM_UTF8):
        return data.decode("utf-8-sig")
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return data.decode("utf-16", errors="replace")
    for name in ("utf-8", "cp1252"):
        try:
            return data.decode(name)
        except UnicodeDecodeError:
            continue
    return data.decode("latin-1")


def _charset_normalizer(data: bytes) -> str | None:
    charset_normalizer = pytest.importorskip("charset_normalizer")
    best = charset_normalizer.from_bytes(data).best()
    return None if best is None else str(best).removeprefix("\ufeff")


def _clevercsv(text: str) -> str | None:
    clevercsv = pytest.importorskip("clevercsv")
    dialect = clevercsv.Detector().detect(text)
    return None if dialect is None else dialect.delimiter


def _encoding_score(decoder: Callable[[bytes], str | None]) -> int:
    return sum(decoder(case.data) == case.text for case in CORPUS)


def _separator_score(detector: Callable[[str], str | None]) -> int:
    return sum(detector(case.text) == case.delimiter for case in CORPUS if case.text is not None)


#: Library scores measured on this corpus (charset-normalizer 3.5, clevercsv 0.8).
LIBRARY_SCORES = {"charset-normalizer": 14, "clevercsv": 15}


def test_kept_encoding_rules_are_right_on_every_file() -> None:
    assert _encoding_score(_rules) == len(CORPUS)
    assert _encoding_score(_old_rules) == len(CORPUS) - 3  # UTF-32 x2 and the mixed file


def test_kept_separator_rules_are_right_on_every_file() -> None:
    assert _separator_score(lambda text: detect_delimiter(text, "csv")) == len(CORPUS) - 1


def test_charset_normalizer_is_right_less_often() -> None:
    score = _encoding_score(_charset_normalizer)
    assert score == LIBRARY_SCORES["charset-normalizer"]
    assert score < _encoding_score(_rules)


def test_clevercsv_is_not_right_more_often() -> None:
    score = _separator_score(_clevercsv)
    assert score == LIBRARY_SCORES["clevercsv"]
    assert score <= _separator_score(lambda text: detect_delimiter(text, "csv"))


@pytest.mark.parametrize("case", [c for c in CORPUS if c.text is not None], ids=lambda c: c.name)
def test_corpus_reads_with_its_text_and_separator(tmp_path: Path, case: Messy) -> None:
    path = tmp_path / "messy.csv"
    path.write_bytes(case.data)
    sheet = read_sheet(path)
    assert sheet.source.delimiter == case.delimiter
    header = case.text.splitlines()[0] if case.text else ""
    assert [c.original_name for c in sheet.columns] == [n.strip('"') for n in header.split(case.delimiter)]


def test_utf32_is_not_read_as_utf16(tmp_path: Path) -> None:
    path = tmp_path / "wide.csv"
    path.write_bytes(codecs.BOM_UTF32_LE + "a,b\nGröße,1\nx,2\ny,3\n".encode("utf-32-le"))
    sheet = read_sheet(path)
    assert sheet.source.encoding == "utf-32"
    assert sheet.frame["a"].tolist() == ["Größe", "x", "y"]
    assert "\x00" not in "".join(sheet.frame["a"])


def test_mixed_encodings_refused_with_one_line(tmp_path: Path) -> None:
    path = tmp_path / "mixed.csv"
    path.write_bytes(next(c.data for c in CORPUS if c.text is None))
    with pytest.raises(SheetError) as caught:
        read_sheet(path)
    message = str(caught.value)
    assert "\n" not in message and "mixes two text encodings" in message
    assert "UTF-8 text on line 1" in message and "another encoding on line 3" in message
    # the user can still choose one encoding for the whole file
    sheet = read_sheet(path, encoding="cp1252")
    assert sheet.source.encoding == "cp1252"


@pytest.mark.parametrize(
    ("text", "line", "after"),
    [('a,b\n1,"x\n2,3\n4,5\n6,7\n', 2, 3), ('a;b\n1;2\n3;"open; here\n5;6\n7;8\n', 3, 2)],
)
def test_unclosed_quote_refused(tmp_path: Path, text: str, line: int, after: int) -> None:
    path = tmp_path / "quote.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(
        SheetError, match=rf"quote .* on line {line} that is never closed, so the {after} line"
    ):
        read_sheet(path)


def test_quoted_cell_over_two_lines_is_fine(tmp_path: Path) -> None:
    path = tmp_path / "note.csv"
    path.write_text('site,note,pH\nA,"two\nlines",7.1\nB,one,6.9\nC,,7.0\n', encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.frame["note"].iloc[0] == "two\nlines" or sheet.frame["note"].iloc[0] == "two lines"
    assert sheet.frame["pH"].tolist() == [7.1, 6.9, 7.0]


@pytest.mark.parametrize("encoding", ["utf-32-le", "UTF_16_LE", "utf16"])
def test_given_wide_encoding_is_not_taken_for_binary(tmp_path: Path, encoding: str) -> None:
    path = tmp_path / "wide.csv"
    path.write_bytes("a,b\nGröße,1\nx,2\ny,3\n".encode(codecs.lookup(encoding).name))
    sheet = read_sheet(path, encoding=encoding)
    assert sheet.frame["a"].tolist() == ["Größe", "x", "y"]
