"""k-nearest donor search per fill column (numpy only).

Fill columns whose donors are most rows ("dense") share one search: each target row
keeps a list of its nearest candidates (enough that nearly every cell finds ``kmax``
donors in it) and every target cell takes the first candidates that are donors of its
column, all columns at once. Columns with few donors ("sparse") are searched among that
column's donors only. A cell keeps ``kmax`` donors and a few more; their distances are
recomputed from differences wherever the products' rounding could matter (near 0, near
a tie) and re-sorted (:mod:`~imputer_app.engine._exact`), and a
cell whose list holds too few donors, or whose tie with the ``kmax``-th donor may run
past its list, is searched again among its column's donors, more widely each round,
until every tied donor is in hand (:mod:`~imputer_app.engine._ties`). Results are kept
flat (one row per target cell, sorted by column then row) and handed out per column.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._blas import one_blas_thread
from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._exact import exact_cells, exact_lists, exact_sorted, still_open
from imputer_app.engine._nearest import BlockSearch, _pad, chunks, top_l
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._tree_search import tree_search
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]
#: Cells of one chunk: column, row, donors, squared distances, short of kmax donors.
_Found = tuple[IntArray, IntArray, IntArray, FloatArray, BoolArray]

#: Bytes allowed for one distance block and its temporaries.
BLOCK_BYTES = 64 * 2**20
#: Threads searching chunks side by side (each runs BLAS on one thread).
WORKERS = 2
#: A column whose donors are fewer than this share of all candidates is searched alone.
DENSE_SHARE = 0.3


@dataclass
class ColumnDonors:
    """The nearest donors of every target cell of one fill column.

    Attributes
    ----------
    rows : ndarray of int, shape (m,)
        Target row positions, ascending.
    index : ndarray of int, shape (m, w), w >= kmax
        Donor row positions, nearest first by exact distance, equal distances by row
        position; -1 pads missing donors. Beyond the ``kmax`` nearest it holds at least
        every donor tied with the ``kmax``-th (and maybe a few more).
    distance : ndarray of float, shape (m, w)
        Donor distances: from the rows' differences near 0 and wherever two donors lie
        within rounding of each other (elsewhere the search's value, within 1e-9 of
        it); ``inf`` pads.
    count : ndarray of int, shape (m,)
        Number of real donors per target (may exceed kmax).
    path : {"block", "tree"}, default="block"
        Which search found them (:data:`~imputer_app.engine._tree_search.PATH_NAMES`).
    shares : dict
        The donors' weights for the k last asked (:func:`~imputer_app.engine._combine.donor_shares`
        keeps them here: the values, their spread and the fill log all ask for them).
    """

    rows: IntArray
    index: IntArray
    distance: FloatArray
    count: IntArray
    path: str = "block"
    shares: dict[int, tuple[FloatArray, IntArray]] = field(default_factory=dict, repr=False, compare=False)


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


def first_donors(
    cand: IntArray, cd2: FloatArray, ok: BoolArray, kmax: int
) -> tuple[IntArray, FloatArray, BoolArray]:
    """First ``kmax`` candidates per cell that are donors (``ok``).

    Parameters
    ----------
    cand, cd2 : ndarray of shape (cells, L)
        Candidate rows and squared distances, nearest first (-1 / inf pad).
    ok : ndarray of bool, shape (cells, L)
        The candidate is a donor of the cell's column.
    kmax : int
        Donors to keep per cell.

    Returns
    -------
    index, d2 : ndarray of shape (cells, kmax)
        Padded with -1 / inf.
    short : ndarray of bool, shape (cells,)
        Fewer than ``kmax`` donors were found although the list was full (more
        candidates may exist beyond it).
    """
    good = ok & np.isfinite(cd2)
    pos = first_positions(good, kmax)
    at = np.maximum(pos, 0)
    idx = np.where(pos >= 0, np.take_along_axis(cand, at, axis=1) if cand.shape[1] else -1, -1)
    d2 = np.where(pos >= 0, np.take_along_axis(cd2, at, axis=1) if cd2.shape[1] else np.inf, np.inf)
    short = (
        ((pos >= 0).sum(axis=1) < kmax) & np.isfinite(cd2[:, -1])
        if cd2.shape[1]
        else np.zeros(len(cd2), bool)
    )
    return idx.astype(np.intp), d2, short


@dataclass
class _Cells:
    """All target cells, sorted by (column, row), and their donors so far.

    ``code`` is ``col * n_rows + row`` of each cell, ascending: a cell's position in
    that order is found by a binary search.
    """

    col: IntArray
    row: IntArray
    index: IntArray
    d2: FloatArray
    code: IntArray
    n_rows: int
    wide: list[tuple[IntArray, IntArray, FloatArray]] = field(default_factory=list)

    @classmethod
    def of(cls, want: BoolArray, kmax: int) -> _Cells:
        flat = np.flatnonzero(want.T)
        col, row = np.divmod(flat, len(want))
        return cls(
            col,
            row,
            np.full((len(col), kmax), -1, dtype=np.intp),
            np.full((len(col), kmax), np.inf),
            flat,
            len(want),
        )

    def put(self, col: IntArray, row: IntArray, index: IntArray, d2: FloatArray) -> None:
        # cells are in (column, row) order: a cell's place is found in their sorted codes
        # (a table of every (column, row) would take n_rows x columns integers)
        at = np.searchsorted(self.code, np.asarray(col, dtype=np.intp) * self.n_rows + row)
        if index.shape[1] > self.index.shape[1]:  # a widened search: kept aside until the end
            self.wide.append((at, index, d2))
            return
        self.index[at], self.d2[at] = _pad((index, d2), self.index.shape[1])

    def flat(self, model: DistanceModel | None = None) -> tuple[ColumnDonors, IntArray]:
        """The cells' donors; with ``model``, every distance exact and the lists re-sorted.

        The search's own distances vary in the last bits with the path that found them
        (a block or a pair, the head or a tile, which depends on kmax): exact ones make
        a search for kmax agree to the last bit with one for a smaller k.
        """
        if self.wide:
            width = max(self.index.shape[1], *(w[1].shape[1] for w in self.wide))
            self.index, self.d2 = _pad((self.index, self.d2), width)
            for at, index, d2 in self.wide:
                self.index[at], self.d2[at] = _pad((index, d2), width)
            self.wide = []
        if model is not None and len(self.row):
            self.index, self.d2 = exact_sorted(model, self.row, self.index)[:2]
        valid = self.index >= 0
        with np.errstate(invalid="ignore"):
            distance = np.where(valid, np.sqrt(self.d2), np.inf)
        count = valid.sum(axis=1).astype(np.intp)
        return ColumnDonors(self.row, self.index, distance, count), self.col


def nearest_donors(
    table: PreparedTable,
    *,
    kmax: int,
    targets: Mapping[str, BoolArray] | None = None,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    budget: int = BLOCK_BYTES,
    path: str = "auto",
) -> dict[str, ColumnDonors]:
    """Find the ``kmax`` nearest donors of every target cell, per fill column.

    Parameters
    ----------
    table : PreparedTable
        From :func:`~imputer_app.engine.prepare`.
    kmax : int
        Donors kept per target (>= 1); one search serves every k <= kmax.
    targets : mapping of str to ndarray of bool, shape (n_rows,), optional
        Rows to find donors for, per fill column; default every cell of the column that
        is not observed (gaps, hidden cells, censored cells to fill).
    progress : callable(done, total), optional
        Called after every chunk of target rows.
    cancel : Event-like or callable, optional
        Checked for every distance block; raises :class:`~imputer_app.errors.Cancelled`.
    budget : int, default=64 MiB
        Bytes for one distance block and its temporaries.
    path : {"auto", "tree", "block"}, default="auto"
        "auto" takes k-d trees per gap pattern where they are estimated to pay
        (:mod:`~imputer_app.engine._tree_search`), else the block search; both give the
        same donors. "tree" uses the trees wherever they can serve.

    Returns
    -------
    dict of str to ColumnDonors
        One entry per fill column (in ``table.fill_columns`` order). A donor is a row
        observed in that column, in the target's group, sharing at least one
        similarity column, and never the target row itself. Every donor tied with the
        ``kmax``-th (:func:`~imputer_app.engine._ties.tie_edges`) is included, so that
        :func:`~imputer_app.engine.combine` can share the last places among them. A
        target with fewer donors than ``kmax`` gets them all.

    Examples
    --------
    >>> donors = nearest_donors(prepare(frame, FillPlan()), kmax=5)  # doctest: +SKIP
    >>> donors["nitrate"].index[0]  # row positions of the first target's donors  # doctest: +SKIP
    """
    found, col = search_cells(
        table, kmax=kmax, targets=targets, progress=progress, cancel=cancel, budget=budget, path=path
    )
    bounds = np.searchsorted(col, np.arange(len(table.fill_columns) + 1))
    return {
        name: ColumnDonors(
            found.rows[a:b], found.index[a:b], found.distance[a:b], found.count[a:b], found.path
        )
        for name, a, b in zip(table.fill_columns, bounds[:-1], bounds[1:], strict=True)
    }


def search_cells(
    table: PreparedTable,
    *,
    kmax: int,
    targets: Mapping[str, BoolArray] | None = None,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    budget: int = BLOCK_BYTES,
    path: str = "auto",
) -> tuple[ColumnDonors, IntArray]:
    """:func:`nearest_donors` for all fill columns as one flat set of cells (no split per column).

    Returns
    -------
    donors : ColumnDonors
        Every target cell, sorted by column and then row.
    col : ndarray of int, shape (cells,)
        Each cell's column, as a position in ``table.fill_columns``.
    """
    if kmax < 1:
        raise ValueError(f"kmax must be at least 1; got {kmax}")
    raise_if_cancelled(cancel)
    n, names = table.n_rows, table.fill_columns
    wanted = table.targets() if targets is None else targets
    # one stack of columns, not a write per column (a wide sheet has thousands)
    none = np.zeros(n, dtype=bool)
    want = _columns([np.asarray(wanted[c], dtype=bool) if c in wanted else none for c in names], n)
    ok = _columns([np.asarray(table.observed[c], dtype=bool) for c in names], n)
    if table.groups is not None:
        ok &= (table.groups >= 0)[:, None]
    keep = kmax + extra_donors(kmax)
    cells = _Cells.of(want, keep)
    active = np.flatnonzero(want.any(axis=0) & ok.any(axis=0))
    steps, tree, model = 1, None, None
    if len(active):
        model = DistanceModel(table.features)
        search = BlockSearch(model, table.groups, budget)

        def block(some: BoolArray, progress: Progress | None = None) -> int:
            cols = np.flatnonzero(some.any(axis=0) & ok.any(axis=0))
            return _Jobs(search, some, ok, kmax, cols).run(cells, progress, cancel) if len(cols) else 1

        put, first = cells.put, first_positions
        tree = tree_search(table, model, want, ok, kmax=kmax, keep=keep, put=put, block=block,
                           first=first, path=path, progress=progress, cancel=cancel)  # fmt: skip
        steps = tree if tree is not None else block(want, progress)
    report(progress, steps, steps)
    found, col = cells.flat(model)
    found.path = "block" if tree is None else "tree"
    return found, col


def _columns(vectors: list[BoolArray], n: int) -> BoolArray:
    """``vectors`` (each of shape (n,)) as the columns of an (n, len(vectors)) array."""
    return np.stack(vectors, axis=1) if vectors else np.zeros((n, 0), dtype=bool)


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
class _Jobs:
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

    def run(self, cells: _Cells, progress: Progress | None, cancel: CancelFlag | None) -> int:
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
                    for miss in self._search_job(pool, cells, job, cancel, advance):
                        short += [miss] if len(miss[0]) else []
                        advance(1)
            finally:  # on an error or a cancel, chunks not started are dropped
                pool.shutdown(wait=True, cancel_futures=True)
            if short:
                col, row = (np.concatenate(a) for a in zip(*short, strict=True))
                self._widen(cells, col, row, cancel)
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
        cells: _Cells,
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
            cells.put(col, row, idx, d2)
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

    def _widen(self, cells: _Cells, col: IntArray, row: IntArray, cancel: CancelFlag | None) -> None:
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
                    cells.put(np.full(len(part), j), part, idx, d2)
                    still.append(part[open_])
                rows = np.concatenate(still)
                size *= 2
