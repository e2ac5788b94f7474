"""Fast paths for long delimited text: splitting into cells and reading plain numbers.

Python's ``csv`` module and ``pandas.to_numeric`` over object arrays cost about 17 s on
a 1,000,000 x 10 csv. Both paths here are *accelerators*: each takes only input on which
it is known to agree with the exact path, and hands everything else back to it.

- :func:`split_plain_text` splits long text without quotes whose rows all have the same
  number of fields with pandas' C parser. A quote, a short or long row, a blank line or
  a lone carriage return makes it return None, and the caller uses ``csv.reader``
  (whose quote rules and padding are the reference).
- :func:`plain_number_values` reads the texts made only of digits, one decimal mark,
  signs, an exponent and white space with Python's ``float`` (correctly rounded, as
  ``pandas.to_numeric``) and leaves every other text (names, codes, markers, censored
  entries) to the careful per-text pass of the caller.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd

#: Texts shorter than this are split by ``csv.reader``: the C parser's start-up is not worth it.
MIN_FAST_CHARS = 1 << 20

_SEPARATOR = "\x00"  # joins cell texts; a cell holding it is never plain
_COMMON = "0123456789+-eE \t\r\n\f\v" + _SEPARATOR
#: Bytes allowed in a plain number per decimal mark (the other mark is not: with decimal
#: "," a "." may group thousands, with "." a "," may).
_ALLOWED = {mark: np.zeros(256, dtype=bool) for mark in ".,"}
for _mark, _table in _ALLOWED.items():
    _table[np.frombuffer((_COMMON + _mark).encode("ascii"), np.uint8)] = True


def split_plain_text(text: str, delimiter: str) -> np.ndarray | None:
    """Split long quote-free text with rows of equal width into a 2-D object array of str.

    Parameters
    ----------
    text : str
        The decoded file (no byte-order mark).
    delimiter : str
        One separator character.

    Returns
    -------
    ndarray of object, shape (n_rows, n_fields), or None
        None when the text is short, holds a quote, or has rows of different widths,
        blank lines or lone carriage returns: the exact ``csv.reader`` path takes those.
    """
    if len(text) < MIN_FAST_CHARS or '"' in text or len(delimiter) != 1:
        return None
    body = text.rstrip("\r\n")
    if not body or "\n\n" in body or "\r\n\r\n" in body or body.count("\r") != body.count("\r\n"):
        return None
    width = body[: body.find("\n") if "\n" in body else len(body)].count(delimiter) + 1
    n_rows = body.count("\n") + 1
    if body.count(delimiter) != n_rows * (width - 1):
        return None  # some row is shorter or longer than the first
    try:
        frame = pd.read_csv(
            io.StringIO(body),
            sep=delimiter,
            header=None,
            dtype=object,
            na_filter=False,
            quoting=csv.QUOTE_NONE,
            skip_blank_lines=False,
            engine="c",
        )
    except (pd.errors.ParserError, ValueError):
        return None  # a long row (with a short one balancing the count)
    if frame.shape != (n_rows, width):
        return None
    return frame.to_numpy(dtype=object)


def plain_number_values(values: np.ndarray, decimal: str) -> np.ndarray:
    """Values of texts that are plain decimal numbers; NaN for every other text.

    Parameters
    ----------
    values : ndarray of object (str)
        Cell texts as read.
    decimal : {".", ","}
        The decimal mark. With ``,`` a text holding ``.`` is left alone (it may group
        thousands: ``1.234``).

    Returns
    -------
    ndarray of float
        Finite values of the texts made of number characters (digits, the decimal mark,
        signs, ``e``, white space) that ``pandas.to_numeric`` reads (after ``,`` -> ``.``
        for decimal ``,``); NaN elsewhere, including texts that overflow to infinity.
        Texts with other characters (``inf``, ``1_000``, ``1,234`` with decimal ``.``)
        are not finite numbers to ``pandas.to_numeric`` either.
    """
    out = np.full(values.shape[0], np.nan)
    if not values.size:
        return out
    plain = _plain_cells(values, decimal)
    if plain.any():
        chosen = values[plain]
        if decimal == ",":
            chosen = np.array(_SEPARATOR.join(chosen).replace(",", ".").split(_SEPARATOR), dtype=object)
        try:
            out[plain] = chosen.astype(float)
        except ValueError:  # "1e", "+-5", "5..": pandas judges these texts
            out[plain] = to_numeric_values(values[plain], decimal)
    # other texts (names, codes, markers, "<0.05") are left to the careful pass
    out[~np.isfinite(out)] = np.nan
    return out


def to_numeric_values(values: np.ndarray, decimal: str) -> np.ndarray:
    """The exact rule: ``pandas.to_numeric`` after ``,`` -> ``.`` for decimal ``,``.

    With decimal ``,`` a text holding ``.`` is NaN (it may group thousands: ``1.234``);
    so is every text that is not a finite number.
    """
    texts = pd.Series(values, dtype=object)
    grouped = None
    if decimal == ",":
        grouped = texts.str.contains(".", regex=False).to_numpy(dtype=bool)
        texts = texts.str.replace(",", ".", regex=False)
    found = pd.to_numeric(texts, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    plain = np.isfinite(found) if grouped is None else np.isfinite(found) & ~grouped
    return np.where(plain, found, np.nan)


def _plain_cells(values: np.ndarray, decimal: str) -> np.ndarray:
    """True for non-empty texts made only of the characters of a plain number (judged on bytes)."""
    joined = _SEPARATOR.join(values).encode("ascii", errors="replace")  # one byte per character
    codes = np.frombuffer(joined, np.uint8)
    good_byte = _ALLOWED[decimal][codes]
    separators = np.flatnonzero(codes == 0)  # each text's end, if no text holds one itself
    if separators.size == values.shape[0] - 1:
        ends = np.append(separators, codes.size)
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
