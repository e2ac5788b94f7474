"""Checks of a fill plan's settings, one per setting: each returns the clean value or raises.

Kept apart from :mod:`imputer_app.plan` (which runs them on construction and when a plan
file is read) so that the dataclass and its file format read on their own. Every message
names the setting, the column where there is one, and the value found.
"""

from __future__ import annotations

import math
import numbers
from collections import Counter
from collections.abc import Mapping, Sequence
from typing import Any

from imputer_app.errors import PlanError
from imputer_app.plan_text import shown_value

#: Column kinds a plan may force on a column (overriding detection).
KINDS = ("number", "category")

#: What a marker text in a cell ("n.d.", "NA") may mean: a missing value (a gap to
#: fill) or an entry below the limit of detection (a censored cell).
MARKER_MEANINGS = ("missing", "below-limit")

MAX_WEIGHT = 1000.0

#: The allowed range of the interval level.
INTERVAL_LEVELS = (0.5, 0.99)
#: How a plan file says "no intervals" (TOML has no empty value).
INTERVAL_OFF = "off"

Bound = tuple[float | None, float | None]


def check_k(k: object) -> int:
    """The number of neighbours: a whole number of at least 1 (a whole float is taken)."""
    whole = "k must be a whole number of at least 1"
    if isinstance(k, bool) or not isinstance(k, numbers.Real):
        raise PlanError(f"{whole}; got {shown_value(k)}")
    if isinstance(k, numbers.Integral):
        number = int(k)
    else:
        value = float(k)  # nan and inf have no whole value
        if not math.isfinite(value) or not value.is_integer():
            raise PlanError(f"{whole}; got {shown_value(k)}")
        number = int(value)
    if number < 1:
        raise PlanError(f"k must be at least 1; got {number}")
    return number


def check_k_by_column(ks: Mapping[str, int]) -> dict[str, int]:
    """Each column's own k: a table of column = whole number of at least 1."""
    if not isinstance(ks, Mapping):
        raise PlanError(f"k_by_column must be a table of column = k; got {shown_value(ks)}")
    out: dict[str, int] = {}
    for column, value in dict(ks).items():
        if isinstance(value, bool) or not isinstance(value, numbers.Integral) or int(value) < 1:
            raise PlanError(
                f"k for column {shown_value(column)} must be a whole number of at least 1; "
                f"got {shown_value(value)}"
            )
        out[str(column)] = int(value)
    return out


def check_level(level: object) -> float | None:
    """The interval level within :data:`INTERVAL_LEVELS`, or None for "off" (no intervals)."""
    if level is None or level == INTERVAL_OFF:
        return None
    low, high = INTERVAL_LEVELS
    if isinstance(level, bool) or not isinstance(level, numbers.Real) or not low <= float(level) <= high:
        raise PlanError(
            f"interval_level must be a number from {low:g} to {high:g}, or {INTERVAL_OFF!r}; "
            f"got {shown_value(level)}"
        )
    return float(level)


def column_names(setting: str, names: object) -> tuple[str, ...]:
    """A list of distinct, non-empty column names (``setting`` names it in messages)."""
    if isinstance(names, str) or not isinstance(names, Sequence | set | frozenset):
        raise PlanError(f"{setting} must be a list of column names; got {shown_value(names)}")
    out = tuple(names)
    bad = [n for n in out if not isinstance(n, str) or not n]
    if bad:
        raise PlanError(f"{setting} must hold column names (text); got {shown_value(bad[0])}")
    if len(set(out)) != len(out):
        counts = Counter(out)
        dup = next(n for n in out if counts[n] > 1)
        raise PlanError(f"{setting} names column {shown_value(dup)} twice")
    return out


def column_names_or_none(setting: str, names: object) -> tuple[str, ...] | None:
    """As :func:`column_names`, with None kept ("every suitable column")."""
    return None if names is None else column_names(setting, names)


def finite_number(setting: str, column: str, value: object) -> float:
    """A finite number given for one column (not a bool, nan or inf)."""
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise PlanError(
            f"{setting} for column {shown_value(column)} must be a finite number; got {shown_value(value)}"
        )
    return float(value)


def check_weights(weights: Mapping[str, float]) -> dict[str, float]:
    """Column weights from 0 to :data:`MAX_WEIGHT`."""
    out: dict[str, float] = {}
    for column, value in dict(weights).items():
        w = finite_number("weight", column, value)
        if w < 0:
            raise PlanError(f"weight for column {shown_value(column)} must be 0 or more; got {w:g}")
        if w > MAX_WEIGHT:
            raise PlanError(
                f"weight for column {shown_value(column)} must be at most {MAX_WEIGHT:g}; got {w:g}"
            )
        out[str(column)] = w
    return out


def check_bounds(bounds: Mapping[str, Any]) -> dict[str, Bound]:
    """Column bounds as (lower, upper), either side None, lower not above upper."""
    out: dict[str, Bound] = {}
    for column, pair in dict(bounds).items():
        if not isinstance(pair, Sequence) or isinstance(pair, str) or len(pair) != 2:
            raise PlanError(
                f"bounds for column {shown_value(column)} must be (lower, upper); got {shown_value(pair)}"
            )
        lower, upper = (None if v is None else finite_number("bound", column, v) for v in pair)
        if lower is not None and upper is not None and lower > upper:
            raise PlanError(
                f"bounds for column {shown_value(column)}: lower {lower:g} is above upper {upper:g}"
            )
        out[str(column)] = (lower, upper)
    return out


def check_decimals(decimals: Mapping[str, int]) -> dict[str, int]:
    """Decimals per column: whole numbers from 0 to 15."""
    out: dict[str, int] = {}
    for column, value in dict(decimals).items():
        if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= 15:
            raise PlanError(
                f"decimals for column {shown_value(column)} must be a whole number 0-15; "
                f"got {shown_value(value)}"
            )
        out[str(column)] = value
    return out


def check_markers(markers: Mapping[str, str]) -> dict[str, str]:
    """Marker texts (stripped) and their meanings, one of :data:`MARKER_MEANINGS`."""
    out: dict[str, str] = {}
    for text, meaning in dict(markers).items():
        if not isinstance(text, str) or not text.strip():
            raise PlanError(f"a marker must be the text found in cells; got {shown_value(text)}")
        if meaning not in MARKER_MEANINGS:
            raise PlanError(
                f"marker {shown_value(text)} must mean one of {', '.join(MARKER_MEANINGS)}; "
                f"got {shown_value(meaning)}"
            )
        out[text.strip()] = meaning
    return out


def check_kinds(kinds: Mapping[str, str]) -> dict[str, str]:
    """Forced column kinds, one of :data:`KINDS`."""
    out: dict[str, str] = {}
    for column, kind in dict(kinds).items():
        if kind not in KINDS:
            raise PlanError(
                f"kind for column {shown_value(column)} must be one of {', '.join(KINDS)}; "
                f"got {shown_value(kind)}"
            )
        out[str(column)] = kind
    return out
