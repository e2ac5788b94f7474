"""Delimited text (csv, tsv, txt): encoding, separator and decimal mark, then a cell grid.

Detection rules (each can be overridden by the caller):

- encoding: a UTF-8 byte-order mark means UTF-8; a UTF-16 mark means UTF-16 (Excel's
  "Unicode text"); otherwise strict UTF-8, then Windows-1252, then Latin-1.
- separator: of tab, ``;``, ``,`` and ``|`` the one that splits the first lines into the
  same number (at least two) of fields most consistently; ties go to that order, because
  ``;`` files often hold decimal commas that also split consistently on ``,``.
- decimal mark: ``.`` with a ``,`` separator; otherwise the mark seen more often in
  numbers such as ``7,21`` or ``7.21`` (``1,234`` and ``1.234`` are ambiguous and not counted).
"""

from __future__ import annotations

import codecs
import csv
import io
from collections import Counter
from pathlib import Path

import numpy as np
import pandas as pd

from imputer_app.errors import SheetError
from imputer_app.sheets._grid import rows_to_grid
from imputer_app.work import CancelFlag, raise_if_cancelled

#: Candidate separators in order of preference when they fit equally well.
DELIMITERS = ("\t", ";", ",", "|")
DELIMITER_NAMES = {"tab": "\t", "\\t": "\t", "semicolon": ";", "comma": ",", "pipe": "|"}
_SAMPLE_CHARS = 1 << 16
_SAMPLE_LINES = 100
_UTF16_BOMS = (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)


def is_utf16(data: bytes) -> bool:
    """True when ``data`` starts with a UTF-16 byte-order mark."""
    return data.startswith(_UTF16_BOMS)


def decode(data: bytes, path: Path, encoding: str | None = None) -> tuple[str, str]:
    """Decode file bytes; return the text and the name of the encoding used."""
    if encoding is not None:
        return _decode_as(data, path, encoding), encoding
    if data.startswith(codecs.BOM_UTF8):
        return _decode_as(data, path, "utf-8-sig"), "utf-8-sig"
    if is_utf16(data):
        return _decode_as(data, path, "utf-16"), "utf-16"
    for name in ("utf-8", "cp1252"):
        try:
            return data.decode(name), name
        except UnicodeDecodeError:
            continue
    return data.decode("latin-1"), "latin-1"


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


def parse_grid(text: str, delimiter: str, path: Path, cancel: CancelFlag | None = None) -> np.ndarray:
    """Split text into a 2-D object array of strings (short rows padded with "")."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=False)
    rows: list[list[str]] = []
    try:
        for row in reader:
            rows.append(row)
            if len(rows) % 20_000 == 0:
                raise_if_cancelled(cancel)
    except csv.Error as error:
        raise SheetError(
            f"'{path.name}' cannot be split into cells near line {reader.line_num}: {error}"
        ) from None
    return rows_to_grid(rows)


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
