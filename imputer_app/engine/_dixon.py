"""Dixon's missing-aware distance: the pieces every way of computing it shares (numpy only).

:mod:`~imputer_app.engine._distance` sums the distance from matrix products of factor
matrices, :mod:`~imputer_app.engine._row_pairs` from the values of given pairs of rows;
both shift the columns first (:func:`shifted`) and end with the ratio of the weighted
sum to the shared weight (:func:`ratio`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


def product(rows: FloatArray, weights: FloatArray) -> FloatArray:
    """``rows @ weights`` by BLAS: fast, its rounding depends on the number of rows."""
    return np.asarray(rows @ weights, dtype=np.float64)


def row_sums(rows: FloatArray, weights: FloatArray) -> FloatArray:
    """``rows @ weights`` summed row by row: the same numbers for a row whatever rows come with it."""
    return np.asarray((rows * weights).sum(axis=1), dtype=np.float64)


def shifted(x: FloatArray) -> tuple[FloatArray, NDArray[np.bool_]]:
    """``x`` with each column shifted by its mean rounded to a whole number, gaps 0; and the observed mask.

    A shift does not change a difference, keeps whole-number data whole (so products of
    them are exact) and reduces rounding error when values are large compared with
    their spread.
    """
    mask = np.isfinite(x)
    z = np.where(mask, x, 0.0)
    z -= np.round(z.sum(axis=0) / np.maximum(mask.sum(axis=0), 1))
    z *= mask
    return z, mask


def ratio(total: FloatArray, shared: FloatArray, out: FloatArray | None = None) -> FloatArray:
    """``total / shared`` clipped at 0, ``inf`` where no column is shared (0/0) or total is inf."""
    with np.errstate(divide="ignore", invalid="ignore"):
        d2 = np.divide(total, shared, out=out)
    np.copyto(d2, np.inf, where=np.isnan(d2))
    np.maximum(d2, 0.0, out=d2)
    return d2
