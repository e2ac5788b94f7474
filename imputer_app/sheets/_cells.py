"""Classify the cells of one column: blank, missing marker, number, censored, text, date.

Work is vectorised per column: numbers that a workbook stores as numbers are taken as
they are; text cells first go through one vectorised pass that reads plain numbers,
and only the rest (blanks, markers, censored entries, grouped thousands, text)
goes through pandas string operations, once per distinct text. Python types are told
apart with one ``type`` call per cell only in columns that mix them.

Missing markers
---------------
:data:`~imputer_app.sheets._markers.DEFAULT_MARKERS` are missing markers and
:data:`~imputer_app.sheets._markers.DEFAULT_BELOW_MARKERS` mean
"below the limit of detection" (compared trimmed and case-insensitively). A
``markers`` argument *extends* the missing set; ``meanings`` gives any marker text
either meaning ("missing" or "below-limit"), overriding the defaults. A below-limit
marker is a censored cell ("<" side, its limit unknown until a limit row, a limit
column or the plan gives it).
A marker that reads as a number (``-999``, ``"-999"``, ``9999.0``) matches cells whose
numeric value equals it, whether stored as a number or as text, so ``-999`` is a marker
only when the user passes it.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from imputer_app.sheets._cell_classes import (
    BLANK,
    BOOL,
    DATE,
    FORMULA_ERROR,
    MARKER,
    NO_VALUE,
    NUMBER,
    TEXT,
)
from imputer_app.sheets._fast_text import plain_number_parts, plain_number_values
from imputer_app.sheets._grid import NO_VALUE as NO_VALUE_CELL
from imputer_app.sheets._grid import FormulaError
from imputer_app.sheets._markers import Markers
from imputer_app.sheets._string_cells import as_objects, ascii_codes, is_string_array
from imputer_app.sheets._text_classes import KnownTexts, classify_texts, strip_texts
from imputer_app.sheets._word_numbers import words_of


@dataclass
class ParsedColumn:
    """Every cell of one column, classified.

    Attributes
    ----------
    raw : ndarray of object or of StringDType, shape (n,)
        The cells as read ("" for empty); a ``StringDType`` array for a long delimited
        file split by :func:`~imputer_app.sheets._fast_text.split_plain_text`.
    cls : ndarray of int8, shape (n,)
        One of BLANK, MARKER, NUMBER, CENSORED, TEXT, DATE, BOOL per cell.
    number : ndarray of float, shape (n,)
        The value of NUMBER cells, NaN elsewhere.
    text : ndarray of object, shape (n,)
        Trimmed text of cells that were text in the file, "" elsewhere.
    side, limit, token : ndarray, shape (n,)
        For CENSORED cells: "<" or ">", the numeric limit (NaN when a word such as
        "LOD" was given) and that word's family ("LOD", "LOQ", "RL", "ULOQ" or "").
    codes : ndarray of uint8, shape (width, n), or None
        For a ``StringDType`` column: each cell's bytes padded with 0, one row per
        position (UTF-8 bytes from the splitter, or
        :func:`~imputer_app.sheets._string_cells.ascii_codes`), kept from classifying
        for the column's measured precision; else None.
    places : ndarray of int8, shape (n,), or None
        For a column whose texts were read a word at a time: the digits after the mark
        of each simple decimal text (-1 for other texts), for the measured precision;
        else None.
    """

    raw: np.ndarray
    cls: np.ndarray
    number: np.ndarray
    text: np.ndarray
    side: np.ndarray = field(default_factory=lambda: np.empty(0, dtype=object))
    limit: np.ndarray = field(default_factory=lambda: np.empty(0))
    token: np.ndarray = field(default_factory=lambda: np.empty(0, dtype=object))
    codes: np.ndarray | None = None
    places: np.ndarray | None = None

    def take(self, rows: np.ndarray) -> ParsedColumn:
        """The same column restricted to ``rows`` (increasing positions)."""
        if rows.size == self.cls.shape[0]:
            return self
        return ParsedColumn(
            **{
                name: getattr(self, name)[rows]
                for name in ("raw", "cls", "number", "text", "side", "limit", "token")
            },
            codes=None if self.codes is None else self.codes[:, rows],
            places=None if self.places is None else self.places[rows],
        )


_NUMERIC_INFERRED = ("floating", "integer", "mixed-integer-float")
_DATE_TYPES = (dt.date, dt.time, dt.timedelta)
_NUMBER_TYPES = (float, int, np.float64, np.int64, np.float32, np.int32)
_STRING_TYPES = (str, np.str_)
_TYPE_OF = np.frompyfunc(type, 1, 1)
_IS_NUMBER_TYPE = np.frompyfunc(frozenset(_NUMBER_TYPES).__contains__, 1, 1)
_IS_STRING_TYPE = np.frompyfunc(frozenset(_STRING_TYPES).__contains__, 1, 1)


def _plain_numbers(values: np.ndarray, decimal: str) -> np.ndarray:
    """Fast first pass over text cells: plain numbers ("7.21", or "7,21" with decimal ",").

    NaN for everything else (grouped thousands, markers, censored entries, text); the
    careful pass of :func:`~imputer_app.sheets._text_classes.parse_numbers` looks at those. See
    :func:`~imputer_app.sheets._fast_text.plain_number_values`; a test checks that it
    agrees with ``pandas.to_numeric``.
    """
    return plain_number_values(values, decimal)


def parse_column(
    raw: np.ndarray,
    decimal: str,
    markers: Markers,
    known: KnownTexts | None = None,
    codes: np.ndarray | None = None,
) -> ParsedColumn:
    """Classify every cell of one column (see :class:`ParsedColumn`).

    A ``StringDType`` column (a long delimited file) is classified with masks; ``codes``
    are its cells' bytes, one row per position, when the splitter kept them (else they
    are made here). Of any other column, one whose first cell is text and whose every
    cell is text (``infer_dtype``, one pass) goes to the text rules; the rest is split
    by each cell's Python type, floats told apart by one comparison of their type and
    converted in one vectorised step, so that only its text and other cells meet
    per-text work. ``known`` (built with the same ``decimal`` and ``markers``) keeps the
    distinct texts of earlier columns of the sheet, so that each is classified once.
    """
    no_texts = _no_texts(raw.shape[0])  # shared and read-only until a field is written
    parsed = ParsedColumn(
        raw=raw,
        cls=np.full(raw.shape[0], BLANK, dtype=np.int8),
        number=np.full(raw.shape[0], np.nan),
        text=no_texts,
        side=no_texts,
        limit=np.full(raw.shape[0], np.nan),
        token=no_texts,
    )
    if not raw.size:
        return parsed
    if is_string_array(raw):  # a long delimited file: every cell is text
        _take_string_column(parsed, raw, decimal, markers, codes, known)
    elif isinstance(raw[0], str) and pd.api.types.infer_dtype(raw, skipna=False) == "string":
        where = np.flatnonzero(raw != "")
        _take_strings(parsed, where, raw[where], decimal, markers, known)
    else:
        _take_by_type(parsed, raw, decimal, markers, known)
    return parsed


def _no_texts(n: int) -> np.ndarray:
    """A read-only object array of ``n`` empty texts (``np.full`` takes several times as long for objects).

    The text fields of a column start as one such array; :func:`_writable` gives a field
    its own copy before it is written.
    """
    texts = np.empty(n, dtype=object)
    texts.fill("")
    texts.flags.writeable = False
    return texts


def _writable(parsed: ParsedColumn, name: str) -> np.ndarray:
    """The field ``name`` of ``parsed``, copied first when it is the shared read-only start."""
    values: np.ndarray = getattr(parsed, name)
    if not values.flags.writeable:
        values = values.copy()
        setattr(parsed, name, values)
    return values


def _take_by_type(
    parsed: ParsedColumn, raw: np.ndarray, decimal: str, markers: Markers, known: KnownTexts | None
) -> None:
    """Classify a column by each cell's Python type (numbers with blanks, markers, dates ...).

    Floats, the common case, are told apart by one comparison of their type; only the
    other cells are looked up among the number and text types. Blank ("") cells are left
    blank. When no text is left, a column that ``infer_dtype`` finds numeric (numpy
    integers of any width among them) is read as numbers.
    """
    types = _TYPE_OF(raw)
    numeric = types == float  # noqa: E721 (elementwise over an array of types)
    rest = np.flatnonzero(~numeric)
    kinds = types[rest]
    numeric[rest] = _IS_NUMBER_TYPE(kinds).astype(bool)
    strings = rest[_IS_STRING_TYPE(kinds).astype(bool)]
    strings = strings[raw[strings] != ""]
    others = np.setdiff1d(rest[~numeric[rest]], strings, assume_unique=True)
    others = others[raw[others] != ""]
    if others.size and not strings.size:
        filled = np.union1d(np.flatnonzero(numeric), others)
        if pd.api.types.infer_dtype(raw[filled], skipna=False) in _NUMERIC_INFERRED:
            numeric[filled], others = True, others[:0]
    _take_number_cells(parsed, numeric, raw, markers)
    _take_strings(parsed, strings, raw[strings], decimal, markers, known)
    _take_others(parsed, others, raw[others])


def _take_number_cells(parsed: ParsedColumn, numeric: np.ndarray, raw: np.ndarray, markers: Markers) -> None:
    """Take the cells where ``numeric`` is True, Python or numpy numbers, as numbers.

    The values are converted in place, only where ``numeric`` is True (no copy of the
    cells first); non-finite values are blank, numeric markers are markers.
    """
    number = parsed.number
    np.copyto(number, raw, casting="unsafe", where=numeric)
    finite = np.isfinite(number)
    marker = markers.match_numbers(number) & finite
    number[~finite | marker] = np.nan
    parsed.cls[numeric] = np.where(marker, MARKER, np.where(finite, NUMBER, BLANK))[numeric]


def _take_strings(
    parsed: ParsedColumn,
    where: np.ndarray,
    values: np.ndarray,
    decimal: str,
    markers: Markers,
    known: KnownTexts | None = None,
) -> None:
    """Classify text cells: plain numbers in one vectorised pass, the rest per distinct text."""
    if not where.size:
        return
    numbers = _plain_numbers(values, decimal)
    plain = np.isfinite(numbers)
    if plain.any():
        marker = markers.match_numbers(numbers[plain])
        cells = where[plain]
        parsed.cls[cells] = np.where(marker, MARKER, NUMBER)
        parsed.number[cells[~marker]] = numbers[plain][~marker]
    if not plain.all():
        _take_texts(parsed, where[~plain], values[~plain], decimal, markers, known)


def _take_string_column(
    parsed: ParsedColumn,
    raw: np.ndarray,
    decimal: str,
    markers: Markers,
    codes: np.ndarray | None,
    known: KnownTexts | None,
) -> None:
    """:func:`_take_strings` for a whole ``StringDType`` column, with masks instead of positions.

    Plain numbers are read without making a Python ``str`` per cell; only the other
    filled cells (markers, censored entries, text) become ``str`` for the careful pass.
    """
    parsed.codes = codes if codes is not None else ascii_codes(raw)
    numbers, parsed.places = plain_number_parts(raw, decimal, parsed.codes)  # NaN for "" and texts not plain
    plain = np.isfinite(numbers)
    marker = plain & markers.match_numbers(numbers)
    parsed.cls[plain] = NUMBER
    parsed.cls[marker] = MARKER
    np.copyto(parsed.number, numbers, where=plain & ~marker)
    words = None if parsed.codes is None else words_of(parsed.codes)
    if words is not None:  # a text without NUL (the splitter refuses them) is filled when its word is not 0
        rest = np.flatnonzero(~plain & (words != 0))
    else:
        rest = np.flatnonzero(~plain)
        rest = rest[raw[rest] != ""]  # the filled cells that are no plain number: few
    if rest.size:
        _take_texts(parsed, rest, as_objects(raw[rest]), decimal, markers, known)


def _take_texts(
    parsed: ParsedColumn,
    where: np.ndarray,
    values: np.ndarray,
    decimal: str,
    markers: Markers,
    known: KnownTexts | None,
) -> None:
    """Classify texts that are not plain numbers, once per distinct text."""
    codes, uniques = pd.factorize(values)
    uniques = np.asarray(uniques, dtype=object)
    if known is not None and uniques.size <= KnownTexts.MOST:
        found = known.classify(uniques)
    else:
        found = classify_texts(pd.Series(strip_texts(uniques), dtype=str), decimal, markers)
    for name, column in found.items():
        if name in _FILLED_AS or not _is_default(column, name):  # a column of defaults is already so
            _writable(parsed, name)[where] = column[codes]


def _is_default(column: np.ndarray, name: str) -> bool:
    """True when every value is the field's starting value ("" for texts, NaN for numbers)."""
    return bool(np.isnan(column).all()) if column.dtype == float else not (column != "").any()


#: Fields always written (their starting value is not what the classes of text cells say).
_FILLED_AS = ("cls", "text")


def _take_others(parsed: ParsedColumn, where: np.ndarray, values: np.ndarray) -> None:
    # only cells that are neither str nor number get here (bools, dates, times, formula
    # errors, formulas without a value): few
    kinds = np.array([_other_class(v) for v in values], dtype=np.int8)
    parsed.cls[where] = kinds
    errors = np.flatnonzero(kinds == FORMULA_ERROR)
    _writable(parsed, "text")[where[errors]] = [str(values[i]) for i in errors]


def _other_class(value: object) -> int:
    if isinstance(value, bool):
        return BOOL
    if isinstance(value, _DATE_TYPES):
        return DATE
    if isinstance(value, FormulaError):
        return FORMULA_ERROR
    if value is None:
        return BLANK
    return NO_VALUE if value is NO_VALUE_CELL else TEXT
