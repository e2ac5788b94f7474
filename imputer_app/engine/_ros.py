"""Robust regression on order statistics (ROS) for below-limit entries of one column.

A column with entries such as ``<0.05`` holds values known only to lie below their
limit. Substituting a fixed fraction of the limit biases summary statistics when many
values are censored (Helsel 2006, Chemosphere 65:2434-2439). Robust ROS instead fits a
lognormal distribution to the measured values at their plotting positions and reads
each censored entry's value off that fit at its own position (Helsel & Cohn 1988,
Water Resources Research 24(12):1997-2004; Helsel 2005, *Nondetects and Data
Analysis*; both quoted from memory). Measured values are never changed ("robust").

Plotting positions with several limits follow Helsel & Cohn 1988: for limits
``L_1 < ... < L_m`` (and ``L_0 = 0`` when some measured value lies below ``L_1``),

- ``A_j``: measured values in ``[L_j, L_j+1)``;
- ``B_j``: measured values below ``L_j`` plus censored entries with limit ``<= L_j``;
- ``C_j``: censored entries at ``L_j``;
- exceedance probability ``pe_j = pe_j+1 + A_j / (A_j + B_j) * (1 - pe_j+1)``, ``pe_m+1 = 0``;
- the r-th measured value of interval j sits at ``(1 - pe_j) + (pe_j - pe_j+1) r / (A_j + 1)``;
- the r-th censored entry at ``L_j`` sits at ``(1 - pe_j) r / (C_j + 1)``.

The log of the measured values is regressed on the normal quantiles of their positions
by least squares; a censored entry's value is ``exp(intercept + slope * z)``, kept at or
below its own limit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.special import ndtri

#: Fewest measured values (above zero) a column needs for ROS; fewer, and the plan's
#: substitution is used instead. Three points fit a line with one degree of freedom
#: to spare; five is Kinfill's own margin for a usable slope (no outside source).
ROS_MIN_MEASURED = 5


@dataclass(frozen=True)
class RosFit:
    """The lognormal fit behind a column's ROS estimates.

    Attributes
    ----------
    estimates : ndarray of float, shape (n_rows,)
        Value of each censored entry; NaN for every other row.
    intercept, slope : float
        ``log(value) = intercept + slope * z`` for normal quantile ``z``.
    n_measured : int
        Measured values the fit used.
    """

    estimates: NDArray[np.float64]
    intercept: float
    slope: float
    n_measured: int


def ros_usable(values: NDArray[np.float64], censored: NDArray[np.bool_]) -> bool:
    """Whether a column has enough measured values for :func:`ros_estimates`.

    Parameters
    ----------
    values : ndarray of shape (n_rows,)
        Measured values (NaN where not measured).
    censored : ndarray of bool, shape (n_rows,)
        True for below-limit entries.
    """
    measured = values[~censored & np.isfinite(values)]
    positive = measured[measured > 0]
    return bool(positive.size >= ROS_MIN_MEASURED and np.unique(positive).size >= 2)


def plotting_positions(values: NDArray[np.float64], censored: NDArray[np.bool_]) -> NDArray[np.float64]:
    """Helsel-Cohn plotting positions of every usable row (NaN for the others).

    Parameters
    ----------
    values : ndarray of shape (n_rows,)
        Measured value, or the limit of a censored entry; NaN rows are skipped.
    censored : ndarray of bool, shape (n_rows,)
        True where ``values`` holds a limit.

    Returns
    -------
    ndarray of shape (n_rows,)
        Position in (0, 1) of each row with a finite value. Within one interval (or one
        limit) positions rise with the value and, between equal values, with the row's
        place in ``values``: callers order rows first (see :func:`ros_estimates`).

    Examples
    --------
    >>> v = np.array([1.0, 1.0, 2.0, 3.0, 4.0])
    >>> c = np.array([True, False, False, False, False])
    >>> np.round(plotting_positions(v, c), 4).tolist()
    [0.1, 0.36, 0.52, 0.68, 0.84]
    """
    n = values.size
    out = np.full(n, np.nan)
    ok = np.isfinite(values)
    cen, det = ok & censored, ok & ~censored
    limits = np.unique(values[cen])
    if limits.size == 0:
        return out
    if np.any(values[det] < limits[0]):
        limits = np.concatenate([[0.0], limits])
    upper = np.append(limits[1:], np.inf)
    det_values, cen_values = values[det], values[cen]
    a = np.array(
        [np.sum((det_values >= lo) & (det_values < hi)) for lo, hi in zip(limits, upper, strict=True)]
    )
    b = np.array([np.sum(det_values < lo) + np.sum(cen_values <= lo) for lo in limits])
    pe = np.zeros(limits.size + 1)
    for j in range(limits.size - 1, -1, -1):
        share = a[j] / (a[j] + b[j]) if a[j] + b[j] > 0 else 0.0
        pe[j] = pe[j + 1] + share * (1.0 - pe[j + 1])
    for j, (lo, hi) in enumerate(zip(limits, upper, strict=True)):
        rows = np.flatnonzero(det & (values >= lo) & (values < hi))
        rows = rows[np.argsort(values[rows], kind="stable")]
        out[rows] = (1.0 - pe[j]) + (pe[j] - pe[j + 1]) * np.arange(1, rows.size + 1) / (rows.size + 1)
        at = np.flatnonzero(cen & (values == lo))
        out[at] = (1.0 - pe[j]) * np.arange(1, at.size + 1) / (at.size + 1)
    return out


def ros_estimates(
    values: NDArray[np.float64],
    censored: NDArray[np.bool_],
    limits: NDArray[np.float64],
    order: NDArray[np.float64] | None = None,
) -> RosFit:
    """Estimate every below-limit entry of one column by robust ROS.

    Parameters
    ----------
    values : ndarray of shape (n_rows,)
        Measured values; NaN where not measured (gaps and censored entries).
    censored : ndarray of bool, shape (n_rows,)
        True for below-limit entries whose limit is known.
    limits : ndarray of shape (n_rows,)
        Each censored entry's limit (ignored elsewhere; a NaN limit is skipped).
    order : ndarray of shape (n_rows,) or None, default=None
        Among entries at the same limit, which receives the larger estimate: the
        higher ``order`` (for instance each row's kNN value), ties broken by the
        entries' positions in the arrays. None ranks them by position alone.

    Returns
    -------
    RosFit
        ``estimates`` is NaN outside the censored entries.

    Raises
    ------
    ValueError
        When :func:`ros_usable` is False for this column.
    """
    censored = censored & np.isfinite(limits)
    if not ros_usable(values, censored):
        raise ValueError(f"ROS needs at least {ROS_MIN_MEASURED} different measured values above zero")
    # Log scale: a measured zero or negative value cannot sit on a lognormal fit.
    usable = (~censored & np.isfinite(values) & (values > 0)) | (censored & (limits > 0))
    rank_key = np.where(censored, limits, values)
    tie = np.zeros(values.size) if order is None else np.nan_to_num(order, nan=-np.inf)
    sequence = np.lexsort((np.arange(values.size), tie, rank_key))
    sequence = sequence[usable[sequence]]
    positions = np.full(values.size, np.nan)
    positions[sequence] = plotting_positions(rank_key[sequence], censored[sequence])
    measured = usable & ~censored
    z_measured = ndtri(positions[measured])
    slope, intercept = np.polyfit(z_measured, np.log(values[measured]), 1)
    estimates = np.full(values.size, np.nan)
    cen_rows = usable & censored
    estimates[cen_rows] = np.minimum(np.exp(intercept + slope * ndtri(positions[cen_rows])), limits[cen_rows])
    return RosFit(estimates, float(intercept), float(slope), int(measured.sum()))
