"""Exact nearest candidates of target rows, block by block (numpy only).

Target rows are taken in chunks and candidate rows in tiles, so that one distance
block (chunk x tile) fits a byte budget. Each target row keeps its ``size`` nearest
candidates in exact (distance, row) order: the first candidates are searched with a
partial sort; after that one matrix product per tile gives ``(d^2 - bound) x W_shared``
and only the few negative entries (nearer than the current ``size``-th) are gathered,
their exact distances computed and merged. Tiles after the head grow with the number of
candidates already searched, so the bound tightens early and the gathered entries stay
near ``size x ln(n / HEAD)`` per row: the cost that grows with ``size`` stays small next
to the matrix products, which do not depend on it. Self-matches and rows of another
group are never candidates; rows sharing no similarity column have no distance.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from concurrent.futures import Executor, wait
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._bits import count_distinct
from imputer_app.engine._distance import Candidates, DistanceModel, Targets
from imputer_app.work import WORKERS, CancelFlag, raise_if_cancelled

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]


# ---------------------------------------------------------------- exact top-L
def _sorted_top(values: FloatArray, index: IntArray, size: int) -> tuple[IntArray, FloatArray]:
    """Per row, the ``size`` smallest ``values`` in (value, index) order.

    ``index`` (same shape) must ascend along each row; ties then keep row order.
    """
    order = np.argsort(values, axis=1, kind="stable")[:, :size]
    return np.take_along_axis(index, order, axis=1), np.take_along_axis(values, order, axis=1)


def top_l(block: FloatArray, size: int) -> tuple[IntArray, FloatArray]:
    """Column positions and values of the ``size`` smallest per row, exact (value, position) order.

    Parameters
    ----------
    block : ndarray of shape (m, n)
        Squared distances (``inf`` = not a donor).
    size : int
        How many to keep per row.

    Returns
    -------
    index : ndarray of int, shape (m, min(size, n))
    values : ndarray of shape (m, min(size, n))
    """
    n = block.shape[1]
    if size >= n:
        return _sorted_top(block, np.broadcast_to(np.arange(n), block.shape), n)
    part = np.argpartition(block, size - 1, axis=1)[:, :size]
    vals = np.take_along_axis(block, part, axis=1)
    kth = vals.max(axis=1, keepdims=True)
    # a value equal to the boundary left outside could have a smaller position: redo those rows
    tied = np.isfinite(kth[:, 0]) & ((block == kth).sum(axis=1) > (vals == kth).sum(axis=1))
    part.sort(axis=1)
    vals = np.take_along_axis(block, part, axis=1)
    idx, val = _sorted_top(vals, part, size)
    if tied.any():
        sub = block[tied]
        idx[tied], val[tied] = _sorted_top(sub, np.broadcast_to(np.arange(n), sub.shape), size)
    return idx, val


def _merge(
    best: tuple[IntArray, FloatArray], rows: IntArray, index: IntArray, d2: FloatArray, size: int
) -> tuple[IntArray, FloatArray]:
    """Merge new candidates (flat, rows ascending, then index ascending) into the sorted lists.

    Every new index is larger than the indices already kept, so a stable sort by
    distance of [kept | new] keeps the exact (distance, row) order.
    """
    m = best[0].shape[0]
    counts = np.bincount(rows, minlength=m)
    width = int(counts.max(initial=0))
    if width == 0:
        return best
    pos = np.arange(len(rows)) - (np.cumsum(counts) - counts)[rows]
    new_idx = np.full((m, width), -1, dtype=np.intp)
    new_d2 = np.full((m, width), np.inf)
    new_idx[rows, pos] = index
    new_d2[rows, pos] = d2
    return _sorted_top(np.hstack([best[1], new_d2]), np.hstack([best[0], new_idx]), size)


# ---------------------------------------------------------------- block loop
#: First candidates of a chunk searched exactly; their ``size``-th distance bounds the rest.
HEAD = 2048
#: A later tile holds this share of the candidates searched before it (at least ``STEP_MIN``).
#: A candidate after ``start`` others is a hit with chance about ``size / start``; small
#: steps tighten the bound sooner, but each step costs a merge (measured: 0.25 best).
GROW = 0.25
STEP_MIN = 256
#: Slack on the bound so that rounding never drops a candidate (the merge decides exactly).
SLACK = 1.0 + 1e-9
#: Seconds between progress reports while a symmetric block is summed on the workers.
PROGRESS_SECONDS = 0.1
#: Stand-in bound while a row has fewer than ``size`` candidates: every row sharing a column passes.
OPEN = 1e300


@dataclass(frozen=True)
class BlockSearch:
    """Nearest-candidate search over distance blocks of a bounded size.

    Parameters
    ----------
    model : DistanceModel
    groups : ndarray of int, shape (n_rows,), or None
        Group codes; rows of another group are never candidates.
    budget : int
        Bytes for one block and its temporaries.
    """

    model: DistanceModel
    groups: IntArray | None
    budget: int

    def sizes(self, n_cand: int) -> tuple[int, int]:
        """Rows per chunk and candidates per tile for the byte budget."""
        per_cell = 8 * 4  # the block and its temporaries
        tile = max(256, min(n_cand, self.budget // (per_cell * 256)))
        width = self.model.factor_width
        chunk = max(16, min(1024, self.budget // (per_cell * max(tile, 1)), self.budget // (8 * width)))
        return chunk, max(tile, 1)

    def _exclude(self, block: FloatArray, rows: IntArray, ids: IntArray) -> None:
        """Set self-matches and rows of other groups to inf (never donors)."""
        self_hit = np.flatnonzero((rows >= ids[0]) & (rows <= ids[-1]))
        if len(self_hit):
            at = np.searchsorted(ids, rows[self_hit])
            ok = ids[np.minimum(at, len(ids) - 1)] == rows[self_hit]
            block[self_hit[ok], at[ok]] = np.inf
        if self.groups is not None:
            block[self.groups[rows][:, None] != self.groups[ids][None, :]] = np.inf

    def squares(self, rows: IntArray, cand: IntArray) -> bool:
        """Whether :meth:`among` suits ``rows`` against the candidates ``cand``.

        The symmetric block over both sets costs about half the work per pair of the
        row-by-row products (:meth:`DistanceModel.gram`), so it pays when the targets
        and candidates are mostly the same rows; it must fit the byte budget (counted:
        8 blocks of that size per worker's sums and products live at once).
        """
        n = count_distinct(rows, cand)
        return 8 * WORKERS * 8 * n * n <= self.budget and n * n <= 2 * len(rows) * len(cand)

    def among(
        self,
        rows: IntArray,
        cand: IntArray,
        pool: Executor,
        workers: int,
        cancel: CancelFlag | None,
        advance: Callable[[int], None] | None = None,
    ) -> FloatArray:
        """Squared distances from ``rows`` to the candidates ``cand``, from one symmetric block.

        The block covers every row of either set; its column slabs are shared out over
        ``workers`` tasks on ``pool``, each summing its own (a fixed order: the same
        numbers every run with the same ``workers``; other counts differ in the last bits,
        which the exact distances of the kept donors do not inherit). ``advance(n)`` is
        called on this thread as slabs finish.
        Self-matches and rows of other groups are set to ``inf``.

        Returns
        -------
        ndarray of shape (len(rows), len(cand))
        """
        union = np.union1d(rows, cand)
        slabs = self.model.slabs(workers)
        finished: list[int] = []  # one entry per slab done (list.append is atomic)

        def part(share: list[tuple[IntArray, float | None]]) -> tuple[FloatArray, FloatArray]:
            total, shared = np.zeros((len(union), len(union))), np.zeros((len(union), len(union)))
            for cols, weight in share:
                raise_if_cancelled(cancel)
                t, s = self.model.gram(union, cols, weight)
                total += t
                shared += s
                finished.append(1)
            return total, shared

        raise_if_cancelled(cancel)
        futures = [pool.submit(part, slabs[i::workers]) for i in range(workers)]
        told = 0
        while told < len(slabs):
            done, _ = wait(futures, timeout=PROGRESS_SECONDS)
            now = len(finished)
            if advance is not None and now > told:
                advance(now - told)
            told = now
            if len(done) == len(futures):
                break
        sums = [f.result() for f in futures]  # raises a worker's error (a cancel) here
        total, shared = sums[0]
        for t, s in sums[1:]:
            total += t
            shared += s
        d2 = self.model.square(union, total, shared)
        block = d2[np.ix_(np.searchsorted(union, rows), np.searchsorted(union, cand))]
        self._exclude(block, rows, cand)
        return block

    def nearest(
        self, rows: IntArray, cand: Candidates, size: int, tile: int, cancel: CancelFlag | None
    ) -> tuple[IntArray, FloatArray]:
        """Exact ``size`` nearest candidates (row positions, squared distances) of ``rows``.

        The first ``max(HEAD, 4 size)`` candidates are searched with a partial sort; after that one
        matrix product per tile gives ``d^2 - bound`` (times the shared weight) and only
        the candidates below the current ``size``-th distance are gathered and merged.
        Tiles grow from a quarter of the candidates searched so far up to ``tile``.

        Returns
        -------
        index : ndarray of int, shape (m, min(size, n_candidates))
        d2 : ndarray of shape (m, min(size, n_candidates))
            Nearest first, ties by row; -1 / inf pad rows with fewer candidates.
        """
        raise_if_cancelled(cancel)
        targets = self.model.targets(rows)
        head = min(len(cand), tile, max(HEAD, 4 * size))
        best = (np.full((len(rows), 0), -1, dtype=np.intp), np.full((len(rows), 0), np.inf))
        if head:
            block = self.model.block(targets, cand, slice(0, head))
            self._exclude(block, rows, cand.index[:head])
            idx, val = top_l(block, size)
            best = (cand.index[:head][idx], val)
        start = head
        buffer = np.empty(len(rows) * min(tile, max(len(cand) - head, 0)))
        while start < len(cand):
            raise_if_cancelled(cancel)
            stop = min(start + min(tile, max(STEP_MIN, int(start * GROW))), len(cand))
            out = buffer[: len(rows) * (stop - start)].reshape(len(rows), stop - start)
            best = self._gather(best, targets, cand, slice(start, stop), size, out)
            start = stop
        return best

    def _gather(
        self,
        best: tuple[IntArray, FloatArray],
        targets: Targets,
        cand: Candidates,
        part: slice,
        size: int,
        out: FloatArray,
    ) -> tuple[IntArray, FloatArray]:
        """Merge every candidate of ``part`` nearer than the current bound into ``best``.

        ``out`` (shape (m, n_part)) receives the tile's product.
        """
        rows = targets.rows
        full = best[1].shape[1] >= size
        bound = best[1][:, -1] * SLACK if full else np.full(len(rows), np.inf)
        bound = np.where(np.isfinite(bound), bound, OPEN)
        ids = cand.index[part]
        excess = self.model.excess(targets, bound, cand, part, out)
        self._exclude(excess, rows, ids)
        width = excess.shape[1]
        hit = np.flatnonzero(excess < 0.0)  # no shared column: 0, never below
        r, c = np.divmod(hit, width)
        counts = np.bincount(r, minlength=len(rows))
        heavy = counts > 8 * size + 64  # few candidates so far: sort those rows directly
        if heavy.any():
            h = np.flatnonzero(heavy)
            block = self.model.block(targets.subset(h), cand, part)
            self._exclude(block, rows[h], ids)
            idx, val = top_l(block, size)
            merged = _merge((best[0][h], best[1][h]), *_flat(idx.shape, ids[idx], val), size)
            best = _put(best, h, merged, size)
            light = ~heavy[r]
            r, c = r[light], c[light]
        if len(r):
            best = _merge(best, r, ids[c], self.model.pairs(targets, r, ids[c]), size)
        return best


def _flat(shape: tuple[int, ...], index: IntArray, d2: FloatArray) -> tuple[IntArray, IntArray, FloatArray]:
    """A (m, w) candidate list as flat (row, index, d2), dropping inf entries."""
    rows = np.repeat(np.arange(shape[0]), shape[1])
    keep = np.isfinite(d2.ravel())
    return rows[keep], index.ravel()[keep], d2.ravel()[keep]


def _put(
    best: tuple[IntArray, FloatArray], rows: IntArray, part: tuple[IntArray, FloatArray], size: int
) -> tuple[IntArray, FloatArray]:
    """``best`` with ``rows`` replaced by ``part`` (both padded to ``size`` columns)."""
    idx, d2 = _pad(best, size)
    pidx, pd2 = _pad(part, size)
    idx[rows], d2[rows] = pidx, pd2
    return idx, d2


def _pad(lists: tuple[IntArray, FloatArray], size: int) -> tuple[IntArray, FloatArray]:
    idx, d2 = lists
    if idx.shape[1] >= size:
        return idx.copy(), d2.copy()
    extra = size - idx.shape[1]
    return (
        np.hstack([idx, np.full((len(idx), extra), -1, dtype=np.intp)]),
        np.hstack([d2, np.full((len(d2), extra), np.inf)]),
    )


def chunks(rows: IntArray, chunk: int) -> Iterator[IntArray]:
    """Consecutive runs of ``chunk`` rows."""
    for start in range(0, len(rows), chunk):
        yield rows[start : start + chunk]
