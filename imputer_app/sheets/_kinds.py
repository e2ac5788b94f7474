"""Column kinds (number, category, date, identifier, empty): detection and the frame column.

Detection, on the cells that are neither blank nor a missing marker:

- ``empty``: there are none;
- ``date``: at least 80 % are dates (workbook date cells, or text in one date format);
- ``number``: at least half are numbers or censored entries (the rest become
  ``text_in_number`` cells, each reported), unless most are whole numbers written with
  leading zeros ("007"), which are codes;
- ``identifier``: text whose values are all different (at least 3 of them), or a running
  number (1, 2, 3, ... with no gap, at least 10 rows), which counts samples rather
  than measures them;
- ``category``: any other text.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np
import pandas as pd

from imputer_app.sheets._cell_classes import (
    BLANK,
    BOOL,
    CENSORED,
    DATE,
    FORMULA_ERROR,
    MARKER,
    NO_VALUE,
    NOT_VALUES,
    NUMBER,
    TEXT,
    all_whole,
    class_counts,
    in_codes,
)
from imputer_app.sheets._cells import ParsedColumn
from imputer_app.sheets._grid import cell_text
from imputer_app.sheets._string_cells import as_objects, is_string_array

#: State codes, positions in :data:`imputer_app.sheets._model.CELL_STATES`.
OBSERVED, MISSING, CENSORED_STATE, TEXT_IN_NUMBER, FORMULA_ERROR_STATE = range(5)

DATE_SHARE = 0.8
NUMBER_SHARE = 0.5
MIN_IDENTIFIER_VALUES = 3
#: Rows a 1, 2, 3, ... column needs before it is taken for a sample counter, not a measure.
MIN_RUNNING_ROWS = 10

#: Text date formats tried in this order; the first that reads the most cells wins.
DATE_FORMATS: tuple[tuple[str, str], ...] = (
    ("ISO8601", "year-month-day"),
    ("%d.%m.%Y", "day.month.year"),
    ("%d.%m.%Y %H:%M", "day.month.year hour:minute"),
    ("%d.%m.%Y %H:%M:%S", "day.month.year hour:minute:second"),
    ("%d/%m/%Y", "day/month/year"),
    ("%m/%d/%Y", "month/day/year"),
    ("%d/%m/%Y %H:%M", "day/month/year hour:minute"),
    ("%m/%d/%Y %H:%M", "month/day/year hour:minute"),
    ("%Y/%m/%d", "year/month/day"),
    ("%H:%M", "hour:minute"),
    ("%H:%M:%S", "hour:minute:second"),
)
_TIME_ONLY = ("%H:%M", "%H:%M:%S")
#: Distinct texts looked at to choose a date format.
DATE_SAMPLE = 500
# ISO8601 would accept a bare year such as "2024"; a date needs a separator between digits
_DATE_LIKE = r"\d[-./:]\d"


@dataclass(frozen=True)
class Detected:
    """A detected kind, plus the text date format when dates were written as text."""

    kind: str
    date_format: str | None = None
    note: str | None = None


@dataclass(frozen=True)
class Built:
    """One frame column and its state codes (see :data:`OBSERVED` ...)."""

    values: pd.Series | np.ndarray
    states: np.ndarray


def kind_of_parsed_column(parsed: ParsedColumn) -> Detected:
    """Detect the kind of one column as the reader parsed it (rules in the module docstring)."""
    counts = class_counts(parsed.cls)
    total = int(counts.sum() - counts[list(NOT_VALUES)].sum())
    if total == 0:
        return Detected("empty")
    numeric = int(counts[NUMBER] + counts[CENSORED])
    dates, texts = int(counts[DATE]), int(counts[TEXT])
    if dates + texts >= DATE_SHARE * total:
        fmt, share, words = text_date_format(parsed.text[parsed.cls == TEXT]) if texts else (None, 0.0, "")
        if dates + share * texts >= DATE_SHARE * total:
            return Detected("date", fmt, f"dates written as text read as {words}" if fmt else None)
    codes = numeric >= NUMBER_SHARE * total and _zero_padded(parsed)
    if numeric and numeric >= NUMBER_SHARE * total and not codes:
        if _running_number(parsed):
            # A sample counter (1, 2, 3, ...) says nothing about how similar samples are.
            return Detected("identifier", None, "a running number (each row one more) read as an identifier")
        return Detected("number")
    note = "numbers written with leading zeros (such as 007) read as codes" if codes else None
    labels = category_text(parsed)
    values = labels[~pd.isna(labels)]
    if values.size >= MIN_IDENTIFIER_VALUES and pd.unique(values).size == values.size:
        return Detected("identifier", None, note)
    return Detected("category", None, note)


def _running_number(parsed: ParsedColumn) -> bool:
    """True when every cell is a whole number and each row's is one more than the last."""
    values = parsed.number
    return bool(
        values.size >= MIN_RUNNING_ROWS
        and (parsed.cls == NUMBER).all()
        and all_whole(values)
        and np.array_equal(np.diff(values), np.ones(values.size - 1))
    )


def _zero_padded(parsed: ParsedColumn) -> bool:
    """True when most numbers are whole and written with leading zeros ("007"): codes, not amounts."""
    numbers = parsed.cls == NUMBER
    values = parsed.number[numbers]
    if not values.size or not all_whole(values):
        return False
    texts = parsed.raw[numbers]  # numbers stored as numbers in a workbook carry no zeros
    if is_string_array(texts):  # a long delimited file: only texts starting with a 0 can match
        texts = as_objects(texts[np.strings.startswith(np.strings.lstrip(texts), "0")])
    else:
        texts = texts[np.frompyfunc(lambda value: isinstance(value, str), 1, 1)(texts).astype(bool)]
    if texts.size <= NUMBER_SHARE * values.size:
        return False
    padded = pd.Series(texts, dtype=str).str.match(r"\s*0\d")
    return bool(padded.sum() > NUMBER_SHARE * values.size)


def text_date_format(texts: np.ndarray) -> tuple[str | None, float, str]:
    """The format that reads most of ``texts`` as dates, the share it reads, its words.

    Judged on up to :data:`DATE_SAMPLE` distinct texts, so a long column costs little.
    """
    sample = pd.Series(pd.unique(pd.Series(texts, dtype=object))[:DATE_SAMPLE], dtype=object)
    if sample.empty or sample.str.contains(_DATE_LIKE, regex=True).mean() < DATE_SHARE:
        return None, 0.0, ""
    best: tuple[str | None, float, str] = (None, 0.0, "")
    for fmt, words in DATE_FORMATS:
        share = float(pd.to_datetime(sample, format=fmt, errors="coerce").notna().mean())
        if share > best[1]:
            best = (fmt, share, words)
        if share == 1.0:
            break
    return best


def _parse_dates(texts: np.ndarray, fmt: str) -> pd.Series:
    """Dates (or times of day) of ``texts`` in format ``fmt``; NaT where unreadable."""
    codes, uniques = pd.factorize(pd.Series(texts, dtype=object))
    unique_texts = pd.Series(np.asarray(uniques, dtype=object), dtype=object)
    looks_like_date = unique_texts.str.contains(_DATE_LIKE, regex=True).to_numpy()
    found = pd.to_datetime(unique_texts.where(looks_like_date), format=fmt, errors="coerce")
    values = found.dt.time.astype(object).where(found.notna()) if fmt in _TIME_ONLY else found
    return pd.Series(np.asarray(values, dtype=object)[codes], dtype=object)


def category_text(parsed: ParsedColumn) -> np.ndarray:
    """Object array: the text of every present cell as a user sees it; NaN for gaps."""
    out = np.full(parsed.cls.shape[0], np.nan, dtype=object)
    present = ~in_codes(parsed.cls, NOT_VALUES)
    from_text = present & (parsed.text != "")
    out[from_text] = parsed.text[from_text]
    others = np.flatnonzero(present & ~from_text)
    if others.size:
        out[others] = [cell_text(value) for value in parsed.raw[others]]
    return out


def build(parsed: ParsedColumn, detected: Detected) -> Built:
    """Frame values and state codes for a column of the given kind.

    NaN policy: blanks and markers are NaN/NaT with state missing; censored cells of a
    number column are NaN with state censored; cells that cannot be read as the kind
    are NaN with state text_in_number; cached formula errors are NaN with state
    formula_error in every kind (not gaps: they are filled only when the user says so);
    so is a formula saved without its result (a spreadsheet program computes it on
    opening; writing a fill there would replace the lab's formula).
    """
    cls = parsed.cls
    gaps = in_codes(cls, (BLANK, MARKER))
    states = np.full(cls.shape[0], OBSERVED, dtype=np.int8)
    states[gaps] = MISSING
    kind = detected.kind
    values: pd.Series | np.ndarray
    if kind == "number":
        states[cls == CENSORED] = CENSORED_STATE
        states[in_codes(cls, (TEXT, DATE, BOOL))] = TEXT_IN_NUMBER
        values = parsed.number.copy()
    elif kind == "date":
        values, readable = _date_values(parsed, detected.date_format)
        states[~gaps & ~readable] = TEXT_IN_NUMBER
    elif kind == "empty":
        values = np.full(cls.shape[0], np.nan)
    else:
        values = category_text(parsed)
    states[in_codes(cls, (FORMULA_ERROR, NO_VALUE))] = FORMULA_ERROR_STATE
    return Built(values, states)


def _date_values(parsed: ParsedColumn, fmt: str | None) -> tuple[pd.Series | np.ndarray, np.ndarray]:
    n = parsed.cls.shape[0]
    values = np.full(n, None, dtype=object)
    readable = parsed.cls == DATE
    values[readable] = parsed.raw[readable]
    texts = np.flatnonzero(parsed.cls == TEXT)
    if fmt is not None and texts.size:
        found = _parse_dates(parsed.text[texts], fmt)
        ok = found.notna().to_numpy()
        values[texts[ok]] = found.to_numpy(dtype=object)[ok]
        readable[texts[ok]] = True
    kept = values[readable]
    if kept.size and all(isinstance(v, dt.date) for v in kept):
        return pd.to_datetime(pd.Series(values, dtype=object)).astype("datetime64[us]").to_numpy(), readable
    values[~readable] = np.nan
    return values, readable
