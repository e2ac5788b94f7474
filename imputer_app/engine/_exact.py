"""Exact distances of the chosen candidates, and whether a tie may run past a list (numpy only).

The search ranks candidates by distances from matrix products, which carry rounding
noise (a true 0 may come out as 3.5e-15). Every candidate a cell keeps is therefore
recomputed from differences (:meth:`~imputer_app.engine._distance.DistanceModel.exact`)
and the list re-sorted by (exact distance, row) before ties, weights and the fill log.
A candidate left out of a list is at least as far, by the search's distance, as the
list's last one, so its exact distance is at least that minus the noise bound
(``DistanceModel.noise``): when that could still tie with the k-th donor
(:func:`~imputer_app.engine._ties.tie_edges`), the cell is searched again more widely.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._ties import tie_edges

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]


def exact_cells(
    model: DistanceModel, rows: IntArray, lists: IntArray, approx: FloatArray, line: IntArray, pos: IntArray
) -> tuple[IntArray, FloatArray]:
    """Cells' chosen candidates with exact squared distances, sorted by (distance, row).

    Cells of one row choose from that row's list, so each list entry is computed once:
    the lists' heads (up to the last position any cell chose) are made exact where the
    search's rounding could matter (:func:`rounding_matters`) and ranked, and every
    cell's choice is put in the order of those ranks.

    Parameters
    ----------
    model : DistanceModel
        Computes the exact distances.
    rows : ndarray of int, shape (m,)
        The target rows.
    lists : ndarray of int, shape (m, L)
        Each row's candidates; -1 pads.
    approx : ndarray of shape (m, L)
        Their search distances, ascending; ``inf`` pads.
    line : ndarray of int, shape (cells,)
        Each cell's row, as a position in ``rows``.
    pos : ndarray of int, shape (cells, w)
        Positions in the row's list of the cell's chosen candidates; -1 pads.

    Returns
    -------
    index, d2 : ndarray of shape (cells, w)
        Sorted by exact distance (equal distances by row); -1 / inf pad.
    """
    head = int(pos.max(initial=-1)) + 1
    if head == 0:  # no cell chose anything
        return np.full(pos.shape, -1, dtype=np.intp), np.full(pos.shape, np.inf)
    index, d2, order = exact_sorted(model, rows, lists[:, :head], approx[:, :head])
    rank = np.empty(index.shape, dtype=np.intp)  # where each list entry went in the re-sort
    np.put_along_axis(rank, order, np.broadcast_to(np.arange(head), index.shape), axis=1)
    cell_rank = np.where(pos >= 0, rank[line[:, None], np.maximum(pos, 0)], head)
    cell_rank.sort(axis=1)
    padded = np.minimum(cell_rank, max(head - 1, 0))
    got = cell_rank < head
    return (
        np.where(got, index[line[:, None], padded], -1),
        np.where(got, d2[line[:, None], padded], np.inf),
    )


def rounding_matters(d2: FloatArray, noise: float) -> BoolArray:
    """Where a search distance must be recomputed from differences before it is used.

    Parameters
    ----------
    d2 : ndarray of shape (m, L)
        Search distances, ascending per row; ``inf`` pads.
    noise : float
        Bound on their rounding.

    Returns
    -------
    ndarray of bool, shape (m, L)
        Near 0 (the rounding could exceed 1e-9 of the distance: a true 0 comes out as
        3.5e-15), or within rounding and the tie tolerance of a neighbour in the list
        (they may be tied, or in the other order). Elsewhere the search distance is
        within 1e-9 of the exact one, can tie with nothing, and is kept.
    """
    near = d2 <= noise * 1e9
    if d2.shape[1] > 1:
        with np.errstate(invalid="ignore"):  # inf - inf between pads
            close = np.diff(d2, axis=1) <= 2.0 * noise + 2.0 * tie_edges(d2[:, 1:])[1] - 2.0 * d2[:, 1:]
        near[:, 1:] |= close
        near[:, :-1] |= close
    return near & np.isfinite(d2)


def exact_sorted(
    model: DistanceModel, rows: IntArray, index: IntArray, approx: FloatArray | None = None
) -> tuple[IntArray, FloatArray, IntArray]:
    """Candidates re-sorted by (exact squared distance, row).

    With ``approx`` (the search distances), only the entries where
    :func:`rounding_matters` are recomputed; the others keep their search distance.

    Parameters
    ----------
    model : DistanceModel
        Computes the exact distances.
    rows : ndarray of int, shape (m,)
        The target row of each line.
    index : ndarray of int, shape (m, w)
        Candidates per line; -1 pads.
    approx : ndarray of shape (m, w), optional
        Their search distances, ascending per line.

    Returns
    -------
    index, d2 : ndarray of shape (m, w)
        Re-sorted, exact; -1 / inf pad.
    order : ndarray of int, shape (m, w)
        The re-sort: ``index`` is ``take_along_axis(given index, order)``.
    """
    valid = index >= 0
    if approx is None:  # every entry: the whole matrix at once, pads as the pair (0, 0)
        some = not valid.all()
        x = np.where(valid, rows[:, None], 0) if some else np.broadcast_to(rows[:, None], index.shape)
        y = np.where(valid, index, 0) if some else index
        exact = model.exact(x.ravel(), y.ravel()).reshape(index.shape)
        if some:
            exact[~valid] = np.inf
    else:
        exact = np.where(valid, np.maximum(approx, 0.0), np.inf)
        r, c = np.nonzero(valid & rounding_matters(approx, model.noise))
        exact[r, c] = model.exact(rows[r], index[r, c])
    index = np.where(valid, index, -1)
    order = sort_order(exact, np.where(valid, index, np.iinfo(np.intp).max))
    if order is None:  # already in order, as nearly every list is
        return index, exact, np.broadcast_to(np.arange(index.shape[1]), index.shape)
    return np.take_along_axis(index, order, axis=1), np.take_along_axis(exact, order, axis=1), order


def sort_order(d2: FloatArray, index: IntArray) -> IntArray | None:
    """Per line, the stable order of (``d2``, ``index``) as ``np.lexsort`` gives it.

    None when every line is in order already, as nearly every list of a search is:
    only the lines out of order are sorted.
    """
    if d2.shape[1] < 2:
        return None
    with np.errstate(invalid="ignore"):  # inf - inf between pads
        ahead = d2[:, 1:] > d2[:, :-1]
        level = (d2[:, 1:] == d2[:, :-1]) & (index[:, 1:] >= index[:, :-1])
    redo = np.flatnonzero(~(ahead | level).all(axis=1))
    if not len(redo):
        return None
    order = np.broadcast_to(np.arange(d2.shape[1]), d2.shape).copy()
    order[redo] = np.lexsort((index[redo], d2[redo]), axis=-1)
    return order


def exact_lists(
    model: DistanceModel, rows: IntArray, index: IntArray, d2: FloatArray
) -> tuple[IntArray, FloatArray, FloatArray]:
    """A search's candidate lists with exact squared distances, sorted by (distance, row).

    Parameters
    ----------
    model : DistanceModel
        Computes the exact distances.
    rows : ndarray of int, shape (m,)
        The target rows.
    index, d2 : ndarray of shape (m, L)
        Each row's candidates and search distances, nearest first; -1 / inf pad. An
        ``inf`` distance (a candidate the search ruled out) is dropped.

    Returns
    -------
    index, d2 : ndarray of shape (m, L)
        Re-sorted, exact; -1 / inf pad.
    beyond : ndarray of shape (m,)
        The search distance of the last candidate of a full list (a candidate not in
        the list is at least this far by the search's measure); ``inf`` where the list
        is not full (it holds every candidate).
    """
    beyond = d2[:, -1].copy() if index.shape[1] else np.full(len(index), np.inf)
    # a candidate the search ruled out (another group, the row itself) has no distance:
    # recomputed from differences it would get one back
    index = np.where(np.isfinite(d2), index, -1)
    return (*exact_sorted(model, rows, index)[:2], beyond)


def still_open(d2: FloatArray, count: IntArray, kmax: int, beyond: FloatArray, noise: float) -> BoolArray:
    """Cells whose donors tied with the ``kmax``-th may not all be in hand.

    Parameters
    ----------
    d2 : ndarray of shape (cells, w)
        The cells' kept donors' exact squared distances, sorted; ``inf`` pads.
    count : ndarray of int, shape (cells,)
        Donors kept per cell.
    kmax : int
        The most places any k asks for.
    beyond : ndarray of shape (cells,)
        Lowest search distance a donor not kept can have (``inf``: there is none).
    noise : float
        Bound on the search distances' rounding.

    Returns
    -------
    ndarray of bool, shape (cells,)
        Fewer than ``kmax`` donors with more possibly left, or a donor not kept possibly
        tied with the ``kmax``-th (its exact distance may lie ``noise`` below its search
        distance).
    """
    short = np.isfinite(beyond) & (count < kmax)
    if d2.shape[1] < kmax or len(d2) == 0:
        return short
    high = tie_edges(d2[:, kmax - 1])[1]  # NaN where a cell has fewer than kmax donors
    return short | ((count >= kmax) & (beyond <= high + noise))
