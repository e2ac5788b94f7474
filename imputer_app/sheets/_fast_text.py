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

import numpy as np
import pandas as pd
from numpy.lib.stride_tricks import sliding_window_view

from imputer_app.sheets._string_cells import STRING_DTYPE, ascii_codes, as_objects, is_string_array

#: Texts shorter than this are split by ``csv.reader``: the vectorised start-up is not worth it.
MIN_FAST_CHARS = 1 << 20
#: Cells longer than this many bytes are cut one by one (a column of long notes would
#: otherwise make a wide block of bytes).
_LONG_CELL = 64

_SEPARATOR = "\x00"  # joins cell texts; a cell holding it is never plain
_COMMON = "0123456789+-eE \t\r\n\f\v" + _SEPARATOR
#: Bytes allowed in a plain number per decimal mark (the other mark is not: with decimal
#: "," a "." may group thousands, with "." a "," may).
_ALLOWED = {mark: np.zeros(256, dtype=bool) for mark in ".,"}
for _mark, _table in _ALLOWED.items():
    _table[np.frombuffer((_COMMON + _mark).encode("ascii"), np.uint8)] = True


def split_plain_text(text: str, delimiter: str) -> np.ndarray | None:
    """Split long quote-free text with rows of equal width into a 2-D ``StringDType`` array.

    The cells are cut straight from the UTF-8 bytes by the positions of separators and
    line ends (no Python ``str`` per cell); a CR before a LF belongs to the line end.

    Parameters
    ----------
    text : str
        The decoded file (no byte-order mark).
    delimiter : str
        One separator character.

    Returns
    -------
    ndarray of StringDType, shape (n_rows, n_fields), or None
        None when the text is short, holds a quote or a NUL, or has rows of different
        widths, blank lines or lone carriage returns: the exact ``csv.reader`` path
        takes those.
    """
    if len(text) < MIN_FAST_CHARS or '"' in text or len(delimiter) != 1 or not delimiter.isascii():
        return None
    body = text.rstrip("\r\n")
    if (
        not body
        or body[0] in "\r\n"
        or "\x00" in body
        or "\n\n" in body
        or "\r\n\r\n" in body
        or body.count("\r") != body.count("\r\n")
    ):
        return None
    try:
        data = body.encode("utf-8")
    except UnicodeEncodeError:  # a lone surrogate
        return None
    codes = np.frombuffer(data, dtype=np.uint8)
    newline = codes == ord("\n")
    bounds = np.flatnonzero(newline | (codes == ord(delimiter)))
    row_ends = np.flatnonzero(newline[bounds])  # the boundaries that end a row
    n_cells = bounds.size + 1
    width = int(row_ends[0]) + 1 if row_ends.size else n_cells
    if n_cells % width or not np.array_equal(row_ends, np.arange(width - 1, n_cells - 1, width)):
        return None  # some row is shorter or longer than the first
    starts = np.concatenate(([0], bounds + 1))
    ends = np.concatenate((bounds, [codes.size]))
    ends[row_ends[codes[bounds[row_ends] - 1] == ord("\r")]] -= 1
    lengths = (ends - starts).reshape(-1, width).T
    starts = starts.reshape(-1, width).T
    # column after column in one block, so that each column is contiguous in memory
    cells = np.empty(lengths.size, dtype=STRING_DTYPE)
    padded = np.concatenate((codes, np.zeros(_LONG_CELL, dtype=np.uint8)))
    n_rows = lengths.shape[1]
    for j in range(width):
        _cut_cells(cells[j * n_rows : (j + 1) * n_rows], data, padded, starts[j], lengths[j])
    return cells.reshape(width, n_rows).T


def _cut_cells(out: np.ndarray, data: bytes, padded: np.ndarray, starts: np.ndarray, lengths: np.ndarray) -> None:
    """Write the texts of one column, cut from the file's bytes, into ``out``.

    ``padded`` is the file's bytes followed by :data:`_LONG_CELL` zeros, so that every
    window of that width exists.
    """
    width = min(int(lengths.max(initial=0)), _LONG_CELL)
    if width == 0:
        out[:] = ""
    else:
        rows = sliding_window_view(padded, width)[starts]  # one row of bytes per cell
        rows[np.arange(width) >= lengths[:, None]] = 0
        rows[lengths > width] = 0  # cut below; a cut could split a character
        np.copyto(out, rows.view(f"S{width}").ravel(), casting="unsafe")  # UTF-8 bytes to str
    for i in np.flatnonzero(lengths > width).tolist():  # rare: cells over _LONG_CELL bytes
        out[i] = data[starts[i] : starts[i] + lengths[i]].decode("utf-8")


def plain_number_values(values: np.ndarray, decimal: str) -> np.ndarray:
    """Values of texts that are plain decimal numbers; NaN for every other text.

    Parameters
    ----------
    values : ndarray of object (str) or of StringDType
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
            chosen = _comma_to_point(chosen)
        try:
            # float() of each text, also for a StringDType array (numpy casts with it)
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
    return np.array(_SEPARATOR.join(values).replace(",", ".").split(_SEPARATOR), dtype=object)


def _plain_cells(values: np.ndarray, decimal: str) -> np.ndarray:
    """True for texts made only of the characters of a plain number (judged on bytes)."""
    if is_string_array(values):
        return _plain_strings(values, decimal)
    joined = _SEPARATOR.join(values).encode("ascii", errors="replace")
    good_byte = _ALLOWED[decimal][np.frombuffer(joined, np.uint8)]
    if good_byte.all():
        plain = np.ones(values.shape[0], dtype=bool)
    else:
        lengths = pd.Series(values, dtype=object).str.len().to_numpy(dtype=np.int64)
        ends = np.cumsum(lengths + 1) - 1  # position of each cell's separator
        bad = np.flatnonzero(~good_byte)
        plain = np.ones(values.shape[0], dtype=bool)
        plain[np.searchsorted(ends, bad, side="left")] = False
    if (values == "").any():
        plain &= values != ""
    return plain


def _plain_strings(values: np.ndarray, decimal: str) -> np.ndarray:
    """:func:`_plain_cells` for a ``StringDType`` array: a table look-up on its bytes."""
    codes = ascii_codes(values)
    if codes is None:  # some text is not ASCII: strip the allowed characters instead
        plain = np.strings.lstrip(values, _COMMON + decimal) == ""
    else:
        plain = _ALLOWED[decimal][codes].all(axis=1)  # padding 0 is the allowed separator
    return plain & (values != "")
