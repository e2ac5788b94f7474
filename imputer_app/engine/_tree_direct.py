"""The tree path's direct comparison with the rows of small candidate patterns (numpy only).

Candidate patterns too small for a k-d tree of their own are compared with a batch of
target rows (one target pattern) directly: a matrix product gives Dixon's ``d^2`` in
product form, ``[t^2 | t | 1] . f [m | -2c | sum c^2]`` (gaps 0), with each candidate's
factor ``f = W_all / W_S`` folded into its side, and one comparison with each row's reach
keeps the few pairs that matter.

Most pairs are never formed. Along one column ``a`` that target and candidate both have,
``d^2 = f x sum_S (x_j - y_j)^2 >= f_min x (x_a - y_a)^2`` (coordinates are scaled by
``sqrt(w_j)``; ``f_min >= 1`` is the least factor among the candidates swept along ``a``),
so a candidate further than ``sqrt(reach / f_min)`` from a target along ``a`` cannot be
within its reach. Candidates are sorted along ``a`` and targets,
in blocks sorted along ``a`` too, meet only the window of candidates their block can
reach (the sort-and-sweep of computational geometry; common practice, no source).
Each candidate is swept along the first column it has, taking columns by how many
candidates have them, so a candidate with gaps is windowed too.

The products within a window are first made in single precision (twice as fast), with
each target's reach widened by the most that precision can err (:func:`rough_hits`); the few
pairs that pass are measured again in double precision and kept only within the reach.
Values too large for single precision's range skip that first pass.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._patterns import Layout

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
Single = NDArray[np.float32]

#: Target rows per block (sorted along the sweep column: a block's window stays narrow).
TARGETS = 128
#: Fewest target rows per block (a product of fewer rows costs more per pair than it saves).
FEWEST = 8
#: Candidate rows per matrix product (the product stays in the processor's cache).
CANDIDATES = 2048
#: Largest magnitude either side of the product may have for a first pass in single
#: precision (products stay far below its overflow, 3.4e38).
ROUGH_MAX = 1e15


@dataclass(frozen=True)
class Run:
    """Candidates swept along one column: sorted by their value in it."""

    column: int  # position among the targets' columns
    key: FloatArray  # the candidates' values in it, ascending
    right: FloatArray  # their side of the product, same order
    cand: IntArray  # their rows, same order
    by_row: IntArray  # the order of ``cand`` by row (to find a target row among them)
    least: float  # the least factor ``W_all / W_S`` among them
    rough: Single | None  # ``right`` in single precision for a first pass (None: too large)
    most: FloatArray  # the largest ``|right|`` per column (bounds the first pass's rounding)


@dataclass(frozen=True)
class Sweep:
    """The candidates of one target pattern, ready for every batch of its targets."""

    columns: IntArray
    runs: tuple[Run, ...]


def sweep_of(lay: Layout, bits: int, rows: IntArray) -> Sweep:
    """Prepare candidate ``rows`` (each sharing a column with pattern ``bits``) for :func:`direct_hits`.

    Each candidate is swept along the first column it has, taking columns by how many
    candidates have them.
    """
    cols = lay.columns(bits)
    c, m = lay.x[np.ix_(rows, cols)], lay.mask[np.ix_(rows, cols)]
    f = lay.total / (m @ lay.weights[cols])  # the rows share a column (by pattern)
    right = np.hstack([m, -2.0 * c, np.einsum("ij,ij->i", c, c)[:, None]]) * f[:, None]
    by = np.argsort(-m.sum(axis=0), kind="stable")
    sweep = by[np.argmax(m[:, by], axis=1)]
    runs = []
    for a in by.tolist():
        mine = np.flatnonzero(sweep == a)
        if len(mine):
            mine = mine[np.argsort(c[mine, a], kind="stable")]
            by_row = np.argsort(rows[mine], kind="stable")
            side = right[mine]
            most = np.abs(side).max(axis=0)
            rough = side.astype(np.float32) if most.max() <= ROUGH_MAX else None
            runs.append(Run(a, c[mine, a], side, rows[mine], by_row, float(f[mine].min()), rough, most))
    return Sweep(cols, tuple(runs))


def direct_hits(
    lay: Layout, sweep: Sweep, batch: IntArray, reach: FloatArray, size: int, noise: float
) -> tuple[IntArray, IntArray, FloatArray]:
    """The pairs of ``batch`` (target rows of one pattern) and the candidates of ``sweep`` within reach.

    Parameters
    ----------
    lay : Layout
        The similarity columns as coordinates.
    sweep : Sweep
        The candidates (:func:`sweep_of`) of the targets' pattern.
    batch : ndarray of int
        Target rows.
    reach : ndarray of float, shape (len(batch),)
        Each target's largest ``d^2`` of interest; ``inf`` asks for the nearest ``size``
        of every block of candidates instead.
    size : int
        Places in each target's list (for the targets without a reach).
    noise : float
        Rounding allowance of the product form (added to the ``size``-th distance).

    Returns
    -------
    at, index, d2 : ndarray
        Target position in ``batch``, candidate row and ``d^2`` (product form, at least 0)
        of each pair kept; never a row with itself.
    """
    t = lay.x[np.ix_(batch, sweep.columns)]
    left = np.hstack([t * t, t, np.ones((len(batch), 1))])
    found: list[tuple[IntArray, IntArray, FloatArray]] = []
    for run in sweep.runs:
        found += _sweep(left, t[:, run.column], run, batch, reach, size, noise)
    return joined(found)


def joined(found: list[tuple[IntArray, IntArray, FloatArray]]) -> tuple[IntArray, IntArray, FloatArray]:
    """Pieces of (target, candidate, ``d^2``) pairs as one set of three arrays (empty: none)."""
    if not found:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp), np.zeros(0)
    return tuple(np.concatenate(x) for x in zip(*found, strict=True))  # type: ignore[return-value]


def _sweep(
    left: FloatArray,
    along: FloatArray,
    run: Run,
    batch: IntArray,
    reach: FloatArray,
    size: int,
    noise: float,
) -> list[tuple[IntArray, IntArray, FloatArray]]:
    """The pairs within reach of the targets (``left`` rows; ``along`` in the run's column) and a run."""
    key, right, cand, by_row = run.key, run.right, run.cand, run.by_row
    rough = run.rough if run.rough is not None and np.abs(left).max(initial=0.0) <= ROUGH_MAX else None
    if rough is not None:  # the first pass's rounding, at most, per target
        rough_left = left.astype(np.float32)
        slack = rough_slack(left, run.most)
    # each target row's own place among the candidates, or -1
    at = np.minimum(np.searchsorted(cand[by_row], batch), len(cand) - 1)
    own = np.where(cand[by_row[at]] == batch, by_row[at], -1)

    def products(block: IntArray, lo: int, hi: int) -> FloatArray:
        """``d^2`` of a block of targets and the candidates at sweep places ``lo:hi`` (a row itself: inf)."""
        d2 = left[block] @ right[lo:hi].T  # a slice: no copy of the candidates' side
        mine = np.flatnonzero((own[block] >= lo) & (own[block] < hi))
        d2[mine, own[block][mine] - lo] = np.inf
        return d2

    found: list[tuple[IntArray, IntArray, FloatArray]] = []
    for block in _blocks(along, reach):
        near_reach = reach[block]
        if not np.isfinite(near_reach).all():  # a list not full: its reach from the nearest along ``a``
            near_reach = _seed(products, block, along[block], key, size, noise)
        lim = float(near_reach.max())
        if np.isfinite(lim):
            half = np.sqrt(lim / run.least) * (1 + 1e-9) + 1e-300
            lo = np.searchsorted(key, along[block].min() - half)
            hi = np.searchsorted(key, along[block].max() + half, "right")
        else:
            lo, hi = 0, len(key)
        for start in range(lo, hi, CANDIDATES):
            stop = min(start + CANDIDATES, hi)
            if np.isfinite(lim) and rough is not None:
                sides = (left[block], rough_left[block], right[start:stop], rough[start:stop])
                r, k, d2 = rough_hits(*sides, near_reach, slack[block], batch[block], cand[start:stop])
                found.append((block[r], cand[start + k], d2))
                continue
            d2 = products(block, start, stop)
            if np.isfinite(lim):
                near = d2 <= near_reach[:, None]
            else:  # fewer candidates than places: the nearest ``size`` of each run
                kth = min(size, d2.shape[1]) - 1
                near = d2 <= np.partition(d2, kth, axis=1)[:, kth : kth + 1] + noise
            r, k = np.divmod(np.flatnonzero(near), near.shape[1])  # quicker than nonzero when few
            if len(r):
                found.append((block[r], cand[start + k], np.maximum(d2[r, k], 0.0)))
    return found


def rough_hits(
    left: FloatArray,
    left32: Single,
    right: FloatArray,
    right32: Single,
    reach: FloatArray,
    slack: FloatArray,
    targets: IntArray,
    cand: IntArray,
) -> tuple[IntArray, IntArray, FloatArray]:
    """The pairs (target position, candidate position, ``d^2``) within ``reach``, never a row with itself.

    The sides come in double precision and in single (``left32``, ``right32``). Pairs are
    chosen in single precision with each reach widened by ``slack``, the most that product
    may err (:func:`rough_slack`), so none within reach is missed; those chosen are
    measured again in double precision and kept only within ``reach``. ``targets`` and
    ``cand`` are the rows of the two sides.
    """
    rough = left32 @ right32.T
    wide = reach + slack
    bar = wide.astype(np.float32)
    bar = np.where(bar < wide, np.nextafter(bar, np.float32(np.inf)), bar)  # never rounded down
    i, k = np.divmod(np.flatnonzero(rough <= bar[:, None]), rough.shape[1])
    d2 = np.einsum("ij,ij->i", left[i], right[k])
    keep = (d2 <= reach[i]) & (cand[k] != targets[i])
    return i[keep], k[keep], np.maximum(d2[keep], 0.0)


def rough_slack(left: FloatArray, most: FloatArray) -> FloatArray:
    """The most a single-precision product of each row of ``left`` with sides bounded by ``most`` can err.

    For a dot product of ``n`` terms ``(n + 2) u sum |l_j| |r_j|`` with ``u = 2^-24`` (the
    rounding of both sides and of the sum; Higham, *Accuracy and Stability of Numerical
    Algorithms*, 2nd ed., section 3.1, recalled from memory), taken twice. Values and
    products under single precision's normal range (``2^-126``) may become 0 (processors
    that flush them): at most ``2^-126`` times the other side's entry, or ``2^-126``, per
    term, also taken twice.
    """
    n, size = left.shape[1], np.abs(left)
    tiny = 2.0**-125 * (size.sum(axis=1) + most.sum() + n)
    return (n + 2) * 2.0**-23 * (size @ most) + tiny


def _seed(
    products: Callable[[IntArray, int, int], FloatArray],
    block: IntArray,
    along: FloatArray,
    key: FloatArray,
    size: int,
    noise: float,
) -> FloatArray:
    """Each row's ``size``-th ``d^2`` among the :data:`CANDIDATES` candidates nearest its block along ``a``.

    Any ``size`` candidates bound the ``size``-th nearest from above, so every candidate
    the row needs is within this reach (``inf`` when there are no more than ``size``).
    """
    if len(key) <= size:  # a row itself may be among them
        return np.full(len(block), np.inf)
    mid = int(np.searchsorted(key, np.median(along)))
    lo = max(0, min(mid - CANDIDATES // 2, len(key) - CANDIDATES))
    d2 = products(block, lo, min(lo + CANDIDATES, len(key)))
    return np.partition(d2, size - 1, axis=1)[:, size - 1] + noise


def _blocks(along: FloatArray, reach: FloatArray) -> Iterator[IntArray]:
    """Target positions in blocks (at most :data:`TARGETS`) sorted along the sweep column; unbounded apart."""
    bounded = np.isfinite(reach)
    for group in (np.flatnonzero(bounded), np.flatnonzero(~bounded)):
        group = group[np.argsort(along[group], kind="stable")]
        # a few rows spread over the whole column make narrow windows only in small blocks
        step = min(TARGETS, max(FEWEST, len(group) // 16))
        for i in range(0, len(group), step):
            yield group[i : i + step]
