"""Delimited text (csv, tsv, txt): encoding, separator and decimal mark, then a cell grid.

Detection rules (each can be overridden by the caller):

- encoding: a UTF-8 byte-order mark means UTF-8; a UTF-32 mark means UTF-32; a UTF-16
  mark means UTF-16 (Excel's "Unicode text"); otherwise strict UTF-8, then Windows-1252,
  then Latin-1. A file that is not UTF-8 as a whole but holds UTF-8 sequences such as
  ``Ã¶`` (an "ö" saved as UTF-8) mixes two encodings and is refused: decoding it either
  way would garble part of its text. These hand rules were compared with
  charset-normalizer on a corpus of messy files (tests/sheets/test_encodings.py) and were
  right more often, mostly because short lab sheets give a statistical detector too
  little text to tell Windows-1252 from its neighbours.
- separator: of tab, ``;``, ``,`` and ``|`` the one that splits the first lines into the
  same number (at least two) of fields most consistently; ties go to that order, because
  ``;`` files often hold decimal commas that also split consistently on ``,``. (Compared
  with clevercsv's dialect detection on the same corpus; see that test.)
- quotes: a quoted field that runs over several lines each holding the separator is an
  unclosed quote that swallowed the rows after it, and is refused.
- decimal mark: ``.`` with a ``,`` separator; otherwise the mark seen more often in
  numbers such as ``7,21`` or ``7.21`` (``1,234`` and ``1.234`` are ambiguous and not counted).
"""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections import Counter
from pathlib import Path

import numpy as np
import pandas as pd

from imputer_app.errors import SheetError
from imputer_app.sheets._fast_text import split_plain_text
from imputer_app.sheets._grid import rows_to_grid
from imputer_app.work import CancelFlag, raise_if_cancelled

#: Candidate separators in order of preference when they fit equally well.
DELIMITERS = ("\t", ";", ",", "|")
DELIMITER_NAMES = {"tab": "\t", "\\t": "\t", "semicolon": ";", "comma": ",", "pipe": "|"}
_SAMPLE_CHARS = 1 << 16
_SAMPLE_LINES = 100
_UTF16_BOMS = (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)
_UTF32_BOMS = (codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE)
#: A multi-byte UTF-8 sequence (lead byte, then continuation bytes; RFC 3629).
_UTF8_SEQUENCE = re.compile(rb"[\xc2-\xdf][\x80-\xbf]|[\xe0-\xef][\x80-\xbf]{2}|[\xf0-\xf4][\x80-\xbf]{3}")


def is_utf16(data: bytes) -> bool:
    """True when ``data`` starts with a UTF-16 or UTF-32 byte-order mark (text with NUL bytes)."""
    return data.startswith(_UTF16_BOMS) or data.startswith(_UTF32_BOMS)


def is_wide_codec(encoding: str | None) -> bool:
    """True for a codec name whose text holds NUL bytes (UTF-16, UTF-32)."""
    try:
        name = codecs.lookup(encoding or "").name
    except LookupError:
        return False
    return name.startswith(("utf-16", "utf-32"))


def decode(data: bytes, path: Path, encoding: str | None = None) -> tuple[str, str]:
    """Decode file bytes; return the text and the name of the encoding used.

    Raises
    ------
    SheetError
        The given encoding does not fit, or the file mixes UTF-8 with another encoding.
    """
    if encoding is not None:
        return _decode_as(data, path, encoding), encoding
    if data.startswith(codecs.BOM_UTF8):
        return _decode_as(data, path, "utf-8-sig"), "utf-8-sig"
    if data.startswith(_UTF32_BOMS):  # before UTF-16: FF FE 00 00 also starts with FF FE
        return _decode_as(data, path, "utf-32"), "utf-32"
    if is_utf16(data):
        return _decode_as(data, path, "utf-16"), "utf-16"
    try:
        return data.decode("utf-8"), "utf-8"
    except UnicodeDecodeError as error:
        _refuse_mixed(data, path, error.start)
    try:
        return data.decode("cp1252"), "cp1252"
    except UnicodeDecodeError:
        return data.decode("latin-1"), "latin-1"


def _refuse_mixed(data: bytes, path: Path, bad: int) -> None:
    """Refuse a file that holds valid UTF-8 sequences yet is not UTF-8 as a whole."""
    found = _UTF8_SEQUENCE.search(data)
    if found is None:
        return
    line = data.count(b"\n", 0, bad) + 1
    good_line = data.count(b"\n", 0, found.start()) + 1
    raise SheetError(
        f"'{path.name}' mixes two text encodings (UTF-8 text on line {good_line}, another encoding "
        f"on line {line}); save it again with one encoding, or choose one (for example cp1252)"
    )


def _decode_as(data: bytes, path: Path, encoding: str) -> str:
    try:
        codec = codecs.lookup(encoding).name
    except LookupError:
        raise SheetError(f"unknown text encoding '{encoding}' for '{path.name}'") from None
    if codec == "utf-8":
        codec = "utf-8-sig"  # drop a byte-order mark if there is one
    try:
        return data.decode(codec)
    except UnicodeDecodeError as error:
        raise SheetError(
            f"'{path.name}' cannot be decoded as {encoding} (byte {error.start}); "
            "choose another encoding or leave it to detection"
        ) from None


def is_utf8(encoding: str) -> bool:
    """True for the name of the UTF-8 codec, with or without its byte-order mark."""
    return codecs.lookup(encoding).name in ("utf-8", "utf-8-sig")


def line_end(text: str) -> str:
    """The line ending the text uses: CR LF, LF or CR (judged on its start)."""
    sample = text[:_SAMPLE_CHARS]
    if "\r\n" in sample:
        return "\r\n"
    return "\r" if "\r" in sample and "\n" not in sample else "\n"


def normalise_delimiter(delimiter: str, path: Path) -> str:
    r"""Turn a user's separator ("tab", "\\t", ";" ...) into one character."""
    value = DELIMITER_NAMES.get(delimiter.lower(), delimiter)
    if len(value) != 1 or value in '\r\n"':
        raise SheetError(
            f"separator {delimiter!r} for '{path.name}' must be one character such as , ; or tab"
        )
    return value


def detect_delimiter(text: str, fmt: str) -> str:
    """Pick the separator that splits the first lines most consistently (see module doc)."""
    sample = text[:_SAMPLE_CHARS]
    if len(text) > _SAMPLE_CHARS and "\n" in sample:
        sample = sample[: sample.rindex("\n")]
    lines = [line for line in sample.splitlines()[:_SAMPLE_LINES] if line.strip()]
    best: tuple[float, int, str] | None = None
    for rank, candidate in enumerate(DELIMITERS):
        widths = [len(row) for row in csv.reader(lines, delimiter=candidate, strict=False)]
        if not widths:
            continue
        counts = Counter(widths)
        modal = max(counts, key=lambda width: (counts[width], width))
        if modal < 2:
            continue
        consistency = round(counts[modal] / len(widths), 2)
        # tab first for .tsv files; otherwise the module's order of preference
        preference = -rank if not (fmt == "tsv" and candidate == "\t") else 1
        key = (consistency, preference, candidate)
        if best is None or key[:2] > best[:2]:
            best = key
    if best is None:
        return "\t" if fmt == "tsv" else ","
    return best[2]


def parse_grid(
    text: str, delimiter: str, path: Path, cancel: CancelFlag | None = None, utf8: bytes | None = None
) -> tuple[np.ndarray, tuple[np.ndarray | None, ...] | None]:
    """Split text into a 2-D array of strings (short rows padded with "").

    Long quote-free text with rows of equal width is cut from its bytes into a numpy
    ``StringDType`` array, with each column's bytes beside it
    (:func:`~imputer_app.sheets._fast_text.split_plain_text`); everything else goes
    through ``csv.reader`` into an object array, with None for the bytes. ``utf8`` is
    the file's bytes when ``text`` was decoded from them as UTF-8 (the splitter cuts them
    as they are).
    """
    fast = split_plain_text(text, delimiter, utf8)
    if fast is not None:
        return fast.cells, fast.codes
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=False)
    rows: list[list[str]] = []
    starts: list[int] = []  # first line of each row, kept only when quotes can span lines
    quoted, previous = '"' in text, 0
    try:
        for row in reader:
            if quoted:
                starts.append(previous + 1)
                previous = reader.line_num
            rows.append(row)
            if len(rows) % 20_000 == 0:
                raise_if_cancelled(cancel)
    except csv.Error as error:
        raise SheetError(
            f"'{path.name}' cannot be split into cells near line {reader.line_num}: {error}"
        ) from None
    grid = rows_to_grid(rows)
    if quoted:
        _refuse_unclosed_quote(grid, delimiter, starts, path)
    return grid, None


#: Lines holding the separator inside one quoted cell that mean its quote was never closed.
SWALLOWED_LINES = 2


def _refuse_unclosed_quote(grid: np.ndarray, delimiter: str, starts: list[int], path: Path) -> None:
    """Refuse a cell that swallowed rows: several of its lines hold the separator."""
    cells = pd.Series(grid.ravel(), dtype=object)
    multi = np.flatnonzero(cells.str.contains("\n", regex=False).to_numpy(dtype=bool, na_value=False))
    for position in multi.tolist():
        lines = str(cells.iloc[position]).split("\n")
        if sum(delimiter in line for line in lines) >= SWALLOWED_LINES:
            row = position // grid.shape[1]
            raise SheetError(
                f"'{path.name}' has a quote (\") on line {starts[row]} that is never closed, so the "
                f"{sum(1 for line in lines[1:] if line.strip())} line(s) after it would become one cell; "
                "fix or remove that quote"
            )


_COMMA_DECIMAL = r"[<>≤≥]?\s*[+-]?\d*,\d+"
_POINT_DECIMAL = r"[<>≤≥]?\s*[+-]?\d*\.\d+"
_COMMA_THOUSANDS = r"[<>≤≥]?\s*[+-]?\d{1,3}(?:,\d{3})+"
_POINT_THOUSANDS = r"[<>≤≥]?\s*[+-]?\d{1,3}(?:\.\d{3})+"


def detect_decimal(cells: np.ndarray, delimiter: str | None) -> str:
    """Return "," or "." from the numbers written as text in ``cells`` (any shape)."""
    if delimiter == ",":
        return "."
    flat = cells.ravel()
    texts = pd.Series([value for value in flat if isinstance(value, str) and value], dtype=object)
    if texts.empty:
        return "."
    texts = texts.str.strip()
    commas = texts.str.fullmatch(_COMMA_DECIMAL) & ~texts.str.fullmatch(_COMMA_THOUSANDS)
    points = texts.str.fullmatch(_POINT_DECIMAL) & ~texts.str.fullmatch(_POINT_THOUSANDS)
    return "," if int(commas.sum()) > int(points.sum()) else "."
