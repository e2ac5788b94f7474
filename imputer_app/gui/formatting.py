"""Qt-free: how the panels write numbers and row labels for people."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

#: Shown where a number is not available (NaN or None).
NOT_AVAILABLE = "–"


def format_value(value: Any, digits: int = 6) -> str:
    """Return ``value`` as short text.

    Numbers get ``digits`` significant digits; NaN and None become :data:`NOT_AVAILABLE`;
    text is returned unchanged.
    """
    if value is None:
        return NOT_AVAILABLE
    if isinstance(value, bool | str):
        return str(value)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(number):
        return NOT_AVAILABLE
    return f"{number:.{digits}g}"


def plain(value: Any) -> Any:
    """Return numpy scalars as the Python int, float, bool or str Qt can sort and compare."""
    item = getattr(value, "item", None)
    if callable(item) and type(value).__module__ == "numpy":
        return item()
    return value


def format_label(label: Any) -> str:
    """Return a row label as the user knows it (``12`` rather than ``12.0``)."""
    if isinstance(label, float) and label.is_integer():
        return str(int(label))
    return str(label)


@dataclass(frozen=True)
class Cell:
    """One shown table cell: its text, its raw value and how it is emphasised.

    Attributes
    ----------
    text : str
        What the user reads.
    value : object
        The raw value (number, label or text) for sorting and for tests.
    tooltip : str
        Longer explanation shown on hover and read by screen readers.
    strong : bool
        Shown in bold (e.g. the best k); emphasis never relies on colour alone.
    """

    text: str
    value: Any = None
    tooltip: str = ""
    strong: bool = False

    def __post_init__(self) -> None:
        # numpy scalars would reach Qt as opaque objects that it cannot sort.
        object.__setattr__(self, "value", plain(self.value))


def number_cell(value: Any, *, digits: int = 4, tooltip: str = "", strong: bool = False) -> Cell:
    """Return a :class:`Cell` for a number, shown with ``digits`` significant digits.

    NaN and None are shown as :data:`NOT_AVAILABLE` and keep NaN as their raw value.
    """
    text = format_value(value, digits)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return Cell(text, value, tooltip, strong)
    return Cell(text, number, tooltip or ("not available" if math.isnan(number) else ""), strong)


def common_decimals(values: Sequence[Any], digits: int | None = None) -> int:
    """Return one count of decimals that shows a list of numbers alike (a tidy column).

    With ``digits=None``, the most decimals any value needs at 6 significant digits
    (measured values keep their precision: ``7.17`` and ``7.1`` both get 2). With a
    number, that many significant digits of the largest magnitude (distances). Text,
    NaN and None are passed over; the result is between 0 and 8.

    >>> common_decimals([7.17, 7.1, 7.3])
    2
    >>> common_decimals([0.2171, 0.694, 1.016], digits=4)
    3
    """
    numbers = []
    for value in values:
        if isinstance(value, bool | str) or value is None:
            continue
        try:
            number = float(value)
        except (TypeError, ValueError):
            continue
        if math.isfinite(number):
            numbers.append(number)
    if not numbers:
        return 0
    if digits is None:
        shown = (format_value(n).lower() for n in numbers)
        needed = [len(t.split(".")[1]) if "." in t and "e" not in t else 0 for t in shown]
        return min(max(needed), 8)
    largest = max(abs(n) for n in numbers)
    if largest == 0:
        return 0
    return max(0, min(digits - 1 - math.floor(math.log10(largest)), 8))


def fixed_cell(value: Any, decimals: int, tooltip: str = "") -> Cell:
    """A :class:`Cell` for a number with exactly ``decimals`` decimals (text stays as it is)."""
    if isinstance(value, str):
        return Cell(value, value, tooltip)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return Cell(format_value(value), value, tooltip)
    text = NOT_AVAILABLE if math.isnan(number) else f"{number:.{decimals}f}"
    return Cell(text, number, tooltip)
