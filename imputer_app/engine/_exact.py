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


def exact_lists(
    model: DistanceModel, rows: IntArray, index: IntArray, d2: FloatArray
) -> tuple[IntArray, FloatArray, FloatArray]:
    """Candidate lists with exact squared distances, sorted by (distance, row).

    Parameters
    ----------
    model : DistanceModel
        Computes the exact distances.
    rows : ndarray of int, shape (m,)
        The target rows.
    index, d2 : ndarray of shape (m, L)
        Each row's candidates and search distances, nearest first; -1 / inf pad.

    Returns
    -------
    index, d2 : ndarray of shape (m, L)
        Re-sorted, exact; -1 / inf pad.
    beyond : ndarray of shape (m,)
        The search distance of the last candidate of a full list (a candidate not in
        the list is at least this far by the search's measure); ``inf`` where the list
        is not full (it holds every candidate).
    """
    m, width = index.shape
    beyond = d2[:, -1].copy() if width else np.full(m, np.inf)
    valid = (index >= 0) & np.isfinite(d2)
    r, c = np.nonzero(valid)
    exact = np.full(index.shape, np.inf)
    exact[r, c] = model.exact(rows[r], index[r, c])
    key = np.where(valid, index, np.iinfo(np.intp).max)
    order = np.lexsort((key, exact), axis=-1)
    return (
        np.take_along_axis(np.where(valid, index, -1), order, axis=1),
        np.take_along_axis(exact, order, axis=1),
        beyond,
    )


def still_open(
    d2: FloatArray, count: IntArray, kmax: int, beyond: FloatArray, noise: float, full: BoolArray
) -> BoolArray:
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
        Lowest search distance a donor outside the cell's list can have (``inf``: none).
    noise : float
        Bound on the search distances' rounding.
    full : ndarray of bool, shape (cells,)
        The cell's list held more donors than it kept (its last kept is not its last).

    Returns
    -------
    ndarray of bool, shape (cells,)
        Fewer than ``kmax`` donors with more possibly beyond the list, or the tie with
        the ``kmax``-th donor possibly running past the kept donors or the list.
    """
    width = d2.shape[1]
    if width < kmax or len(d2) == 0:
        return np.isfinite(beyond) & (count < kmax)
    high = tie_edges(d2[:, kmax - 1])[1]  # NaN where a cell has fewer than kmax donors
    enough = count >= kmax
    past_kept = full & (d2[:, -1] <= high)
    past_list = beyond <= high + noise
    return (~enough & np.isfinite(beyond)) | (enough & (past_kept | past_list))
