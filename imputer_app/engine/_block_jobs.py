"""The block search's jobs: dense fill columns together, each sparse column alone (numpy only).

Every job compares its target rows with all its candidates in blocks
(:class:`~imputer_app.engine._nearest.BlockSearch`), chunk by chunk on a pool of
threads, and gives every target cell its first donors from its row's list; cells short
of donors or tied past their list are searched again among their own column's donors,
twice as widely each round (:meth:`BlockJobs._widen`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._blas import one_blas_thread
from imputer_app.engine._exact import exact_cells, exact_lists, still_open
from imputer_app.engine._nearest import BlockSearch, chunks, top_l
from imputer_app.work import WORKERS, CancelFlag, Progress, raise_if_cancelled, report

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]
#: Stores cells' donors: columns, rows, donor rows, squared distances.
Put = Callable[[IntArray, IntArray, IntArray, FloatArray], None]
#: Cells of one chunk: column, row, donors, squared distances, short of kmax donors.
_Found = tuple[IntArray, IntArray, IntArray, FloatArray, BoolArray]

#: A column whose donors are fewer than this share of all candidates is searched alone; the
#: tree search leaves such columns to the block search (its lists would need to be long).
DENSE_SHARE = 0.3


def first_positions(good: BoolArray, kmax: int) -> IntArray:
    """Positions of the first ``kmax`` True entries per row of ``good`` (cells, L); -1 pads."""
    head = min(kmax, good.shape[1])
    pos = np.broadcast_to(np.arange(head), (len(good), head)).copy()
    # most cells' first kmax candidates are all donors; only the others need a sort
    redo = np.flatnonzero(~good[:, :head].all(axis=1))
    if len(redo):
        sub = good[redo]
        at = np.argsort(~sub, axis=1, kind="stable")[:, :head]
        pos[redo] = np.where(np.take_along_axis(sub, at, axis=1), at, -1)
    if head < kmax:
        pos = np.hstack([pos, np.full((len(pos), kmax - head), -1, dtype=np.intp)])
    return pos


def extra_donors(kmax: int) -> int:
    """Donors kept beyond ``kmax``: the widened search finds longer ties (cheaper than keeping more)."""
    return 1 + kmax // 8


@dataclass(frozen=True)
class _Job:
    """One search: target ``rows`` for the fill columns ``cols``.

    Its candidates (rows observed in any of ``cols``) are found again when it runs: one
    job per sparse column, all planned up front, would otherwise hold them all at once.
    """

    cols: IntArray
    rows: IntArray
    chunk: int
    tile: int
    square: bool  # one symmetric block (BlockSearch.among) instead of row-by-row products
    steps: int  # progress steps: one per chunk, plus one per slab of a symmetric block


@dataclass
class BlockJobs:
    """The searches to run: dense columns together, each sparse column alone."""

    search: BlockSearch
    want: BoolArray
    ok: BoolArray
    kmax: int
    active: IntArray
    dense: IntArray = field(init=False)
    sparse: IntArray = field(init=False)
    keep: int = field(init=False)

    def __post_init__(self) -> None:
        self.keep = self.kmax + extra_donors(self.kmax)
        donors = self.ok[:, self.active].sum(axis=0)
        total = max(int(self.ok[:, self.active].any(axis=1).sum()), 1)
        self.dense = self.active[donors >= DENSE_SHARE * total]
        self.sparse = self.active[donors < DENSE_SHARE * total]

    def run(self, put: Put, progress: Progress | None, cancel: CancelFlag | None) -> int:
        """Search, reporting progress per chunk (and per slab of a symmetric block).

        Open cells (short of donors, or tied past their list) are searched again
        (:meth:`_widen`). Returns the number of progress steps (the last is reported by
        the caller).
        """
        jobs: list[_Job] = []
        if len(self.dense):
            jobs.append(self._job(self.dense, np.flatnonzero(self.want[:, self.dense].any(axis=1))))
        jobs += [self._job(np.array([j]), np.flatnonzero(self.want[:, j])) for j in self.sparse]
        total = sum(job.steps for job in jobs) + 1
        done = 0

        def advance(steps: int) -> None:
            nonlocal done
            done += steps
            report(progress, done, total)

        short: list[tuple[IntArray, IntArray]] = []
        with one_blas_thread():
            pool = ThreadPoolExecutor(max_workers=WORKERS, thread_name_prefix="kinfill-search")
            try:
                for job in jobs:
                    for miss in self._search_job(pool, put, job, cancel, advance):
                        short += [miss] if len(miss[0]) else []
                        advance(1)
            finally:  # on an error or a cancel, chunks not started are dropped
                pool.shutdown(wait=True, cancel_futures=True)
            if short:
                col, row = (np.concatenate(a) for a in zip(*short, strict=True))
                self._widen(put, col, row, cancel)
        return total

    def _job(self, cols: IntArray, rows: IntArray) -> _Job:
        """Plan the search of ``rows`` for the columns ``cols``.

        At least one chunk per worker when rows allow; a symmetric block adds one
        progress step per column slab.
        """
        index = np.flatnonzero(self.ok[:, cols].any(axis=1))
        chunk, tile = self.search.sizes(len(index))
        if len(rows) >= 32 * WORKERS:
            chunk = min(chunk, math.ceil(len(rows) / WORKERS))
        square = self.search.squares(rows, index)
        slabs = len(self.search.model.slabs(WORKERS)) if square else 0
        steps = max(1, math.ceil(len(rows) / chunk)) + slabs
        return _Job(cols, rows, chunk, tile, square, steps)

    def _search_job(
        self,
        pool: ThreadPoolExecutor,
        put: Put,
        job: _Job,
        cancel: CancelFlag | None,
        advance: Callable[[int], None],
    ) -> Iterator[tuple[IntArray, IntArray]]:
        """Search one job chunk by chunk; yield each chunk's open cells.

        Chunks are searched, and their cells given donors, on the pool's threads (numpy
        and BLAS release the GIL); the results are stored in order here. ``advance`` is
        told of every slab of a symmetric block as it is done.
        """
        cols, rows = job.cols, job.rows
        index = np.flatnonzero(self.ok[:, cols].any(axis=1))
        length = self._list_size(cols, index)
        everyone = length >= len(index)  # every candidate is kept: nothing more to find
        if job.square:
            block = self.search.among(rows, index, pool, WORKERS, cancel, advance)

            def from_block(at: IntArray) -> _Found:
                raise_if_cancelled(cancel)
                idx, d2 = top_l(block[at], length)
                return self._donors(cols, rows[at], (index[idx], d2), everyone)

            found = pool.map(from_block, chunks(np.arange(len(rows)), job.chunk))
        else:
            cand = self.search.model.candidates(index)

            def search(part: IntArray) -> _Found:
                best = self.search.nearest(part, cand, length, job.tile, cancel)
                return self._donors(cols, part, best, everyone)

            found = pool.map(search, chunks(rows, job.chunk))
        for col, row, idx, d2, short in found:
            put(col, row, idx, d2)
            yield col[short], row[short]

    def _donors(
        self, cols: IntArray, part: IntArray, best: tuple[IntArray, FloatArray], everyone: bool
    ) -> _Found:
        """The donors of every target cell of ``part`` from its rows' candidate lists ``best``.

        Each cell keeps its first ``keep`` donors in the list's (search) order; their
        distances are then made exact where rounding matters and re-sorted. Returns the
        cells (column, row), their donors and squared distances, and which cells are open
        (:func:`~imputer_app.engine._exact.still_open`: the next donor, or the first one
        past a full list, might tie; never past the list when ``everyone``: the lists
        hold every candidate).
        """
        r, j = np.nonzero(self.want[np.ix_(part, cols)])
        col = cols[j]
        lists, ld2 = best
        ok = self.ok[np.maximum(lists[r], 0), col[:, None]] & np.isfinite(ld2[r])
        pos = first_positions(ok, self.keep + 1)  # one more: the next donor
        width = ld2.shape[1]
        past = ld2[r, -1] if width and not everyone else np.full(len(r), np.inf)
        beyond = np.where(pos[:, -1] >= 0, ld2[r, np.maximum(pos[:, -1], 0)], past)
        idx, d2 = exact_cells(self.search.model, part, lists, ld2, r, pos[:, : self.keep])
        count = (idx >= 0).sum(axis=1)
        return col, part[r], idx, d2, still_open(d2, count, self.kmax, beyond, self.search.model.noise)

    def _list_size(self, cols: IntArray, cand: IntArray) -> int:
        """Candidates kept per row so that nearly every cell finds kmax donors among them."""
        # the fewest donors of a column among the candidates, as a share of them
        donors = np.take(np.take(self.ok, cand, axis=0), cols, axis=1)
        share = int(np.count_nonzero(donors, axis=0).min(initial=len(cand))) / len(cand) if len(cand) else 1.0
        # expected donors in the list: share x length; a cell short of kmax is searched again
        return min(len(cand), math.ceil(self.keep / max(share, 1e-9) * 1.3) + 4)

    def _widen(self, put: Put, col: IntArray, row: IntArray, cancel: CancelFlag | None) -> None:
        """Search the open cells among their own column's donors, twice as widely each round.

        A round keeps every donor it finds (exact, sorted); a cell stays open while its
        tie with the ``kmax``-th donor may run past them.
        """
        for j in np.unique(col).tolist():
            rows = np.sort(row[col == j])
            cand = self.search.model.candidates(np.flatnonzero(self.ok[:, j]))
            chunk, tile = self.search.sizes(len(cand))
            size = 2 * self.keep
            while len(rows):
                size = min(size, len(cand))
                still: list[IntArray] = []
                for part in chunks(rows, chunk):
                    idx, d2 = self.search.nearest(part, cand, size, tile, cancel)
                    idx, d2, beyond = exact_lists(self.search.model, part, idx, d2)
                    if size >= len(cand):
                        beyond[:] = np.inf
                    count = (idx >= 0).sum(axis=1)
                    open_ = still_open(d2, count, self.kmax, beyond, self.search.model.noise)
                    open_ &= size < len(cand)
                    put(np.full(len(part), j), part, idx, d2)
                    still.append(part[open_])
                rows = np.concatenate(still)
                size *= 2
