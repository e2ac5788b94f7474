"""Donors tied at the k-th distance: who takes part and with what share (numpy only).

The fill must not depend on row order, so a cell's donors are not "the first k rows"
but every donor nearer than the k-th distance (share 1) plus every donor tied with the
k-th (within :func:`tie_edges`), the tied ones sharing the places left equally. With
k = 2, one donor nearer and three tied at the 2nd distance: weights 1, 1/3, 1/3, 1/3.
Donor lists are sorted by exact squared distance (recomputed from differences), so
the donors that take part are always a prefix of the list. The rule is Kinfill's own
(no outside source); without ties it is the plain k nearest.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

#: Two squared distances are tied when they differ by at most TIE_REL x d^2 + TIE_ABS
#: (d^2 the k-th donor's): distances equal in exact arithmetic differ by a few units of
#: rounding when computed from different differences.
TIE_REL = 1e-9
TIE_ABS = 1e-12


def tie_edges(d2k: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Lowest and highest squared distance tied with ``d2k`` (the k-th donor's); NaN for ``inf``."""
    with np.errstate(invalid="ignore"):
        slack = np.abs(d2k) * TIE_REL + TIE_ABS
        return d2k - slack, d2k + slack


def shares(d2: FloatArray, count: IntArray, k: int) -> tuple[FloatArray, IntArray]:
    """Weight of every donor in a cell's fill, and how many donors take part.

    Parameters
    ----------
    d2 : ndarray of shape (cells, w)
        Squared distances, nearest first (exact order); ``inf`` pads.
    count : ndarray of int, shape (cells,)
        Real donors per cell.
    k : int
        Places per cell.

    Returns
    -------
    weights : ndarray of shape (cells, w)
        1 for a donor nearer than the k-th distance, ``places left / tied donors`` for
        each donor tied with the k-th, 0 for the others; each row sums to ``min(k, count)``.
    taken : ndarray of int, shape (cells,)
        Donors with a weight (a prefix of the row).
    """
    cells, width = d2.shape
    used = np.minimum(int(k), count)
    if width == 0 or cells == 0:
        return np.zeros((cells, width)), np.zeros(cells, dtype=np.intp)
    # the common case first: nothing ties with the k-th, so the first min(k, count) count 1
    out = (np.arange(width)[None, :] < used[:, None]).astype(np.float64)
    taken = used.astype(np.intp)
    line = np.arange(cells)
    low, high = tie_edges(d2[line, np.maximum(used - 1, 0)])
    after = np.where(used < count, d2[line, np.minimum(used, width - 1)], np.inf)
    before = np.where(used >= 2, d2[line, np.maximum(used - 2, 0)], -np.inf)
    tied = np.flatnonzero((used > 0) & ((after <= high) | (before >= low)))
    if len(tied):
        out[tied], taken[tied] = _tied_shares(d2[tied], count[tied], used[tied], low[tied], high[tied])
    return out, taken


def _tied_shares(
    d2: FloatArray, count: IntArray, used: IntArray, low: FloatArray, high: FloatArray
) -> tuple[FloatArray, IntArray]:
    """:func:`shares` for cells where some donor ties with the k-th (``low``..``high``)."""
    real = np.arange(d2.shape[1])[None, :] < count[:, None]
    near = real & (d2 < low[:, None])
    tied = real & ~near & (d2 <= high[:, None])
    n_near, n_tied = near.sum(axis=1), tied.sum(axis=1)
    share = (used - n_near) / np.maximum(n_tied, 1)
    out = np.where(near, 1.0, np.where(tied, share[:, None], 0.0))
    return out, (n_near + n_tied).astype(np.intp)


def weighted_median(values: FloatArray, weights: FloatArray) -> FloatArray:
    """Per row, the median of ``values`` counted by ``weights`` (NaN where all weights are 0).

    The midpoint of the lower and the upper weighted median (the smallest value whose
    cumulative weight reaches half the total, and the smallest that passes it), so that
    with equal weights it is the ordinary median. Comparisons allow :data:`TIE_REL` x
    total for the rounding of fractional shares.
    """
    v = np.where(weights > 0, values, np.inf)
    order = np.argsort(v, axis=1, kind="stable")
    sv = np.take_along_axis(v, order, axis=1)
    cw = np.cumsum(np.take_along_axis(weights, order, axis=1), axis=1)
    total = cw[:, -1:] if cw.shape[1] else np.zeros((len(cw), 1))
    half, slack = total / 2.0, total * TIE_REL
    lower = np.take_along_axis(sv, np.argmax(cw >= half - slack, axis=1)[:, None], axis=1)[:, 0]
    upper = np.take_along_axis(sv, np.argmax(cw > half + slack, axis=1)[:, None], axis=1)[:, 0]
    with np.errstate(invalid="ignore"):
        out = (lower + upper) / 2.0
    return np.where(total[:, 0] > 0, out, np.nan)


def weighted_vote(
    codes: IntArray, d2: FloatArray, weights: FloatArray, n_classes: int
) -> tuple[IntArray, FloatArray]:
    """Per row, the class with the most weight, and its share of the weight.

    A tie in weight (within :data:`TIE_REL`) goes to the tied class with the nearest
    donor; a tie in that distance too (within :func:`tie_edges`) to the smallest class
    code (class codes follow the sorted labels). -1 / NaN where no donor takes part.

    Parameters
    ----------
    codes : ndarray of int, shape (cells, w)
        Donors' classes, -1 pads.
    d2 : ndarray of shape (cells, w)
        Exact squared distances.
    weights : ndarray of shape (cells, w)
        From :func:`shares`.
    n_classes : int
        Number of classes (codes are below it).
    """
    cells = len(codes)
    if cells == 0 or n_classes == 0:
        return np.full(cells, -1, dtype=np.intp), np.full(cells, np.nan)
    part = (weights > 0) & (codes >= 0)
    votes = np.zeros((cells, n_classes))
    nearest = np.full((cells, n_classes), np.inf)
    r, c = np.nonzero(part)
    np.add.at(votes, (r, codes[r, c]), weights[r, c])
    np.minimum.at(nearest, (r, codes[r, c]), d2[r, c])
    total = votes.sum(axis=1)
    best = votes.max(axis=1, keepdims=True)
    level = (votes > 0) & (votes >= best - total[:, None] * TIE_REL)
    closest = np.where(level, nearest, np.inf).min(axis=1, keepdims=True)
    level &= nearest <= tie_edges(closest)[1]
    win = np.argmax(level, axis=1).astype(np.intp)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = votes[np.arange(cells), win] / total
    has = total > 0
    return np.where(has, win, -1).astype(np.intp), np.where(has, share, np.nan)


def share_notes(weights: FloatArray, used: IntArray) -> list[tuple[int, str]]:
    """``(cell, note)`` for every cell whose tied donors share places (weights below 1).

    ``used`` is ``min(k, count)`` per cell: the place the tied donors are tied at.
    """
    part = (weights > 0) & (weights < 1.0 - TIE_REL)
    out = []
    for i in np.flatnonzero(part.any(axis=1)).tolist():
        tied = int(part[i].sum())
        each = float(weights[i][part[i]][0])
        places = each * tied
        plural = "s" if abs(places - 1.0) > 1e-9 else ""
        out.append(
            (
                i,
                f"{tied} donors tied at the {_ordinal(int(used[i]))} distance share "
                f"{places:.4g} place{plural} (weight {each:.4g} each)",
            )
        )
    return out


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"
