"""Missing markers, below-limit markers and the censored-entry pattern.

:data:`DEFAULT_MARKERS` are missing markers and :data:`DEFAULT_BELOW_MARKERS` mean
"below the limit of detection"; :func:`make_markers` extends and re-assigns them
(:mod:`~imputer_app.sheets._cells` says how cells are matched).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np

#: Missing-value markers that apply unless the user says otherwise (trimmed, case-insensitive).
DEFAULT_MARKERS: tuple[str, ...] = ("NA", "N/A", "-", "--", "?", "missing", "lost", "#N/A", "NaN")
#: Markers that mean "not detected": below the limit of detection, a censored cell
#: (common practice in analytical labs, no source). "BDL", "<LOD" and "<LOQ" are read
#: as censored entries by :data:`CENSORED_PATTERN` already.
DEFAULT_BELOW_MARKERS: tuple[str, ...] = ("n.d.", "nd", "not detected")
#: Limit words a censored entry may give instead of a number, by family.
LIMIT_FAMILIES: dict[str, str] = {
    "lod": "LOD", "dl": "LOD", "mdl": "LOD", "d.l.": "LOD", "l.o.d.": "LOD", "l.o.d": "LOD",
    "detection limit": "LOD", "limit of detection": "LOD", "bdl": "LOD", "blod": "LOD",
    "loq": "LOQ", "lloq": "LOQ", "ql": "LOQ", "l.o.q.": "LOQ", "l.o.q": "LOQ",
    "quantification limit": "LOQ", "limit of quantification": "LOQ", "bloq": "LOQ", "blq": "LOQ",
    "bql": "LOQ", "rl": "RL", "mrl": "RL", "reporting limit": "RL", "uloq": "ULOQ",
}  # fmt: skip

_NUMBER = r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?"
_TOKENS = "|".join(sorted((t.replace(".", r"\.") for t in LIMIT_FAMILIES), key=len, reverse=True))
_SIDES = r"<=|>=|<|>|≤|≥|below|above|less than|greater than|under|over"
_BARE = r"bdl|blod|bloq|blq|bql"
CENSORED_PATTERN = (
    rf"(?i)^(?:(?P<side>{_SIDES})\s*(?:the\s+)?(?:(?P<num>{_NUMBER})|(?P<token>{_TOKENS}))"
    rf"|(?P<bare>{_BARE}))$"
)
#: The sides of a censored entry that mean below the limit.
BELOW_SIDES = {"<", "<=", "≤", "below", "less than", "under"}


@dataclass(frozen=True)
class Markers:
    """Missing markers split into text (case-folded) and numeric values."""

    texts: frozenset[str]
    numbers: frozenset[float]
    below: frozenset[str] = frozenset()

    @property
    def number_array(self) -> np.ndarray:
        """Numeric markers as a float array (for :func:`numpy.isin`)."""
        return np.array(sorted(self.numbers), dtype=float)

    def match_numbers(self, values: np.ndarray) -> np.ndarray:
        """True where a value equals a numeric marker (none unless the user gave one)."""
        if not self.numbers:
            return np.zeros(values.shape, dtype=bool)
        return np.isin(values, self.number_array)


def make_markers(
    extra: Iterable[str | float] | None = None, meanings: Mapping[str, str] | None = None
) -> Markers:
    """Build the marker sets: :data:`DEFAULT_MARKERS` plus ``extra``, with ``meanings`` applied.

    Parameters
    ----------
    extra : iterable of str or float, optional
        More missing markers. Text is compared trimmed and case-insensitively; a marker
        that reads as a finite number (``-999``, ``"-999"``) is compared by numeric value.
    meanings : mapping of str to {"missing", "below-limit"}, optional
        The meaning of marker texts, overriding the defaults (``{"n.d.": "missing"}``).
    """
    if isinstance(extra, str | int | float):
        extra = [extra]
    texts: set[str] = set()
    numbers: set[float] = set()
    below = {m.lower() for m in DEFAULT_BELOW_MARKERS}
    for marker in (*DEFAULT_MARKERS, *(extra or ())):
        value = _finite_number(marker)
        if value is not None:
            numbers.add(value)
        else:
            texts.add(str(marker).strip().lower())
    for marker, meaning in (meanings or {}).items():
        key = str(marker).strip().lower()
        value = _finite_number(marker)
        if meaning == "missing":
            below.discard(key)
            (numbers.add(value) if value is not None else texts.add(key))
        else:
            texts.discard(key)
            below.add(key)
    return Markers(frozenset(texts - below), frozenset(numbers), frozenset(below))


def _finite_number(marker: object) -> float | None:
    try:
        value = float(str(marker).strip().replace(",", ".")) if not isinstance(marker, bool) else math.nan
    except ValueError:
        return None
    return value if math.isfinite(value) else None
