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

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._block_jobs import BlockJobs, extra_donors, first_positions
from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._exact import exact_sorted
from imputer_app.engine._nearest import BlockSearch, _pad
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._tree_search import tree_search
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

#: Bytes allowed for one distance block and its temporaries.
BLOCK_BYTES = 64 * 2**20


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
            if not len(cols):
                return 1
            return BlockJobs(search, some, ok, kmax, cols).run(cells.put, progress, cancel)

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
