"""Censored entries ("<0.05", ">2000"): what number each stands for, and its caps (numpy only).

A below-limit entry stands for its limit times a factor (Hornung & Reed 1990), an
above-range entry for its limit; with ``fill_capped``, or when no limit is written, the
cell is filled by kNN instead and the fill is kept on its side of the limit.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._log import METHODS, Records
from imputer_app.words import SUBSTITUTION_PHRASES

#: Factor applied to a below-limit entry's limit, per censored mode (Hornung & Reed 1990).
CENSORED_FACTORS = {"limit": 1.0, "half_limit": 0.5, "limit_sqrt2": 1.0 / math.sqrt(2.0)}


@dataclass(frozen=True)
class Censored:
    """Censored cells of one column.

    Attributes
    ----------
    mask : ndarray of bool, shape (n_rows,)
    side : ndarray of str, shape (n_rows,)
        ``"<"`` (below a limit), ``">"`` (above a range) or ``""`` (unknown).
    limit : ndarray of float, shape (n_rows,)
        NaN when unknown.
    text : ndarray of object, shape (n_rows,)
        The entry as written ("<0.05").
    """

    mask: NDArray[np.bool_]
    side: NDArray[np.str_]
    limit: NDArray[np.float64]
    text: NDArray[np.object_]

    def substitute(self, mode: str) -> NDArray[np.float64]:
        """Value each censored cell stands for under ``mode``; NaN where it is filled instead.

        A below-limit entry stands for limit x factor (:data:`CENSORED_FACTORS`), an
        above-range entry for its limit; with ``fill_capped`` or an unknown limit the
        cell is filled by kNN.
        """
        out = np.full(len(self.mask), np.nan)
        if mode == "fill_capped":
            return out
        known = self.mask & np.isfinite(self.limit)
        below, above = known & (self.side != ">"), known & (self.side == ">")
        out[below] = self.limit[below] * CENSORED_FACTORS[mode]
        out[above] = self.limit[above]
        return out


def censored_caps(
    cen: Censored, unknown: NDArray[np.bool_], measured: NDArray[Any], mode: str
) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """Upper and lower caps for censored cells filled by kNN, or None when none is.

    With ``fill_capped`` every censored cell is capped at its limit. A cell whose limit
    is unknown ("<LOD" with no number) is filled by kNN in every mode; it is still below
    every measured value of its column (each passed the same limit), so the smallest
    measured value caps it (the largest, for an above-range entry).
    """
    capping = cen.mask & ((mode == "fill_capped") | unknown)
    if not capping.any():
        return None
    below = cen.side != ">"
    limit = cen.limit
    if unknown.any() and measured.size:
        limit = np.where(unknown, np.where(below, measured.min(), measured.max()), limit)
    return np.where(capping & below, limit, np.nan), np.where(capping & ~below, limit, np.nan)


def censored_records(
    censored: Mapping[str, Censored], fill_columns: Sequence[str], mode: str, out: Records
) -> None:
    """Log the censored entries replaced by a number; list those left empty.

    A censored entry with no number to stand for it (``fill_capped``, or no limit
    written) is filled by kNN in a fill column, and stays empty in any other column.
    """
    for col, cen in censored.items():
        substitution_records(col, cen, mode, out)
        if col not in fill_columns:
            left = np.flatnonzero(cen.mask & np.isnan(cen.substitute(mode)))
            why = f"censored entry with no number to stand for it; {col!r} is not a fill column"
            out.add_empty(left, col, [why] * len(left))


def substitution_records(col: str, cen: Censored, mode: str, out: Records) -> None:
    """Log every censored cell of ``col`` replaced by a number under ``mode``."""
    value = cen.substitute(mode)
    rows = np.flatnonzero(cen.mask & np.isfinite(value))
    if not len(rows):
        return
    above = cen.side[rows] == ">"
    method = np.where(above, METHODS.index("limit"), METHODS.index(mode))
    notes = [
        f"above-range entry {t!r} stands for its limit" if a
        else f"below-limit entry {t!r} stands for {SUBSTITUTION_PHRASES[mode]}"
        for t, a in zip(cen.text[rows].tolist(), above.tolist(), strict=True)
    ]  # fmt: skip
    out.add_without_donors(rows, col, value[rows].tolist(), method, notes)
