"""The similarity weight two rows both have, for many pairs of rows at once (numpy only).

The share of the similarity weight a filled cell and its donors both have is one of the
weak-support rules (:mod:`~imputer_app.engine._intervals`). The weight two rows share
is ``sum of w_j`` over the similarity columns both have; it is worked out as, per
distinct weight ``w``, ``w x (number of columns of that weight both rows have)``,
summed in ascending order of weight, so that it is the same number however the pairs
are grouped:

* up to :data:`PAIR_ROWS` rows, the counts of every pair of rows come from one matrix
  product of the 0/1 masks per weight (whole numbers, exact);
* beyond, each row's mask is packed into 64-bit words and a pair's count is the
  number of bits set in the two rows' words ANDed together.

With more than :data:`WEIGHT_GROUPS` different weights, the weights are summed per
column instead (``einsum``), which is slower.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._bits import common_bits, packed_rows
from imputer_app.engine._distance import Features

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

#: Up to this many rows, the counts of every pair of rows are one matrix product.
PAIR_ROWS = 4_000
#: More different weights than this: the weights are summed column by column.
WEIGHT_GROUPS = 4
#: Cells per pass when pairs are gathered cell by cell (bounds the temporaries).
CHUNK = 50_000


def shared_weights(features: Features, rows: IntArray, others: IntArray) -> FloatArray:
    """Weight of the similarity columns both ``rows[i]`` and ``others[i, j]`` have.

    Parameters
    ----------
    features : Features
        The similarity columns (numbers with NaN gaps, codes with -1 gaps, weights).
    rows : ndarray of int, shape (m,)
        Row positions.
    others : ndarray of int, shape (m, w)
        Row positions paired with each row (-1: none, whose value is then that of
        row 0, to be ignored).

    Returns
    -------
    ndarray of shape (m, w)
    """
    seen = np.hstack([np.isfinite(features.numbers), features.codes >= 0])
    w = np.concatenate([features.number_weights, features.code_weights]).astype(np.float64)
    others = np.maximum(others, 0)
    out = np.zeros(others.shape)
    if not seen.shape[1] or not others.size:
        return out
    weights = np.unique(w)
    if len(weights) > WEIGHT_GROUPS:
        return _per_column(seen, w, rows, others)
    pairs = len(seen) <= PAIR_ROWS
    for value in weights.tolist():  # ascending: the same sum in every case
        mask = seen[:, w == value]
        counts = _pair_counts(mask, rows, others) if pairs else _bit_counts(mask, rows, others)
        out += value * counts
    return out


def _pair_counts(mask: NDArray[np.bool_], rows: IntArray, others: IntArray) -> FloatArray:
    """Columns of ``mask`` both rows have, from one product over every pair of rows."""
    ones = mask.astype(np.float64)
    every = ones @ ones.T  # whole numbers below 2**53: exact
    return np.asarray(every[rows[:, None], others], dtype=np.float64)


def _bit_counts(mask: NDArray[np.bool_], rows: IntArray, others: IntArray) -> FloatArray:
    """Columns of ``mask`` both rows have, counted on the rows' masks packed in 64-bit words."""
    words = packed_rows(mask)
    out = np.empty(others.shape)
    for a in range(0, len(rows), CHUNK):
        b = min(a + CHUNK, len(rows))
        out[a:b] = common_bits(words, rows[a:b], others[a:b])
    return out


def _per_column(seen: NDArray[np.bool_], w: FloatArray, rows: IntArray, others: IntArray) -> FloatArray:
    """The shared weight summed column by column (many different weights)."""
    fin = seen.astype(np.float64)
    out = np.empty(others.shape)
    for a in range(0, len(rows), CHUNK):
        b = min(a + CHUNK, len(rows))
        out[a:b] = np.einsum("mp,mip->mi", fin[rows[a:b]] * w, fin[others[a:b]])
    return out
