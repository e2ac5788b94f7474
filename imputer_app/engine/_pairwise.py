"""Distances between all rows of a small table at once, for checks and examples (numpy only).

The search never builds the whole matrix; :func:`pairwise_distances` does, with the
same :class:`~imputer_app.engine._distance.DistanceModel`, so that the distance can be
checked against scikit-learn and against sums worked out by hand.
"""

from __future__ import annotations

import numpy as np

from imputer_app.engine._distance import DistanceModel, Features, FloatArray, IntArray


def pairwise_distances(
    numbers: FloatArray,
    weights: FloatArray | None = None,
    *,
    codes: IntArray | None = None,
    code_weights: FloatArray | None = None,
) -> FloatArray:
    """Weighted missing-aware Euclidean distances between all rows.

    Parameters
    ----------
    numbers : ndarray of shape (n_rows, n_numeric)
        Numeric columns (already scaled), NaN for gaps.
    weights : ndarray of shape (n_numeric,), default=all 1
        Weight of each numeric column.
    codes : ndarray of int, shape (n_rows, n_categorical), default=None
        Class codes, -1 for gaps.
    code_weights : ndarray of shape (n_categorical,), default=all 1
        Weight of each categorical column.

    Returns
    -------
    ndarray of shape (n_rows, n_rows)
        Distances (not squared); NaN where two rows share no column.

    Examples
    --------
    >>> pairwise_distances(np.array([[0.0, 3.0], [4.0, np.nan]])).round(3).tolist()
    [[0.0, 5.657], [5.657, 0.0]]
    """
    numbers = np.asarray(numbers, dtype=np.float64)
    n = numbers.shape[0]
    w = np.ones(numbers.shape[1]) if weights is None else np.asarray(weights, dtype=np.float64)
    c = np.zeros((n, 0), dtype=np.intp) if codes is None else np.asarray(codes, dtype=np.intp)
    cw = np.ones(c.shape[1]) if code_weights is None else np.asarray(code_weights, dtype=np.float64)
    features = Features(numbers, w, c, cw, float(w.sum() + cw.sum()))
    d2, shared = DistanceModel(features).squared(np.arange(n))
    out = np.sqrt(d2)
    out[~shared] = np.nan
    diagonal = np.flatnonzero(np.diagonal(shared))
    out[diagonal, diagonal] = 0.0  # a row is at distance 0 from itself (no rounding noise)
    return out
