"""Cell classes found on reading and quick look-ups on their codes (numpy only)."""

from __future__ import annotations

import numpy as np

#: Cell classes found on reading (internal codes). FORMULA_ERROR is a cached formula
#: error (``#DIV/0!``), NO_VALUE a formula cell saved without its result.
BLANK, MARKER, NUMBER, CENSORED, TEXT, DATE, BOOL, FORMULA_ERROR, NO_VALUE = range(9)
#: Formula error values as spreadsheet programs show them (common practice, no source).
#: "#N/A" is also a missing marker, and a marker wins.
ERROR_TEXTS = frozenset(
    {"#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!", "#SPILL!", "#CALC!", "#FIELD!", "#N/A"}
)
#: Classes that hold no value for kind detection.
NOT_VALUES = (BLANK, MARKER, FORMULA_ERROR, NO_VALUE)


def in_codes(codes: np.ndarray, wanted: tuple[int, ...]) -> np.ndarray:
    """``numpy.isin`` for small codes 0-255 (cell classes, states).

    Wanted codes below 16 are bits of one number shifted by each code (a few times
    faster than a table look-up); larger ones are looked up in a table.
    """
    small = codes.astype(np.uint8, copy=False)
    if max(wanted, default=0) < 16:
        bits = np.uint16(sum(1 << w for w in set(wanted)))
        return ((bits >> small) & np.uint16(1)).astype(bool)  # a shift past 15 gives 0
    table = np.zeros(256, dtype=bool)
    table[list(wanted)] = True
    return table[small]


def all_whole(values: np.ndarray) -> bool:
    """True when every value equals its rounding (NaN never does).

    The first values decide a column of measurements without a pass over all of them.
    """
    head = values[:_WHOLE_HEAD]
    return bool(np.array_equal(head, np.round(head)) and np.array_equal(values, np.round(values)))


#: Values looked at first by :func:`all_whole`.
_WHOLE_HEAD = 1000


def class_counts(cls: np.ndarray) -> np.ndarray:
    """How many cells of each class (index = class code) ``cls`` holds, in one pass."""
    return np.bincount(cls.astype(np.uint8, copy=False), minlength=16)
