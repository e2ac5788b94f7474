"""Exact nearest donors through k-d trees, one per gap pattern (numpy + scipy).

Rows are grouped by gap pattern over the similarity columns. For a target of pattern
``T`` and a candidate of pattern ``C`` the columns both have are ``S = T & C`` and
Dixon's distance is ``d^2 = W_all / W_S x sum_{j in S} w_j (x_j - y_j)^2``: a fixed
multiple of the Euclidean distance in the subspace ``S`` once each column is multiplied
by ``sqrt(w_j)``. So one k-d tree (scipy's ``cKDTree``, exact) per (group, candidate
pattern, ``S``) answers every target of pattern ``T`` exactly. Target rows are taken
pattern by pattern in batches; each batch asks the largest candidate pattern's tree
first (which gives every row a bound: its list's last distance), then the trees of the
other large candidate patterns within that bound, and compares the rows of small
candidate patterns directly (one matrix product). The merged lists are handled like the
block search's: every cell keeps its first donors, their distances are made exact and
re-sorted, and cells whose tie with the ``kmax``-th donor may run past the list, or
short of donors, are searched again by the block search. Target rows of rare patterns
(too few for trees of their own) meet the candidates through boxes
(:mod:`~imputer_app.engine._tree_scan`) where those are many, else the block search.
Target rows are taken in the order of a k-d tree's leaves over their own
columns, a large candidate pattern's rows are put in that order over theirs once, and a
tree queried by many stores its rows in its own leaves' order: near rows then share what
is in cache (cKDTree reads its data through a permutation). Only
numeric similarity columns, at most
:data:`~imputer_app.engine._patterns.MAX_COLUMNS` of them; :func:`tree_search` says
whether the trees are used.
"""

from __future__ import annotations

import math
from collections import Counter, deque
from collections.abc import Callable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray
from scipy.spatial import cKDTree

from imputer_app.engine._blas import one_blas_thread
from imputer_app.engine._block_jobs import DENSE_SHARE, Put
from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._exact import exact_cells, still_open
from imputer_app.engine._patterns import MIN_TARGETS, MIN_TREE, Layout, by_pattern, layout, tree_pays
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._tree_direct import Sweep, direct_hits, sweep_of
from imputer_app.engine._tree_scan import Boxes, boxes_of, scan_hits
from imputer_app.work import WORKERS, CancelFlag, Progress, raise_if_cancelled, report

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]
#: Runs the block search for the cells marked True (rows x fill columns).
Block = Callable[[BoolArray], object]
#: Picks the first ``n`` True entries per row: positions, -1 pads.
First = Callable[[BoolArray, int], IntArray]
#: Settled cells: column, row, donor rows, squared distances.
_Cellset = tuple[IntArray, IntArray, IntArray, FloatArray]
#: A batch's answer: the cells settled, and the cells (row, column) still open.
_Answer = tuple[list[_Cellset], tuple[IntArray, IntArray]]

#: Target rows per leaf of the tree that orders them (:func:`_leaf_rows`).
TARGET_LEAF = 64
#: Rows per leaf of a candidate pattern's tree (measured on 1,048,576 x 10 normal columns
#: with 5 % gaps: the search took 0.9x the CPU time at 64 as at 32; 128 about as 64).
LEAF = 64
#: Rows per leaf of the tree that puts a candidate pattern's rows in leaf order first.
ORDER_LEAF = 16
#: A tree's rows are put in leaf order first when its queries are at least its rows / this.
ORDER_QUERIES = 64
#: Target rows per batch (progress and cancel between batches; bounds the memory).
BATCH = 4096
#: Rounds of ever longer lists (x4 each) before an open cell goes to the block search.
ROUNDS = 3
#: Rows per bounded tree query (rows sorted by bound, so that one bound fits them all).
SUB = 128
#: The pattern key of a group's rows of rare target patterns, searched together in boxes.
RARE = -1
#: Fewest candidates and rows of rare target patterns (in a group) for which putting the
#: candidates in boxes pays. Measured on normal columns with 5 % gaps, CPU time a rare row
#: through boxes of 1,024 rows against the block search: among 1,048,576 rows 0.73 against
#: 2.4 ms (1.4 s to build the boxes), among 300,000 rows 0.31 against 0.72 ms (0.40 s),
#: among 100,000 rows 0.17 against 0.24 ms (0.05 s).
SCAN_CANDIDATES, SCAN_ROWS = 100_000, 1_000
#: The ``path`` settings of the search: choose by cost, or force one.
PATHS = ("auto", "tree", "block")
#: How the run record names each path.
PATH_NAMES = {
    "tree": "k-d trees per gap pattern (exact)",
    "block": "all pairs in blocks (exact)",
}


@dataclass
class _Lists:
    """Each target row's nearest candidates so far (search distances, nearest first)."""

    index: IntArray
    d2: FloatArray
    past: FloatArray  # lowest distance a candidate left out can have

    @classmethod
    def empty(cls, m: int, size: int) -> _Lists:
        return cls(np.full((m, size), -1, dtype=np.intp), np.full((m, size), np.inf), np.full(m, np.inf))

    @property
    def bound(self) -> FloatArray:
        """The last kept distance (``inf`` while a list is not full)."""
        return self.d2[:, -1]

    def merge(self, at: IntArray, index: IntArray, d2: FloatArray, past: FloatArray) -> None:
        """Merge new candidates of the rows ``at`` (shape (len(at), w), ``inf`` pads)."""
        self.past[at] = np.minimum(self.past[at], past)
        # rows where nothing new reaches the last kept distance only learn what they left out
        enter = (np.isfinite(d2) & (d2 <= self.d2[at, -1:])).any(axis=1)
        out = at[~enter]
        self.past[out] = np.minimum(self.past[out], d2[~enter].min(axis=1, initial=np.inf))
        at, index, d2 = at[enter], index[enter], d2[enter]
        if not len(at):
            return
        size = self.d2.shape[1]
        both_i = np.hstack([self.index[at], np.where(np.isfinite(d2), index, -1)])
        both_d = np.hstack([self.d2[at], d2])
        order = np.lexsort((np.where(both_i >= 0, both_i, np.iinfo(np.intp).max), both_d), axis=-1)
        # what falls off a full list is at least as far as its new last entry
        dropped = np.take_along_axis(both_d, order[:, size : size + 1], axis=1)[:, 0]
        self.past[at] = np.minimum(self.past[at], dropped)
        self.index[at] = np.take_along_axis(both_i, order[:, :size], axis=1)
        self.d2[at] = np.take_along_axis(both_d, order[:, :size], axis=1)


@dataclass
class TreeSearch:
    """The tree path of :func:`~imputer_app.engine._search.search_cells` (same cells, same donors).

    Parameters
    ----------
    lay : Layout
    model : DistanceModel
        Exact distances of the chosen donors.
    want, ok : ndarray of bool, shape (n_rows, n_fill)
        Target cells; rows that may be donors per fill column (group known).
    kmax, keep : int
        Places asked for; donors kept per cell.
    put, block, first : callables
        Store a cell's donors; run the block search for some cells; first True
        positions per row (:func:`~imputer_app.engine._block_jobs.first_positions`).
    """

    lay: Layout
    model: DistanceModel
    want: BoolArray
    ok: BoolArray
    kmax: int
    keep: int
    put: Put
    block: Block
    first: First
    _trees: dict[tuple[int, int, int], tuple[cKDTree, IntArray]] = field(default_factory=dict)
    _cand: dict[tuple[int, int], IntArray] = field(default_factory=dict)
    _uses: Counter[tuple[int, int, int]] = field(default_factory=Counter)
    _asking: Counter[tuple[int, int, int]] = field(default_factory=Counter)
    _asks: dict[tuple[int, int], BoolArray] = field(default_factory=dict)
    _gives: dict[tuple[int, int], IntArray] = field(default_factory=dict)
    _sweeps: dict[tuple[int, int], Sweep | None] = field(default_factory=dict)
    _coords: dict[tuple[int, int], FloatArray] = field(default_factory=dict)
    _boxes: dict[int, Boxes] = field(default_factory=dict)

    def run(self, progress: Progress | None, cancel: CancelFlag | None) -> int:
        """Search every target cell; returns the progress steps (the last reported by the caller)."""
        redo = self.want.copy()
        # columns with few donors would need long lists: the block search takes them alone
        cand = self.ok.any(axis=1)
        dense = self.ok[cand].mean(axis=0) >= DENSE_SHARE if cand.any() else np.zeros(self.ok.shape[1], bool)
        self.want = self.want & dense
        cand_rows = by_pattern(self.lay, np.flatnonzero((self.ok & dense).any(axis=1)))
        # a large candidate pattern's rows in the order of its own leaves, once: every tree
        # over some of its columns then reads near rows side by side, and builds faster
        # (measured on 628,000 normal rows, 8 of 10 columns: build 0.2 -> 0.07 s, a query
        # 0.13 -> 0.075 ms; a tree's own order, below, still gains a quarter on top)
        self._cand = {
            k: _leaf_rows(self.lay, v, k[1], ORDER_LEAF) if len(v) >= MIN_TREE else v
            for k, v in cand_rows.items()
        }
        # their coordinates, gathered once (a gather per tree from the whole sheet cost more than its build)
        self._coords = {k: self.lay.x[v] for k, v in self._cand.items() if len(v) >= MIN_TREE}
        targets = by_pattern(self.lay, np.flatnonzero(self.want.any(axis=1)))
        common: dict[tuple[int, int], IntArray] = {}
        for k, v in targets.items():
            if len(v) >= MIN_TARGETS and k[0] >= 0 and k[1]:
                raise_if_cancelled(cancel)
                common[k] = _leaf_rows(self.lay, v, k[1], TARGET_LEAF)
        common.update(_rare_rows(targets, common, self._cand))
        # the fill columns each target pattern asks for and each candidate pattern can give:
        # a candidate pattern that gives none of them is never searched for those targets
        self._asks = {k: np.asarray(self.want[v].any(axis=0), dtype=bool) for k, v in common.items()}
        self._gives = {k: self.ok[v].sum(axis=0) for k, v in self._cand.items()}
        for key, rows in common.items():  # the target patterns and rows that will ask each tree
            asked = list(self._treeby_pattern(*key))
            self._uses.update(asked)
            self._asking.update(dict.fromkeys(asked, len(rows)))
        for key in common:
            redo[np.ix_(common[key], np.flatnonzero(dense))] = False
        total = sum(len(_batches(v)) for v in common.values()) + 2
        done, keys = 0, list(common)
        left = {key: len(_batches(common[key])) for key in keys}
        pending: deque[tuple[tuple[int, int], Future[_Answer]]] = deque()

        def settle() -> None:  # the oldest batch's answer: store it, free its pattern's trees
            nonlocal done
            key, future = pending.popleft()
            found, (line, col) = future.result()
            for cells in found:
                self.put(*cells)
            redo[line, col] = True
            left[key] -= 1
            if not left[key]:
                self._release(key)
            done += 1
            report(progress, done, total)

        pool = ThreadPoolExecutor(max_workers=WORKERS, thread_name_prefix="kinfill-trees")
        builder = ThreadPoolExecutor(max_workers=1, thread_name_prefix="kinfill-tree-build")
        try:  # batches side by side (tree queries and numpy release the GIL), and across
            # patterns; the next pattern's trees are built meanwhile (one pattern ahead: memory)
            ahead = builder.submit(self._build, keys[0]) if keys else None
            for n, key in enumerate(keys):
                assert ahead is not None
                ahead.result()
                ahead = builder.submit(self._build, keys[n + 1]) if n + 1 < len(keys) else None
                for batch in _batches(common[key]):
                    pending.append((key, pool.submit(self._batch, key, batch, cancel)))
                    while len(pending) > WORKERS:
                        settle()
            while pending:
                settle()
        finally:  # on an error or a cancel, batches not started are dropped
            pool.shutdown(wait=True, cancel_futures=True)
            builder.shutdown(wait=True, cancel_futures=True)
        if redo.any():  # rare patterns, and cells whose ties run past their lists
            raise_if_cancelled(cancel)
            self.block(redo)
        report(progress, total - 1, total)
        return total

    def _batch(self, key: tuple[int, int], batch: IntArray, cancel: CancelFlag | None) -> _Answer:
        """Donors of the cells of ``batch``, widening the lists of open cells :data:`ROUNDS` times.

        Returns the cells found (column, row, donors, squared distances) and the cells
        (row, column) still open, for the block search.
        """
        want = self.want[batch]
        size, found = self._size(key), []
        for _ in range(ROUNDS):
            raise_if_cancelled(cancel)
            at = np.flatnonzero(want.any(axis=1))
            cells, (line, col) = self._cells(batch[at], want[at], self._lists(key, batch[at], size))
            found.append(cells)
            want = np.zeros_like(want)
            want[at[line], col] = True
            if not len(line):
                break
            size *= 4
        line, col = np.nonzero(want)
        return found, (batch[line], col)

    def _build(self, key: tuple[int, int]) -> None:
        """Build the trees a target pattern asks (those not built yet), or the boxes of rare ones."""
        parts = [rows for _, rows in self._candidates(*key)] if key[1] == RARE else []
        if parts:
            self._boxes[key[0]] = boxes_of(self.lay, parts)
        for t in self._treeby_pattern(*key):
            self._tree(t)

    def _candidates(self, g: int, bits: int) -> Iterator[tuple[int, IntArray]]:
        """(pattern, rows) of candidate patterns sharing a column with a target pattern and donating to it."""
        asks = self._asks[g, bits]
        for (gc, cbits), rows in self._cand.items():
            if gc == g and bits & cbits and self._gives[gc, cbits][asks].any():
                yield cbits, rows

    def _treeby_pattern(self, g: int, bits: int) -> Iterator[tuple[int, int, int]]:
        """(group, candidate pattern, shared columns) of the trees a target pattern asks."""
        if bits == RARE:
            return
        for cbits, rows in self._candidates(g, bits):
            if len(rows) >= MIN_TREE:
                yield g, cbits, bits & cbits

    def _release(self, key: tuple[int, int]) -> None:
        """Drop the trees no later target pattern asks (they add up), the pattern's sweep and boxes."""
        self._sweeps.pop(key, None)
        if key[1] == RARE:
            self._boxes.pop(key[0], None)
        for t in self._treeby_pattern(*key):
            self._uses[t] -= 1
            if self._uses[t] <= 0:
                self._trees.pop(t, None)

    def _tree(self, t: tuple[int, int, int]) -> tuple[cKDTree, IntArray]:
        if t not in self._trees:
            rows = self._cand[t[0], t[1]]
            coords = self._coords[t[0], t[1]][:, self.lay.columns(t[2])]
            # stored in its own leaves' order: a query reads each leaf's rows side by side
            # (cKDTree reads its data through a permutation; measured among 628,000 rows in
            # 9 columns: 0.45 -> 0.2 ms a query, for a second build: it pays for many queries)
            if self._asking[t] * ORDER_QUERIES >= len(rows):
                order = _leaf_order(coords, ORDER_LEAF)
                rows, coords = rows[order], coords[order]
            self._trees[t] = (cKDTree(coords, leafsize=LEAF, balanced_tree=False, compact_nodes=False), rows)
        return self._trees[t]

    def _size(self, key: tuple[int, int]) -> int:
        """Candidates first kept per target row: ``keep`` donors, the next one, and a few not donors.

        The share of donors is the least, over the fill columns the pattern asks for, among
        the candidates searched for it; when every candidate is a donor no spare place is kept.
        """
        searched = list(self._candidates(*key))
        rows = sum(len(r) for _, r in searched)
        gives = sum((self._gives[key[0], c] for c, _ in searched), np.zeros(1, np.intp))
        share = float(gives[self._asks[key]].min()) / rows if rows else 1.0
        spare = 0 if share >= 1.0 else 2
        return math.ceil((self.keep + 1) / max(share, DENSE_SHARE)) + spare

    def _lists(self, key: tuple[int, int], batch: IntArray, size: int) -> _Lists:
        """The merged nearest ``size`` candidates of ``batch`` (target rows of one group and pattern)."""
        g, bits = key
        lists = _Lists.empty(len(batch), size)
        if bits == RARE:  # every candidate within reach, through boxes (none: no candidate gives)
            if g in self._boxes:
                _merge_pairs(lists, *scan_hits(self.lay, self._boxes[g], batch, size, self.model.noise))
        else:
            trees = sorted(self._treeby_pattern(g, bits), key=lambda t: -len(self._cand[t[0], t[1]]))
            for t in trees:
                self._query(t, batch, lists, same=t[1] == bits)
            sweep = self._sweep(key)
            if sweep is not None:
                self._direct(sweep, batch, lists)
        lists.past = np.minimum(lists.past, lists.bound)
        return lists

    def _query(self, t: tuple[int, int, int], batch: IntArray, lists: _Lists, *, same: bool) -> None:
        """Ask one tree for the nearest of every row, within each row's bound.

        ``same``: the tree holds rows of the targets' own pattern (so maybe the rows themselves).
        """
        tree, rows = self._tree(t)
        cols, factor = self.lay.columns(t[2]), self.lay.factor(t[2])
        size = min(lists.d2.shape[1] + int(same), len(rows))  # one more: the row itself may be among them
        bound, ks, coords = lists.bound, list(range(1, size + 1)), self.lay.x[np.ix_(batch, cols)]
        # each part's bound is read before any merge: the parts' answers are handled once, together
        parts, found_e, found_i, uppers = [], [], [], []
        for part in _parts(bound, SUB):
            reach = float(bound[part[-1]])  # the largest bound of the part (sorted)
            radius = math.sqrt(reach / factor) * (1 + 1e-9) + 1e-300 if math.isfinite(reach) else np.inf
            e, i = tree.query(coords[part], k=ks, distance_upper_bound=radius)
            parts.append(part)
            found_e.append(e)
            found_i.append(i)
            uppers.append(np.full(len(part), radius))
        if not parts:
            return
        at, e, i, upper = (np.concatenate(a) for a in (parts, found_e, found_i, uppers))
        found = np.isfinite(e)
        index = np.where(found, rows[np.minimum(i, len(rows) - 1)], -1)
        d2 = np.where(found, factor * e * e, np.inf)
        d2[index == batch[at][:, None]] = np.inf  # never the row itself
        # a candidate not returned is at least as far as the last returned, or past the bound
        full = found[:, -1] & (size < len(rows))
        past = np.where(full, factor * e[:, -1] ** 2, factor * upper**2)
        lists.merge(at, index, d2, past)

    def _sweep(self, key: tuple[int, int]) -> Sweep | None:
        """The small candidate patterns of a target pattern, prepared once for all its batches."""
        if key not in self._sweeps:
            small = [rows for _, rows in self._candidates(*key) if len(rows) < MIN_TREE]
            self._sweeps[key] = sweep_of(self.lay, key[1], np.sort(np.concatenate(small))) if small else None
        return self._sweeps[key]

    def _direct(self, sweep: Sweep, batch: IntArray, lists: _Lists) -> None:
        """Compare ``batch`` with the rows of small candidate patterns directly (one pattern of targets).

        The pairs within each row's reach (:func:`~imputer_app.engine._tree_direct.direct_hits`)
        are merged once.
        """
        noise, size = self.model.noise, lists.d2.shape[1]
        _merge_pairs(lists, *direct_hits(self.lay, sweep, batch, lists.bound + noise, size, noise))

    def _cells(
        self, batch: IntArray, want: BoolArray, lists: _Lists
    ) -> tuple[_Cellset, tuple[IntArray, IntArray]]:
        """The donors of the cells ``want`` (rows of ``batch`` x fill columns) from the rows' lists.

        Returns the cells that are settled (column, row, donors, squared distances) and
        the open ones (position in ``batch``, column): short of donors while more may
        exist, or tied with the ``kmax``-th donor past the list.
        """
        r, col = np.nonzero(want)
        ld2 = lists.d2
        good = self.ok[np.maximum(lists.index[r], 0), col[:, None]] & np.isfinite(ld2[r])
        pos = self.first(good, self.keep + 1)  # one more: the next donor
        beyond = np.where(pos[:, -1] >= 0, ld2[r, np.maximum(pos[:, -1], 0)], lists.past[r])
        idx, d2 = exact_cells(self.model, batch, lists.index, ld2, r, pos[:, : self.keep])
        count = (idx >= 0).sum(axis=1)
        open_ = still_open(d2, count, self.kmax, beyond, self.model.noise)
        done = ~open_
        return (col[done], batch[r[done]], idx[done], d2[done]), (r[open_], col[open_])


def _merge_pairs(lists: _Lists, r: IntArray, index: IntArray, d2: FloatArray) -> None:
    """Merge pairs (list ``r``, candidate row, ``d^2``) into ``lists``: each row's candidates within reach."""
    if not len(r):
        return
    # each row's nearest pairs first (ties by row, as the merge orders them): only as many as
    # its list holds can enter it, and those left out are past its last entry anyway
    order = np.lexsort((index, d2, r))
    r = r[order]
    pos = np.arange(len(r)) - np.searchsorted(r, r)
    keep = pos < lists.d2.shape[1]
    r, pos, order = r[keep], pos[keep], order[keep]
    wide = np.full((len(lists.d2), int(pos.max()) + 1), -1, dtype=np.intp)
    dist = np.full(wide.shape, np.inf)
    wide[r, pos], dist[r, pos] = index[order], d2[order]
    lists.merge(np.arange(len(lists.d2)), wide, dist, np.full(len(lists.d2), np.inf))


def _rare_rows(
    targets: dict[tuple[int, int], IntArray],
    common: dict[tuple[int, int], IntArray],
    cand: dict[tuple[int, int], IntArray],
) -> dict[tuple[int, int], IntArray]:
    """Each group's rows of rare target patterns (``RARE`` keys), where boxes pay (:data:`SCAN_ROWS`)."""
    rare: dict[int, list[IntArray]] = {}
    for (g, bits), rows in targets.items():
        if (g, bits) not in common and g >= 0 and bits:
            rare.setdefault(g, []).append(rows)
    size = Counter[int]()
    for (g, _), rows in cand.items():
        size[g] += len(rows)
    pays = [g for g, v in rare.items() if size[g] >= SCAN_CANDIDATES and sum(map(len, v)) >= SCAN_ROWS]
    return {(g, RARE): np.concatenate(rare[g]) for g in pays}


def _leaf_order(coords: FloatArray, leafsize: int) -> IntArray:
    """Positions of ``coords`` in the order of a k-d tree's leaves (near rows together)."""
    tree = cKDTree(coords, leafsize=leafsize, balanced_tree=False, compact_nodes=False)
    return np.asarray(tree.indices, dtype=np.intp)


def _leaf_rows(lay: Layout, rows: IntArray, bits: int, leafsize: int) -> IntArray:
    """``rows`` (of one gap pattern) in the order of a k-d tree's leaves over their columns.

    Near target rows come together in a batch: their queries walk the same branches of
    the candidates' trees (which stay in cache), and their bounds, which set each part's
    query radius, are alike (measured: 0.69 -> 0.44 ms a query among 628,000 rows).
    Near candidate rows sit side by side in every tree built over their columns.
    """
    return rows[_leaf_order(lay.x[np.ix_(rows, lay.columns(bits))], leafsize)]


def _batches(rows: IntArray) -> list[IntArray]:
    """``rows`` in batches of at most :data:`BATCH`, and at least one per worker (all busy)."""
    count = min(max(math.ceil(len(rows) / BATCH), WORKERS), len(rows))
    return np.array_split(rows, count)


def _parts(bound: FloatArray, size: int) -> Iterator[IntArray]:
    """Rows by ascending bound, in runs of at most ``size``; rows without a bound (``inf``) run apart."""
    order = np.argsort(bound, kind="stable")
    cut = int(np.isfinite(bound).sum())
    for run in (order[:cut], order[cut:]):
        for i in range(0, len(run), max(size, 1)):
            yield run[i : i + size]


def tree_search(
    table: PreparedTable,
    model: DistanceModel,
    want: BoolArray,
    ok: BoolArray,
    *,
    kmax: int,
    keep: int,
    put: Put,
    block: Block,
    first: First,
    path: str = "auto",
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> int | None:
    """Run the tree path when ``path`` asks for it ("tree") or it is estimated to pay ("auto").

    Returns the progress steps, or None when the block search is to run instead
    (``path`` "block", categorical similarity columns, more than
    :data:`~imputer_app.engine._patterns.MAX_COLUMNS` numeric ones, or too little to gain:
    :func:`~imputer_app.engine._patterns.tree_pays`).
    """
    if path not in PATHS:
        raise ValueError(f"path must be one of {', '.join(PATHS)}; got {path!r}")
    lay = None if path == "block" else layout(table.features, table.groups)
    if lay is None or (path == "auto" and not tree_pays(lay, want, np.asarray(ok.any(axis=1), dtype=bool))):
        return None
    with one_blas_thread():  # small products side by side: one BLAS thread each
        return TreeSearch(lay, model, want, ok, kmax, keep, put, block, first).run(progress, cancel)
