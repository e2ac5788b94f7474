"""Censored entries ("<0.05", ">2000"): what number each stands for, and its caps (numpy only).

With ``ros`` (the default) a column's below-limit entries are estimated from its
measured values by robust regression on order statistics (:mod:`~imputer_app.engine._ros`);
a column with fewer than :data:`~imputer_app.engine._ros.ROS_MIN_MEASURED` different
measured values falls back to half the limit. With a substitution mode a below-limit
entry stands for its limit times a factor (Hornung & Reed 1990). An above-range entry
stands for its limit in every mode; with ``fill_capped``, or when no limit is written,
the cell is filled by kNN instead and the fill is kept on its side of the limit.

A below-limit entry's stand-in is rounded like a filled number of its column, but keeps
at least two significant digits and never exceeds its limit
(:func:`~imputer_app.plan_rounding.round_stand_ins`); the rounded value is the one the
distances, the donors' values, the fill log and the exports all use.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._log import METHODS, Records
from imputer_app.engine._ros import ROS_MIN_MEASURED, ros_estimates, ros_usable
from imputer_app.plan_rounding import round_stand_ins
from imputer_app.words import SUBSTITUTION_PHRASES

#: Factor applied to a below-limit entry's limit, per censored mode (Hornung & Reed 1990).
CENSORED_FACTORS = {"limit": 1.0, "half_limit": 0.5, "limit_sqrt2": 1.0 / math.sqrt(2.0)}

#: Substitution used by ``ros`` for a column ROS cannot fit (too few measured values),
#: and for a below-limit entry whose limit is zero or negative (no place on a log scale).
ROS_FALLBACK = "half_limit"


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
    ros : ndarray of float, shape (n_rows,), or None
        ROS estimate of each below-limit entry (NaN elsewhere), set by :func:`with_ros`;
        None when ROS was not fitted.
    ros_note : str
        Why ROS was not used for this column (empty when it was, or was not asked for).
    decimals : int or None
        The column's decimals (:func:`~imputer_app.plan_rounding.column_decimals`):
        below-limit stand-ins are rounded to them, keeping two significant digits; None
        leaves them as computed.
    """

    mask: NDArray[np.bool_]
    side: NDArray[np.str_]
    limit: NDArray[np.float64]
    text: NDArray[np.object_]
    ros: NDArray[np.float64] | None = None
    ros_note: str = ""
    decimals: int | None = None

    def below(self) -> NDArray[np.bool_]:
        """Below-limit entries with a written limit."""
        return self.mask & np.isfinite(self.limit) & (self.side != ">")

    def substitute(self, mode: str, *, exact: bool = False) -> NDArray[np.float64]:
        """Value each censored cell stands for under ``mode``; NaN where it is filled instead.

        A below-limit entry stands for its ROS estimate (``ros``, when fitted by
        :func:`with_ros`) or limit x factor (:data:`CENSORED_FACTORS`; ``ros`` without
        a fit uses :data:`ROS_FALLBACK`), rounded by
        :func:`~imputer_app.plan_rounding.round_stand_ins` to :attr:`decimals` and no
        higher than its limit (``exact=True``: as computed); an above-range entry
        stands for its limit as written. With ``fill_capped`` or an unknown limit the
        cell is filled by kNN.
        """
        out = np.full(len(self.mask), np.nan)
        if mode == "fill_capped":
            return out
        below = self.below()
        above = self.mask & np.isfinite(self.limit) & (self.side == ">")
        factor = CENSORED_FACTORS[ROS_FALLBACK if mode == "ros" else mode]
        out[below] = self.limit[below] * factor
        if mode == "ros" and self.ros is not None:
            out[below] = np.where(np.isfinite(self.ros[below]), self.ros[below], out[below])
        if not exact and self.decimals is not None:
            # 2 significant digits may round up past the limit (0.0126 -> 0.013 under <0.0126)
            out[below] = np.minimum(round_stand_ins(out[below], self.decimals), self.limit[below])
        out[above] = self.limit[above]
        return out

    def methods(self, mode: str) -> NDArray[np.intp]:
        """Position in :data:`METHODS` of the rule behind each cell's substituted value."""
        code = np.full(len(self.mask), METHODS.index(ROS_FALLBACK if mode == "ros" else mode))
        if mode == "ros" and self.ros is not None:
            code[np.isfinite(self.ros)] = METHODS.index("ros")
        code[self.side == ">"] = METHODS.index("limit")
        return code


def with_ros(cen: Censored, measured: NDArray[np.float64], order: NDArray[np.float64]) -> Censored:
    """``cen`` with the ROS estimates of its below-limit entries, or the reason there are none.

    Parameters
    ----------
    cen : Censored
        The column's censored cells.
    measured : ndarray of float, shape (n_rows,)
        The column's measured values (NaN at gaps, hidden cells and censored entries).
    order : ndarray of float, shape (n_rows,)
        Among entries at the same limit, the higher ``order`` gets the larger estimate
        (the row label's rank, so that the values do not depend on the row order).

    Returns
    -------
    Censored
        ``ros`` set when the column has at least :data:`ROS_MIN_MEASURED` different
        measured values above zero; otherwise ``ros_note`` says why not.
    """
    below = cen.below()
    if not below.any():
        return cen
    values = np.where(cen.mask, np.nan, measured)
    if not ros_usable(values, below):
        n = int(np.unique(values[np.isfinite(values) & (values > 0)]).size)
        note = (
            f"ROS needs at least {ROS_MIN_MEASURED} different measured values above zero; the column has {n}"
        )
        return replace(cen, ros_note=note)
    fit = ros_estimates(values, below, np.where(below, cen.limit, np.nan), order=order)
    return replace(cen, ros=fit.estimates, ros_note=f"fitted to {fit.n_measured} measured values")


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
    exact = cen.substitute(mode, exact=True)  # the note compares the estimate itself with the limit
    rows = np.flatnonzero(cen.mask & np.isfinite(value))
    if not len(rows):
        return
    method = cen.methods(mode)[rows]
    notes = [
        _substitution_note(t, side == ">", METHODS[m], mode, cen)
        for t, side, m in zip(cen.text[rows].tolist(), cen.side[rows].tolist(), method.tolist(), strict=True)
    ]
    # a ROS value cut back to its limit: the fit placed the entry above its own limit
    for i in np.flatnonzero((method == METHODS.index("ros")) & (exact[rows] >= cen.limit[rows])).tolist():
        notes[i] += "; the fitted value lay above the limit, so the limit was used"
    out.add_without_donors(rows, col, value[rows].tolist(), method, notes)


def _substitution_note(text: str, above: bool, method: str, mode: str, cen: Censored) -> str:
    """The fill log's note on one substituted censored entry."""
    if above:
        return f"above-range entry {text!r} stands for its limit"
    note = f"below-limit entry {text!r} stands for {SUBSTITUTION_PHRASES[method]}"
    if mode != "ros":
        return note
    if method == "ros":
        return f"{note} ({cen.ros_note})"
    # ROS was asked for: either the column could not be fitted, or this limit has no log
    why = "its limit is not above zero" if cen.ros is not None else cen.ros_note
    return f"{note} instead of a ROS estimate: {why}"
