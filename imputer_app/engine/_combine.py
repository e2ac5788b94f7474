"""Combine donors' values into one value per target cell (numpy only).

Numbers: mean, median or inverse-distance mean of the k nearest donors' raw values,
then bounds, censored caps and rounding. Categories: majority vote, a tie going to the
tied class with the nearest donor, then to the smallest class. Donors tied with the
k-th take part together, sharing the places left (:mod:`~imputer_app.engine._ties`), so
the fill does not depend on row order. All numeric fill columns are worked on together
as one stack of cells.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._stack import Stack
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._ties import shares, weighted_median, weighted_vote
from imputer_app.plan_rounding import round_stand_ins

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]


def _used(count: IntArray, k: int) -> IntArray:
    return np.minimum(int(k), count)


def donor_shares(donors: ColumnDonors, k: int) -> tuple[FloatArray, IntArray]:
    """Each donor's weight for ``k`` places, and how many take part (:func:`._ties.shares`).

    Kept on ``donors`` for the last k asked (read-only): a fill asks for them for its
    values, their spread and its log.
    """
    kept = donors.shares.get(int(k))
    if kept is None:
        kept = shares(np.square(donors.distance), donors.count, k)
        for part in kept:
            part.setflags(write=False)
        donors.shares.clear()
        donors.shares[int(k)] = kept
    return kept


def _taking_part(donors: ColumnDonors, k: int) -> tuple[FloatArray, int]:
    """Donor weights for ``k`` places cut to the widest prefix that takes part, and that width.

    Sums over donors run over these columns only: the same donors give the same sums to
    the last bit however long the lists are (a search for a larger k keeps more donors,
    all of weight 0 here, and a longer row is summed in another order).
    """
    w, taken = donor_shares(donors, k)
    cut = int(taken.max(initial=0))
    return w[:, :cut], cut


def donor_values(values: FloatArray, donors: ColumnDonors) -> FloatArray:
    """Donors' raw values of one column, shape (m, w); NaN where there is no donor."""
    got = values[np.maximum(donors.index, 0)].astype(np.float64)
    return np.where(donors.index >= 0, got, np.nan)


def mean_values(
    v: FloatArray, donors: ColumnDonors, ks: Iterable[int], *, inverse_distance: bool
) -> dict[int, FloatArray]:
    """Uniform or inverse-distance mean of each cell's donors for ``k`` places, per k.

    Parameters
    ----------
    v : ndarray of shape (m, w)
        Donors' values (see :func:`donor_values`); padding is ignored.
    donors : ColumnDonors
        Distances and counts aligned with ``v``.
    ks : iterable of int
        Numbers of places (each >= 1).
    inverse_distance : bool
        Weights ``share/d``; when some donor that takes part is at distance 0, only
        those count (by their shares), as scikit-learn's ``KNNImputer(weights="distance")``
        counts only the zero-distance donors.

    Returns
    -------
    dict of int to ndarray of shape (m,)
        NaN where a target has no donor. Donors tied with the k-th share the places
        left (:func:`~imputer_app.engine._ties.shares`); without ties this is the mean
        of the k nearest.
    """
    valid = donors.index >= 0
    v0 = np.where(valid, v, 0.0)
    zero = valid & (donors.distance == 0.0)
    with np.errstate(divide="ignore"):
        inverse = np.where(valid & ~zero, 1.0 / donors.distance, 0.0)
    out: dict[int, FloatArray] = {}
    for k in ks:
        w, cut = _taking_part(donors, k)
        used = _used(donors.count, k)
        with np.errstate(invalid="ignore", divide="ignore"):
            if not inverse_distance:
                out[int(k)] = np.where(used > 0, (w * v0[:, :cut]).sum(axis=1) / used, np.nan)
                continue
            wz = np.where(zero[:, :cut], w, 0.0)
            nz = wz.sum(axis=1)
            by_zero = (wz * v0[:, :cut]).sum(axis=1) / nz
            wd = w * inverse[:, :cut]
            by_weight = (wd * v0[:, :cut]).sum(axis=1) / wd.sum(axis=1)
        out[int(k)] = np.where(used > 0, np.where(nz > 0, by_zero, by_weight), np.nan)
    return out


def median_values(v: FloatArray, donors: ColumnDonors, ks: Iterable[int]) -> dict[int, FloatArray]:
    """Weighted median of each cell's donors for ``k`` places, per k; NaN if none.

    Donors count by their shares (:func:`~imputer_app.engine._ties.weighted_median`);
    without ties this is the median of the k nearest.
    """
    return {int(k): weighted_median(v, donor_shares(donors, k)[0]) for k in ks}


def spread(v: FloatArray, donors: ColumnDonors, k: int) -> FloatArray:
    """Sample standard deviation of the donors for ``k`` places, each counted by its share.

    ``sqrt(sum w (v - mean)^2 / (sum w - 1))`` with ``sum w = min(k, count)``: the usual
    ``ddof=1`` standard deviation of the k nearest when nothing ties; NaN below 2 places.
    """
    w, cut = _taking_part(donors, k)
    used = _used(donors.count, k)
    out = np.full(len(used), np.nan)
    cells = np.flatnonzero(used >= 2)
    if not len(cells):
        return out
    # the common case, every cell: views instead of copies
    many: slice | IntArray = slice(None) if len(cells) == len(used) else cells
    wm, vm = w[many], np.where(w[many] > 0, v[many, :cut], 0.0)
    n = used[many].astype(np.float64)
    mean = (wm * vm).sum(axis=1) / n
    dev = np.where(wm > 0, vm - mean[:, None], 0.0)
    out[many] = np.sqrt((wm * dev * dev).sum(axis=1) / (n - 1))
    return out


def vote(codes: IntArray, donors: ColumnDonors, ks: Iterable[int]) -> dict[int, IntArray]:
    """Class with the most weight among each cell's donors for ``k`` places, per k.

    Donors count by their shares; a tie goes to the tied class with the nearest donor,
    then to the smallest class code (:func:`~imputer_app.engine._ties.weighted_vote`).
    Returns int codes, -1 where there is no donor.
    """
    return {k: win for k, (win, _) in vote_with_share(codes, donors, ks).items()}


def vote_with_share(
    codes: IntArray, donors: ColumnDonors, ks: Iterable[int]
) -> dict[int, tuple[IntArray, FloatArray]]:
    """Like :func:`vote`, also returning the winning class's share of the weight (NaN if none)."""
    got = np.where(donors.index >= 0, codes[np.maximum(donors.index, 0)], -1)
    n_classes = int(max(got.max(initial=-1), codes.max(initial=-1)) + 1)
    d2 = np.square(donors.distance)
    return {int(k): weighted_vote(got, d2, donor_shares(donors, k)[0], n_classes) for k in ks}


@dataclass(frozen=True)
class Finish:
    """Per-cell bounds, censored caps and rounding (NaN / -1 where none).

    Attributes
    ----------
    lower, upper : ndarray of shape (cells,)
        Bounds from the plan.
    cap_lower, cap_upper : ndarray of shape (cells,)
        Limits of censored cells being filled (">2000" gives ``cap_lower``); applied
        after the bounds, so a cap wins over a bound.
    decimals : ndarray of int, shape (cells,)
        Rounding per cell, -1 for none. A censored cell being filled (one with a cap)
        keeps at least two significant digits, like a below-limit stand-in
        (:func:`~imputer_app.plan_rounding.round_stand_ins`), and stays within its cap.
    """

    lower: FloatArray
    upper: FloatArray
    cap_lower: FloatArray
    cap_upper: FloatArray
    decimals: IntArray

    @classmethod
    def of(cls, table: PreparedTable, stack: Stack) -> Finish:
        """The plan's bounds, decimals and censored caps of every cell of ``stack``."""
        plan = table.plan
        # per column, then per cell; only the columns the plan or the table names are
        # looked at (a wide sheet stacks thousands of columns, most with none of these)
        where = {c: i for i, c in enumerate(stack.columns)}
        n_cols = len(stack.columns)
        low, high = np.full(n_cols, np.nan), np.full(n_cols, np.nan)
        for c, (lo, hi) in plan.bounds.items():
            if c in where:
                low[where[c]] = np.nan if lo is None else lo
                high[where[c]] = np.nan if hi is None else hi
        rounded = np.full(n_cols, -1, dtype=np.intp)
        for c, d in (*plan.decimals.items(), *table.decimals.items()):  # the table's win
            if c in where:
                rounded[where[c]] = d
        lower, upper, decimals = low[stack.col], high[stack.col], rounded[stack.col]
        cap_hi, cap_lo = np.full(len(stack.col), np.nan), np.full(len(stack.col), np.nan)
        for c in {*table.cap_upper, *table.cap_lower}:
            if c not in where:
                continue
            i = where[c]
            cells = slice(stack.offsets[i], stack.offsets[i + 1])
            rows = stack.donors.rows[cells]
            if c in table.cap_upper:
                cap_hi[cells] = table.cap_upper[c][rows]
            if c in table.cap_lower:
                cap_lo[cells] = table.cap_lower[c][rows]
        return cls(lower, upper, cap_lo, cap_hi, decimals)

    def apply(self, raw: FloatArray) -> FloatArray:
        """Clip to the bounds, then to the censored caps, then round (NaN stays NaN)."""
        out = raw
        with np.errstate(invalid="ignore"):  # comparisons with NaN limits are False
            for lower, upper in ((self.lower, self.upper), (self.cap_lower, self.cap_upper)):
                out = np.where(out < lower, lower, out)
                out = np.where(out > upper, upper, out)
        capped = np.isfinite(self.cap_lower) | np.isfinite(self.cap_upper)
        for d in np.unique(self.decimals[self.decimals >= 0]).tolist():
            sel = self.decimals == d
            out[sel & ~capped] = np.round(out[sel & ~capped], d)
            if capped.any():  # below a limit: 0.012 under <0.02 must not become 0.01
                cells = sel & capped
                kept = round_stand_ins(out[cells], d)
                inside = np.fmax(np.fmin(kept, self.cap_upper[cells]), self.cap_lower[cells])
                out[cells] = np.where(np.isnan(kept), kept, inside)  # fmin would turn NaN into the cap
        return out


def stack_values(table: PreparedTable, stack: Stack) -> FloatArray:
    """Donors' raw values of every cell of a stack of numeric columns, (cells, kmax); NaN pads."""
    return np.asarray(stack.gather([table.values[c] for c in stack.columns]), dtype=np.float64)


def number_values(
    table: PreparedTable, stack: Stack, ks: Iterable[int], v: FloatArray | None = None
) -> dict[int, FloatArray]:
    """Finished fill values of every cell of a stack of numeric columns, per k.

    ``v`` is :func:`stack_values` when the caller has it already.
    """
    v = stack_values(table, stack) if v is None else v
    plan = table.plan
    if plan.neighbour_weighting == "inverse_distance":
        raw = mean_values(v, stack.donors, ks, inverse_distance=True)
    elif plan.numeric_rule == "median":
        raw = median_values(v, stack.donors, ks)
    else:
        raw = mean_values(v, stack.donors, ks, inverse_distance=False)
    finish = Finish.of(table, stack)
    return {k: finish.apply(vals) for k, vals in raw.items()}


def combine(
    table: PreparedTable, donors: Mapping[str, ColumnDonors], ks: Iterable[int]
) -> dict[int, dict[str, NDArray[np.generic]]]:
    """Fill value of every target for every k, using the plan's rule.

    Parameters
    ----------
    table : PreparedTable
        From :func:`~imputer_app.engine.prepare`.
    donors : mapping of str to ColumnDonors
        From :func:`~imputer_app.engine.nearest_donors` (kmax >= max(ks) gives exact
        results; a smaller kmax uses the donors available).
    ks : iterable of int
        Each >= 1.

    Returns
    -------
    dict of int to (dict of str to ndarray of shape (m,))
        Per k and fill column, aligned with ``donors[col].rows``: numbers (float, after
        bounds, caps and rounding; NaN when no donor) or class codes (int, -1 when no
        donor).
    """
    ks = sorted({int(k) for k in ks})
    if any(k < 1 for k in ks):
        raise ValueError(f"every k must be at least 1; got {ks}")
    out: dict[int, dict[str, NDArray[np.generic]]] = {k: {} for k in ks}
    numbers = [c for c in donors if table.kinds[c] == "number"]
    if numbers:
        stack = Stack.of(donors, numbers)
        for k, values in number_values(table, stack, ks).items():
            out[k].update(stack.split(values))
    for col in (c for c in donors if table.kinds[c] != "number"):
        for k, codes in vote(np.asarray(table.values[col], dtype=np.intp), donors[col], ks).items():
            out[k][col] = codes
    return {k: {c: out[k][c] for c in donors} for k in ks}
