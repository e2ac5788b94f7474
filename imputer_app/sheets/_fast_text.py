"""Fast paths for long delimited text: splitting into cells and reading plain numbers.

Python's ``csv`` module, one Python ``str`` per cell and ``pandas.to_numeric`` over
object arrays cost 11-18 s on a 1,000,000 x 10 csv. Both paths here are
*accelerators*: each takes only input on which it is known to agree with the exact
path, and hands everything else back to it.

- :func:`split_plain_text` cuts long text without quotes whose rows all have the same
  number of fields straight from its UTF-8 bytes (the file's own bytes when it is
  UTF-8) into a numpy ``StringDType`` grid, keeping each column's bytes (one row per
  byte position; a view of eight-byte words when no cell is longer,
  :mod:`~imputer_app.sheets._byte_grid`) for the passes below. A quote, a short or
  long row, a blank line or a lone carriage return makes it return None, and the
  caller uses ``csv.reader`` (whose quote rules and padding are the reference).
- :func:`plain_number_values` reads the texts made only of digits, one decimal mark,
  signs, an exponent and white space: simple decimals from their bytes by exact
  integer arithmetic and one division (up to eight bytes a word at a time,
  :mod:`~imputer_app.sheets._word_numbers`; else up to 15 digits one position at a
  time), the others with Python's ``float`` (both correctly rounded, as
  ``pandas.to_numeric``); every other text (names, codes, markers, censored entries)
  is left to the careful per-text pass of the caller.
"""

from __future__ import annotations

import codecs
from dataclasses import dataclass

import numpy as np
import pandas as pd

from imputer_app.sheets._byte_grid import ByteColumn, cut_columns
from imputer_app.sheets._string_cells import STRING_DTYPE, as_objects, ascii_codes, is_string_array
from imputer_app.sheets._word_numbers import WORD_BYTES, simple_word_values, words_of

#: Texts shorter than this are split by ``csv.reader``: the vectorised start-up is not worth it.
MIN_FAST_CHARS = 1 << 20
#: Cells longer than this many bytes are cut one by one (a column of long notes would
#: otherwise make a wide block of bytes).
_LONG_CELL = 64

#: Digits a simple decimal may have: its digits make an integer below 2**53.
_SIMPLE_DIGITS = 15
_POWERS_OF_TEN = np.array([float(10**k) for k in range(_SIMPLE_DIGITS + 1)])  # exact doubles

_SEPARATOR = "\x00"  # joins cell texts; a cell holding it is never plain
_COMMON = "0123456789+-eE \t\r\n\f\v" + _SEPARATOR
#: Bytes allowed in a plain number per decimal mark (the other mark is not: with decimal
#: "," a "." may group thousands, with "." a "," may).
_ALLOWED = {mark: np.zeros(256, dtype=bool) for mark in ".,"}
for _mark, _table in _ALLOWED.items():
    _table[np.frombuffer((_COMMON + _mark).encode("ascii"), np.uint8)] = True


@dataclass(frozen=True)
class SplitText:
    """The cells of a long delimited text and, per column, their bytes.

    Attributes
    ----------
    cells : ndarray of StringDType, shape (n_rows, n_fields)
        Every cell's text exactly as in the file.
    codes : tuple of (ndarray of uint8, shape (width, n_rows)) or None
        Per column, each cell's UTF-8 bytes padded with 0, one row per byte position
        (the layout of :func:`~imputer_app.sheets._string_cells.ascii_codes`); None for
        a column holding a cell longer than :data:`_LONG_CELL` bytes.
    """

    cells: np.ndarray
    codes: tuple[np.ndarray | None, ...]


def split_plain_text(text: str, delimiter: str, utf8: bytes | None = None) -> SplitText | None:
    """Split long quote-free text with rows of equal width into a ``StringDType`` grid.

    The cells are cut straight from the UTF-8 bytes by the positions of separators and
    line ends (no Python ``str`` per cell); a CR before a LF belongs to the line end.

    Parameters
    ----------
    text : str
        The decoded file (no byte-order mark).
    delimiter : str
        One separator character.
    utf8 : bytes, optional
        The file's bytes when ``text`` was decoded from them as UTF-8 (a UTF-8
        byte-order mark before them is skipped): they are cut as they are, without
        encoding ``text`` again.

    Returns
    -------
    SplitText or None
        None when the text is short, holds a quote or a NUL, or has rows of different
        widths (a blank line is a row of one cell) or lone carriage returns: the exact
        ``csv.reader`` path takes those.
    """
    if len(text) < MIN_FAST_CHARS or '"' in text or len(delimiter) != 1 or not delimiter.isascii():
        return None
    if text[0] in "\r\n" or "\x00" in text or ("\r" in text and text.count("\r") != text.count("\r\n")):
        return None
    if utf8 is None:
        try:
            utf8 = text.encode("utf-8")
        except UnicodeEncodeError:  # a lone surrogate
            return None
    begin = len(codecs.BOM_UTF8) if utf8.startswith(codecs.BOM_UTF8) else 0
    end = len(utf8)
    while end > begin and utf8[end - 1] in b"\r\n":  # no line end after the last line
        end -= 1
    cut = cut_columns(utf8, begin, end, ord(delimiter), _LONG_CELL) if end > begin else None
    if cut is None:
        return None  # some row is shorter or longer than the first
    cells, columns = cut
    column_codes = tuple(_column_texts(utf8[begin:end] if c.long_cells else b"", c) for c in columns)
    return SplitText(cells, column_codes)


def _column_texts(data: bytes, column: ByteColumn) -> np.ndarray | None:
    """Finish the texts of one column; return its bytes one row per position.

    The bytes of a column of cells of up to eight bytes are a view of its words (see
    :func:`~imputer_app.sheets._word_numbers.words_of`); None when a cell is longer than
    :data:`_LONG_CELL` (such cells are cut one by one from ``data``).
    """
    rows = column.rows
    for i, start, length in column.long_cells:  # rare: cells over _LONG_CELL bytes
        column.texts[i] = data[start : start + length].decode("utf-8")
    if column.long_cells:
        return None
    if rows.shape[1] == WORD_BYTES:
        return rows[:, : max(column.longest, 1)].T
    return np.ascontiguousarray(rows.T)


def plain_number_values(values: np.ndarray, decimal: str, codes: np.ndarray | None = None) -> np.ndarray:
    """Values of texts that are plain decimal numbers; NaN for every other text.

    The numbers of :func:`plain_number_parts` (see there).
    """
    return plain_number_parts(values, decimal, codes)[0]


def plain_number_parts(
    values: np.ndarray, decimal: str, codes: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray | None]:
    """Values of texts that are plain decimal numbers (NaN for every other text) and known decimals.

    Parameters
    ----------
    values : ndarray of object (str) or of StringDType
        Cell texts as read.
    decimal : {".", ","}
        The decimal mark. With ``,`` a text holding ``.`` is left alone (it may group
        thousands: ``1.234``).
    codes : ndarray of uint8, shape (width, n), optional
        The texts' bytes padded with 0, one row per position
        (:func:`~imputer_app.sheets._string_cells.ascii_codes`, or UTF-8 bytes from
        :func:`split_plain_text`), when the caller has them. Simple decimals are then
        read from them without ``float``.

    Returns
    -------
    ndarray of float
        Finite values of the texts made of number characters (digits, the decimal mark,
        signs, ``e``, white space) that ``pandas.to_numeric`` reads (after ``,`` -> ``.``
        for decimal ``,``); NaN elsewhere, including texts that overflow to infinity.
        Texts with other characters (``inf``, ``1_000``, ``1,234`` with decimal ``.``)
        are not finite numbers to ``pandas.to_numeric`` either.
    ndarray of int8 or None
        When the texts were read a word at a time: the digits after the mark of each
        simple decimal (0 without a mark), -1 for every other text; else None.
    """
    out = np.full(values.shape[0], np.nan)
    places = None
    if not values.size:
        return out, places
    words = None if codes is None else words_of(codes)
    if codes is not None and words is not None:  # texts of up to eight bytes: a word at a time
        simple, out, places = simple_word_values(words, ord(decimal))
        rest = np.flatnonzero(~simple & (words != 0))  # the other texts that are not empty
        plain = rest[_plain_cells(values[rest], decimal, codes[:, rest])]
    else:
        plain = _plain_cells(values, decimal, codes)
        if codes is not None and plain.any():
            simple, found = _simple_values(codes, ord(decimal))
            simple &= plain
            np.copyto(out, found, where=simple)
            plain &= ~simple  # the rest (exponents, spaces, long digits) as below
        plain = np.flatnonzero(plain)
    if plain.size:
        chosen = values[plain]
        if decimal == ",":
            chosen = _comma_to_point(chosen)
        try:
            # float() of each text, also for a StringDType array (numpy casts with it)
            found = chosen.astype(float)
        except ValueError:  # "1e", "+-5", "5..": pandas judges these texts
            found = to_numeric_values(values[plain], decimal)
        # overflow ("1e400") is no finite number
        out[plain] = np.where(np.isfinite(found), found, np.nan)
    # other texts (names, codes, markers, "<0.05") are left to the careful pass
    return out, places


def _simple_values(codes: np.ndarray, mark: int) -> tuple[np.ndarray, np.ndarray]:
    """Which texts are simple decimals, and their values, read from their byte codes.

    A simple decimal is a sign or none, then digits with at most one decimal mark, at
    least one and at most 15 digits, nothing else (no exponent, no space). Its digits
    make an integer below 2**53 and its decimals a power of ten up to 1e15, both exact
    doubles, so one division gives the correctly rounded value, the same as Python's
    ``float`` (Clinger 1990, "How to read floating point numbers accurately": the fast
    path). One pass per character position, each over every text.
    """
    first = codes[0]
    negative = first == ord("-")
    simple = negative | (first == ord("+")) | ((first - ord("0")) < 10) | (first == mark)
    mantissa = np.zeros(codes.shape[1], dtype=np.int64)
    digits = np.zeros(codes.shape[1], dtype=np.int64)
    places = np.zeros(codes.shape[1], dtype=np.int64)
    seen = np.zeros(codes.shape[1], dtype=bool)
    for at, position in enumerate(codes):
        digit = position - ord("0")  # unsigned codes: below "0" wraps round
        is_digit = digit < 10
        at_mark = position == mark
        if at:  # after the first character: digits, one mark, then only padding
            simple &= is_digit | at_mark | (position == 0)
        simple &= ~(at_mark & seen)
        np.multiply(mantissa, 10, out=mantissa, where=is_digit)  # 15 digits fit; longer are refused
        np.add(mantissa, digit, out=mantissa, where=is_digit)
        digits += is_digit
        places += is_digit & seen
        seen |= at_mark
    simple &= (digits > 0) & (digits <= _SIMPLE_DIGITS)
    values = mantissa / _POWERS_OF_TEN[np.minimum(places, _SIMPLE_DIGITS)]
    return simple, np.where(negative, -values, values)


def to_numeric_values(values: np.ndarray, decimal: str) -> np.ndarray:
    """The exact rule: ``pandas.to_numeric`` after ``,`` -> ``.`` for decimal ``,``.

    With decimal ``,`` a text holding ``.`` is NaN (it may group thousands: ``1.234``);
    so is every text that is not a finite number.
    """
    texts = pd.Series(as_objects(values), dtype=object)
    grouped = None
    if decimal == ",":
        grouped = texts.str.contains(".", regex=False).to_numpy(dtype=bool)
        texts = texts.str.replace(",", ".", regex=False)
    found = pd.to_numeric(texts, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    plain = np.isfinite(found) if grouped is None else np.isfinite(found) & ~grouped
    return np.where(plain, found, np.nan)


def _comma_to_point(values: np.ndarray) -> np.ndarray:
    if is_string_array(values):
        return np.strings.replace(values, ",", ".")
    pieces = _SEPARATOR.join(values).replace(",", ".").split(_SEPARATOR)
    if len(pieces) != values.shape[0]:  # some text holds the separator itself
        return np.strings.replace(values.astype(STRING_DTYPE), ",", ".").astype(object)
    return np.array(pieces, dtype=object)


def _plain_cells(values: np.ndarray, decimal: str, codes: np.ndarray | None = None) -> np.ndarray:
    """True for non-empty texts made only of the characters of a plain number (judged on bytes)."""
    if is_string_array(values):
        return _plain_strings(values, decimal, codes)
    joined = _SEPARATOR.join(values).encode("ascii", errors="replace")  # one byte per character
    text_bytes = np.frombuffer(joined, np.uint8)
    good_byte = _ALLOWED[decimal][text_bytes]
    separators = np.flatnonzero(text_bytes == 0)  # each text's end, if no text holds one itself
    if separators.size == values.shape[0] - 1:
        ends = np.append(separators, text_bytes.size)
        starts = np.concatenate([[0], ends[:-1] + 1])
        if good_byte.all():
            return ends > starts
        bad = np.concatenate([[0], np.cumsum(~good_byte)])
        return (bad[ends] == bad[starts]) & (ends > starts)
    lengths = pd.Series(values, dtype=object).str.len().to_numpy(dtype=np.int64)
    cell_ends = np.cumsum(lengths + 1) - 1  # position of each cell's separator
    plain = np.ones(values.shape[0], dtype=bool)
    plain[np.searchsorted(cell_ends, np.flatnonzero(~good_byte), side="left")] = False
    return plain & (lengths > 0)


def _plain_strings(values: np.ndarray, decimal: str, codes: np.ndarray | None) -> np.ndarray:
    """:func:`_plain_cells` for a ``StringDType`` array: a table look-up on its bytes."""
    if codes is None:
        codes = ascii_codes(values)
    if codes is None:  # some text is not ASCII: strip the allowed characters instead
        return (np.strings.lstrip(values, _COMMON + decimal) == "") & (values != "")
    allowed = _ALLOWED[decimal]
    plain = values != ""
    for position in codes:  # padding 0 is the allowed separator
        plain &= allowed[position]
    return plain
