"""Small helpers shared by the text and workbook readers: a padded cell grid, blanks, A1 names."""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Sequence

import numpy as np


class FormulaError:
    """A cell whose cached value is a formula error such as ``#DIV/0!`` or ``#N/A``.

    Not a ``str``, so that no text rule (a ``#N/A`` missing marker) can take it.
    """

    __slots__ = ("text",)

    def __init__(self, text: str) -> None:
        self.text = text

    def __repr__(self) -> str:
        return f"FormulaError({self.text!r})"

    def __str__(self) -> str:
        return self.text

    def __eq__(self, other: object) -> bool:
        return isinstance(other, FormulaError) and other.text == self.text

    def __hash__(self) -> int:
        return hash(("FormulaError", self.text))


class _NoValue:
    """A formula cell saved without its result (the file was never recalculated)."""

    __slots__ = ()

    def __repr__(self) -> str:
        return "NO_VALUE"

    def __str__(self) -> str:
        return ""


#: The one :class:`_NoValue` cell.
NO_VALUE = _NoValue()

#: A merged range as ((first_row, first_col), (last_row, last_col)), 0-based, inclusive.
Merge = tuple[tuple[int, int], tuple[int, int]]


def rows_to_grid(rows: Sequence[Sequence[object]]) -> np.ndarray:
    """Return a 2-D object array of the rows, short rows padded with ""."""
    widths = set(map(len, rows))
    width = max(widths, default=0)
    if len(widths) == 1:  # every row as wide: no padding to write first
        grid = np.empty((len(rows), width), dtype=object)
        grid[:, :] = rows
        return grid
    grid = np.full((len(rows), width), "", dtype=object)
    for i, row in enumerate(rows):
        grid[i, : len(row)] = row
    return grid


def is_filled(value: object) -> bool:
    """True when a cell holds something other than "" or spaces."""
    return not (isinstance(value, str) and not value.strip())


def column_letter(index: int) -> str:
    """0-based column position to spreadsheet letters (0 -> A, 26 -> AA)."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(ord("A") + rest) + letters
    return letters


def cell_text(value: object) -> str:
    """A cell value as the text a user would see (numbers without a needless ".0")."""
    if isinstance(value, str):
        return " ".join(value.split())
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        if math.isfinite(value) and value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if isinstance(value, dt.datetime):
        return (
            value.isoformat(sep=" ")
            if (value.hour, value.minute, value.second) != (0, 0, 0)
            else (value.date().isoformat())
        )
    if isinstance(value, dt.date | dt.time):
        return value.isoformat()
    return str(value)
