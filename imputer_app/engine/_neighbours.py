"""Keep the neighbour lists of the last search; a changed plan re-combines them (numpy only).

The neighbour search is nearly all of a fill's time; combining the donors it found
into values, intervals and the fill log is a small part. The combining settings (k up
to the largest searched, neighbour weighting, numeric rule, bounds, decimals, the
no-donor rule, the interval level) never change who a cell's nearest donors are, so a
:class:`NeighbourCache` keeps the lists of its last search and a fill with such a change
only combines them again.

Each search is kept under a digest of everything it reads (:func:`search_key`): the
scaled similarity values and their weights, category codes, groups, and per fill
column which cells are donors and which are targets. A change that moves rows apart or
makes other cells donors (similarity columns, weights, scaling, groups, kinds, markers,
limits, a censored rule whose stand-in values enter the distance, the data itself)
changes the digest, and the cache searches again. The calibration of intervals hides
known cells and searches the hidden table; those searches are kept the same way.

Why the reuse is exact: a kept list holds each cell's nearest donors in exact
(distance, row) order, and every donor tied with the ``kmax``-th. For ``k <= kmax``
the donors tied with the k-th lie no farther than the ``kmax``-th's tie edge (the edge
grows with the distance), so they are in the list too, and the tie rule
(:func:`~imputer_app.engine._ties.shares`) gives the donors past them weight 0.
:func:`covers` checks this for every cell before a list is reused; a list that fails
is searched again. Distances are exact (recomputed from differences), so the lists of
a search for ``kmax`` agree to the last bit with those of a search for ``k``.
"""

from __future__ import annotations

import dataclasses
import hashlib
import threading
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine import _search
from imputer_app.engine._block_jobs import extra_donors
from imputer_app.engine._impute import Data, fill_with
from imputer_app.engine._result import FillResult
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._ties import tie_edges
from imputer_app.plan import FillPlan
from imputer_app.work import CancelFlag, Progress, report

IntArray = NDArray[np.intp]
BoolArray = NDArray[np.bool_]

#: Donors searched for beyond the plan's k, so that a larger k re-combines as well: twice
#: the k asked, and at least this many (Kinfill's own choice: each donor kept costs its
#: exact distance in the first search, measured about a quarter of it at 30 donors).
REACH = 10
#: Bytes all kept lists may take; the least recently used searches are let go past it.
KEEP_BYTES = 256 * 2**20


#: Plan settings that change how donors are combined, never who they are (the censored
#: rule may: when its stand-ins enter the distance, the cache sees it and searches again).
COMBINING_SETTINGS = frozenset(
    {"k", "k_by_column", "neighbour_weighting", "numeric_rule", "bounds", "decimals", "censored"}
    | {"no_donor", "interval_level"}
)


def only_combining_changed(before: FillPlan, after: FillPlan) -> bool:
    """Whether ``after`` differs from ``before`` in combining settings only (:data:`COMBINING_SETTINGS`).

    A fill of ``after`` through the :class:`NeighbourCache` that filled ``before`` then
    re-combines the kept lists (a k beyond those kept, or a censored rule whose stand-ins
    enter the distance, searches again).

    Examples
    --------
    >>> only_combining_changed(FillPlan(k=5), FillPlan(k=3, numeric_rule="median"))
    True
    >>> only_combining_changed(FillPlan(k=5), FillPlan(k=5, weights={"pH": 2.0}))
    False
    """
    return all(
        getattr(before, f.name) == getattr(after, f.name)
        for f in dataclasses.fields(FillPlan)
        if f.name not in COMBINING_SETTINGS
    )


def search_key(table: PreparedTable, targets: Mapping[str, BoolArray]) -> bytes:
    """Digest of everything a neighbour search of ``table`` reads.

    Parameters
    ----------
    table : PreparedTable
        The prepared table.
    targets : mapping of str to bool ndarray of shape (n_rows,)
        Per fill column, the cells to find donors for.

    Returns
    -------
    bytes
        Equal for two tables (and targets) exactly when the search would find the same
        donors at the same distances: the scaled similarity values and codes, their
        weights, the total weight and the mismatch factor, the groups, and per fill
        column (in order) its donor cells and its targets.
    """
    # SHA-256 reads these arrays about twice as fast as BLAKE2b here (CPU instructions)
    digest = hashlib.sha256()

    def add(array: NDArray[Any] | None) -> None:
        if array is None:
            digest.update(b"none")
            return
        digest.update(f"{array.dtype.str}{array.shape}".encode())
        # the values column after column, read in place (a prepared table's are stored so)
        flat = np.asfortranarray(array).T if array.ndim == 2 else np.ascontiguousarray(array)
        digest.update(flat.data)

    f = table.features
    for part in (f.numbers, f.number_weights, f.codes, f.code_weights, table.groups):
        add(part)
    add(np.array([f.total_weight, f.mismatch, table.n_rows], dtype=np.float64))
    for col in table.fill_columns:
        digest.update(repr(col).encode())
        add(np.asarray(table.observed[col], dtype=bool))
        wanted = targets.get(col)
        add(None if wanted is None else np.asarray(wanted, dtype=bool))
    return digest.digest()


def covers(found: ColumnDonors, kmax: int, ks: Any) -> bool:
    """Whether lists searched for ``kmax`` donors hold every donor the tie rule uses for each k of ``ks``.

    Parameters
    ----------
    found : ColumnDonors
        Lists of a search for ``kmax`` (exact distances, sorted; every donor tied with
        the ``kmax``-th included).
    kmax : int
        The number of donors the search was asked for.
    ks : iterable of int
        The k values to combine with.

    Returns
    -------
    bool
        True when every cell either holds all its donors (fewer than ``kmax`` exist),
        or the tie edge of its k-th donor lies within the ``kmax``-th's (the search
        included every donor up to that), or a kept donor lies beyond that edge.
    """
    ks = np.unique(np.asarray(list(ks), dtype=np.intp))
    if not len(ks) or ks[-1] > kmax:
        return False
    if not len(found.count):
        return True
    if found.index.shape[1] < kmax:  # not lists of a search for kmax
        return False
    distance = found.distance
    full = found.count >= kmax
    edge = tie_edges(np.square(distance[:, kmax - 1]))[1]  # squared as the tie rule squares them
    last = np.square(distance[np.arange(len(distance)), np.maximum(found.count - 1, 0)])
    high = tie_edges(np.square(distance[:, ks - 1]))[1]
    with np.errstate(invalid="ignore"):
        ok = ~full[:, None] | (high <= edge[:, None]) | (last[:, None] > high)
    return bool(ok.all())


def shortened(found: ColumnDonors, kmax: int) -> ColumnDonors:
    """``found`` cut to the donors that take part for some k <= ``kmax``, and one more.

    Combining gives the same numbers (the donors cut off have weight 0, and the one
    kept past the tied donors shows the tie rule where the tie ends), on narrower arrays.
    """
    distance, count = found.distance, found.count
    width = distance.shape[1]
    if width <= kmax + 1 or not len(count):
        return found
    d2 = np.square(distance)
    high = tie_edges(d2[:, kmax - 1])[1]  # NaN (no tie edge) for cells with fewer donors
    with np.errstate(invalid="ignore"):
        taken = np.where(count >= kmax, (d2 <= high[:, None]).sum(axis=1), count)
    keep = min(width, int(taken.max(initial=0)) + 1)
    if keep >= width:
        return found
    return ColumnDonors(
        found.rows,
        np.ascontiguousarray(found.index[:, :keep]),
        np.ascontiguousarray(distance[:, :keep]),
        np.minimum(count, keep).astype(np.intp),
    )


@dataclass(frozen=True)
class _Kept:
    """One kept search: the cells' lists for ``kmax`` donors (``complete``: every donor of each cell)."""

    kmax: int
    complete: bool
    found: ColumnDonors
    col: IntArray


class NeighbourCache:
    """The neighbour lists of the last fill, re-combined when only the combining settings change.

    Use one cache per sheet (the app's session keeps one): :meth:`impute` gives the same
    :class:`~imputer_app.engine.FillResult` as :func:`~imputer_app.engine.impute`
    (values, fill log, intervals, donors), and searches only when the plan's change
    moved rows apart, made other cells donors or targets, or asked for more donors than
    were kept. Safe to call from one worker thread at a time while another reads
    :attr:`searches`.

    Parameters
    ----------
    reach : int, optional
        Donors searched for at least (when memory allows), so that a k up to it
        re-combines without a new search; default twice the k asked, at least 10.
    keep_bytes : int, default=256 MiB
        Bytes all kept lists may take (the least recently used searches are let go
        past it, never those of the fill under way); a search whose lists for
        ``reach`` donors would take more than half of it keeps the plan's k only.

    Attributes
    ----------
    searches : int
        Neighbour searches run so far (a fill with intervals runs one for the sheet and
        one per calibration round).
    reused : int
        Searches answered from the kept lists.

    Examples
    --------
    >>> cache = NeighbourCache()
    >>> first = cache.impute(frame, FillPlan(k=5))  # doctest: +SKIP
    >>> again = cache.impute(frame, FillPlan(k=3, neighbour_weighting="inverse_distance"))  # doctest: +SKIP
    >>> cache.searches  # the second fill re-combined the first one's lists  # doctest: +SKIP
    3
    """

    def __init__(self, reach: int | None = None, keep_bytes: int = KEEP_BYTES) -> None:
        self.reach = None if reach is None else int(reach)
        self.keep_bytes = int(keep_bytes)
        self.searches = 0
        self.reused = 0
        self._kept: dict[bytes, _Kept] = {}
        self._touched: set[bytes] | None = None
        self._lock = threading.RLock()

    def clear(self) -> None:
        """Forget every kept search."""
        with self._lock:
            self._kept.clear()

    def impute(
        self,
        data: Data,
        plan: FillPlan,
        progress: Progress | None = None,
        cancel: CancelFlag | None = None,
    ) -> FillResult:
        """Fill ``data`` as :func:`~imputer_app.engine.impute` does, reusing the kept lists.

        The searches this fill used (the sheet's and its calibration rounds') are kept;
        older ones are let go, least recently used first, past :attr:`keep_bytes`.

        Parameters
        ----------
        data : DataFrame, SheetLike or ndarray
            As for :func:`~imputer_app.engine.impute`; never modified.
        plan : FillPlan
            The settings.
        progress : callable(done, total), optional
            As for :func:`~imputer_app.engine.impute` (a reused search reports at once).
        cancel : Event-like or callable, optional
            Checked as :func:`~imputer_app.engine.impute` checks it; a cancelled fill
            keeps what was kept before it.

        Returns
        -------
        FillResult
        """
        with self._lock:
            self._touched = set()
            try:
                return fill_with(self.search, data, plan, progress, cancel)
            finally:
                self._touched = None

    def search(
        self,
        table: PreparedTable,
        *,
        kmax: int,
        targets: Mapping[str, BoolArray] | None = None,
        progress: Progress | None = None,
        cancel: CancelFlag | None = None,
    ) -> tuple[ColumnDonors, IntArray]:
        """The donors of every target cell, from the kept lists when they serve, else searched.

        Called like :func:`~imputer_app.engine._search.search_cells`, with the same
        result for every k up to ``kmax``: the lists may be longer (a search keeps
        :attr:`reach` donors), and the tie rule gives the extra donors weight 0.

        Parameters
        ----------
        table : PreparedTable
            The prepared table.
        kmax : int
            The most donors any cell is combined from.
        targets : mapping of str to bool ndarray of shape (n_rows,), optional
            Cells to find donors for, per fill column (default: every gap).
        progress : callable(done, total), optional
            Told of the search's chunks, or once when the kept lists serve.
        cancel : Event-like or callable, optional
            Checked by the search.

        Returns
        -------
        tuple of (ColumnDonors, ndarray of int)
            The cells and their columns, as ``search_cells`` returns them.
        """
        wanted = table.targets() if targets is None else dict(targets)
        key = search_key(table, wanted)
        with self._lock:
            kept = self._kept.get(key)
            if kept is not None and (kept.complete or covers(kept.found, kept.kmax, range(1, kmax + 1))):
                self.reused += 1
                self._touch(key)
                report(progress, 1, 1)
                return shortened(kept.found, kmax), kept.col
            most = max(1, table.n_rows - 1)
            width = self._width(wanted, kmax, most)
            found, col = _search.search_cells(
                table, kmax=width, targets=targets, progress=progress, cancel=cancel
            )
            self.searches += 1
            self._kept[key] = _Kept(width, width >= most, found, col)
            self._touch(key)
            return found, col

    def _width(self, targets: Mapping[str, BoolArray], kmax: int, most: int) -> int:
        """Donors to search for: :attr:`reach` (at most ``most``) if those lists fit, else ``kmax``.

        They fit when they take at most half of :attr:`keep_bytes`.
        """
        reach = max(REACH, 2 * kmax) if self.reach is None else self.reach
        wide = min(max(kmax, reach), most)
        if wide <= kmax:
            return kmax
        cells = sum(int(np.count_nonzero(m)) for m in targets.values())
        return wide if 2 * cells * _bytes_per_cell(wide) <= self.keep_bytes else kmax

    def _touch(self, key: bytes) -> None:
        """Mark ``key`` as the latest used; let the least recently used searches go past the bytes.

        The searches of the fill under way always stay.
        """
        self._kept[key] = self._kept.pop(key)  # to the end: the order is the order of use
        if self._touched is not None:
            self._touched.add(key)
        total = sum(_size(kept) for kept in self._kept.values())
        for old in list(self._kept):
            if total <= self.keep_bytes:
                break
            if old != key and (self._touched is None or old not in self._touched):
                total -= _size(self._kept.pop(old))


def _bytes_per_cell(kmax: int) -> int:
    """Bytes of a cell's list for ``kmax`` donors: a row position and a distance per donor kept."""
    return (kmax + extra_donors(kmax)) * 2 * 8


def _size(kept: _Kept) -> int:
    return int(kept.found.index.nbytes + kept.found.distance.nbytes)
