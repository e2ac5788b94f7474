"""Measured coverage of the calibrated intervals, by cross-fitting on the hidden cells (numpy only).

The share of a column's hidden cells inside their *own* quantile is about the level by
construction and says nothing. An honest check scores cells that the quantile never
saw: the hidden cells of each column are split into :data:`FOLDS` parts at random, and
each part is scored against the quantile (and floor) computed from the other parts, as
in cross-conformal prediction (Vovk 2015, Annals of Mathematics and Artificial
Intelligence 74:9-28, quoted from memory). This is done for every level of
:data:`COVERAGE_LEVELS` and the plan's own, all columns at once on padded arrays.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

#: Nominal levels of the coverage table (the plan's level is added).
COVERAGE_LEVELS = (0.5, 0.6, 0.7, 0.8, 0.9, 0.95)
#: Parts the hidden cells of a column are split into for the cross-fitting.
FOLDS = 5
#: Seed of the split: the same sheet and plan give the same table.
COVERAGE_SEED = 1


@dataclass(frozen=True)
class CoverageChecks:
    """Nominal against observed coverage per fill column, on cells the quantile never saw.

    Attributes
    ----------
    levels : tuple of float
        Nominal levels, ascending.
    columns : tuple of str
        Fill columns, in the order of the rows of ``inside`` and ``scored``.
    inside : ndarray of int, shape (n_columns, n_levels)
        Hidden cells inside the interval calibrated on the other parts.
    scored : ndarray of int, shape (n_columns, n_levels)
        Hidden cells scored (a part is left out at a level when the other parts hold
        too few cells for a quantile there).
    """

    levels: tuple[float, ...]
    columns: tuple[str, ...]
    inside: IntArray
    scored: IntArray

    def overall(self) -> tuple[FloatArray, IntArray]:
        """Observed coverage per level over every column (NaN where nothing was scored), and cells."""
        inside, scored = self.inside.sum(axis=0), self.scored.sum(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(scored > 0, inside / np.maximum(scored, 1), np.nan), scored

    def at(self, level: float) -> tuple[float, int]:
        """Overall observed coverage at ``level`` and the cells it was measured on."""
        observed, scored = self.overall()
        hit = np.flatnonzero(np.isclose(self.levels, level))
        if not len(hit):
            return float("nan"), 0
        return float(observed[hit[0]]), int(scored[hit[0]])


def levels_with(level: float) -> tuple[float, ...]:
    """:data:`COVERAGE_LEVELS` with ``level`` added, ascending."""
    extra = () if np.isclose(COVERAGE_LEVELS, level).any() else (float(level),)
    return tuple(sorted((*COVERAGE_LEVELS, *extra)))


def row_quantile(x: FloatArray, q: float) -> FloatArray:
    """The ``q`` quantile (0-1, linear interpolation) of each row's finite entries; NaN if none.

    ``np.nanquantile(x, q, axis=1)`` without its loop over rows.
    """
    return row_quantiles(x, (q,))[0]


def row_quantiles(x: FloatArray, qs: Sequence[float]) -> list[FloatArray]:
    """:func:`row_quantile` for each of ``qs``, from one sort of the rows."""
    finite = np.isfinite(x)
    ordered = np.sort(np.where(finite, x, np.inf), axis=1)
    n = finite.sum(axis=1)
    rows = np.arange(len(x))
    out = []
    for q in qs:
        at = q * np.maximum(n - 1, 0)
        lo = np.floor(at).astype(np.intp)
        hi = np.minimum(lo + 1, np.maximum(n - 1, 0))
        if not x.shape[1]:
            out.append(np.full(len(x), np.nan))
            continue
        a, b = ordered[rows, lo], ordered[rows, hi]
        with np.errstate(invalid="ignore"):
            got = a + (at - lo) * np.where(hi > lo, b - a, 0.0)
        out.append(np.where(n > 0, got, np.nan))
    return out


def crossfit(
    errors: FloatArray,
    sds: FloatArray,
    floor_min: FloatArray,
    levels: Sequence[float],
    rng: np.random.Generator,
) -> tuple[IntArray, IntArray]:
    """Inside and scored counts per column and level (see :class:`CoverageChecks`).

    Parameters
    ----------
    errors : ndarray of shape (n_columns, m)
        Per column, its hidden cells' errors (numbers: |truth - fill|; categories:
        1 - the donors' share for the true class), NaN padded.
    sds : ndarray of shape (n_columns, m)
        The donors' SD of each cell (0 for categories).
    floor_min : ndarray of shape (n_columns,)
        Smallest floor per column (a tenth of its SD); NaN for categories, whose score
        is the error itself.
    levels : sequence of float
        Nominal levels to check.
    rng : numpy.random.Generator
        Source of the split into parts.
    """
    c, m = errors.shape
    valid = np.isfinite(errors)
    keys = np.where(valid, rng.random((c, m)), np.inf)
    rank = np.empty((c, m), dtype=np.intp)
    rank[np.arange(c)[:, None], np.argsort(keys, axis=1, kind="stable")] = np.arange(m)[None, :]
    part = rank % FOLDS
    is_cat = np.isnan(floor_min)
    inside = np.zeros((c, len(levels)), dtype=np.intp)
    scored = np.zeros((c, len(levels)), dtype=np.intp)
    rows = np.arange(c)
    for f in range(FOLDS):
        calib, test = valid & (part != f), valid & (part == f)
        if not test.any():
            continue
        median = row_quantile(np.where(calib, sds, np.nan), 0.5)
        floor = np.where(is_cat, 1.0, np.fmax(np.nan_to_num(median), floor_min))
        score = errors / (sds + floor[:, None])
        ordered = np.sort(np.where(calib, score, np.inf), axis=1)
        n_cal = calib.sum(axis=1)
        n_test = test.sum(axis=1)
        for li, level in enumerate(levels):
            want = np.ceil((n_cal + 1) * level - 1e-9).astype(np.intp)
            ok = (n_cal > 0) & (want <= n_cal)
            q = ordered[rows, np.clip(want - 1, 0, max(m - 1, 0))] if m else np.full(c, np.nan)
            hit = test & (score <= q[:, None])
            inside[:, li] += np.where(ok, hit.sum(axis=1), 0)
            scored[:, li] += np.where(ok, n_test, 0)
    return inside, scored
