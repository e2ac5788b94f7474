"""Put numeric similarity columns on one scale before distances (numpy only).

Statistics are computed from observed cells only (NaN is a gap and is ignored).
A column whose spread is zero (constant, or fewer than two observed values) cannot
be scaled; it is reported so the caller can leave it out of the distance with a
warning instead of dividing by zero.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.plan import CHOICES


@dataclass(frozen=True)
class Scale:
    """Per-column centre and spread.

    Attributes
    ----------
    center, spread : ndarray of shape (n_columns,)
        ``scaled = (x - center) / spread``. ``spread`` is 0 for a constant column.
    constant : ndarray of bool, shape (n_columns,)
        True where the column has no spread (or fewer than two observed values).
    fallback : ndarray of bool, shape (n_columns,)
        True where ``robust`` found a zero interquartile range in a column that is not
        constant, so the standard deviation was used instead.
    """

    center: NDArray[np.float64]
    spread: NDArray[np.float64]
    constant: NDArray[np.bool_]
    fallback: NDArray[np.bool_]


def _nan_stat(func: str, x: NDArray[np.float64], *args: float) -> NDArray[np.float64]:
    """Column statistic ignoring NaN; all-NaN columns give NaN without a warning."""
    out = np.full(x.shape[1], np.nan)
    has = ~np.all(np.isnan(x), axis=0)
    if has.any():
        out[has] = getattr(np, func)(x[:, has], *args, axis=0)
    return out


def _extremes(x: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Column minimum and maximum ignoring NaN (NaN for an all-NaN column), without copies.

    ``fmin``/``fmax`` skip NaN by themselves, and a minimum does not depend on the order
    of the values, so no contiguous copy is needed (unlike the sums of a mean).
    """
    if x.shape[0] == 0:
        return np.full(x.shape[1], np.nan), np.full(x.shape[1], np.nan)
    return np.fmin.reduce(x, axis=0), np.fmax.reduce(x, axis=0)


def fit_scale(x: NDArray[np.float64], method: str) -> Scale:
    """Compute the centre and spread of every column of ``x``.

    Parameters
    ----------
    x : ndarray of shape (n_rows, n_columns)
        Numeric values, NaN for gaps (ignored).
    method : {"zscore", "range", "robust", "none"}
        ``zscore``: mean and population standard deviation; ``range``: minimum and
        max - min; ``robust``: median and interquartile range; ``none``: 0 and 1.

    Returns
    -------
    Scale
    """
    n_cols = x.shape[1]
    lo, hi = _extremes(x)
    with np.errstate(invalid="ignore"):
        constant = ~(hi > lo)  # also True for all-NaN columns
    fallback = np.zeros(n_cols, dtype=bool)
    if method == "none":
        center, spread = np.zeros(n_cols), np.ones(n_cols)
    elif method == "zscore":
        center, spread = _nan_stat("nanmean", x), _nan_stat("nanstd", x)
    elif method == "range":
        center, spread = lo, hi - lo
    elif method == "robust":
        center = _nan_stat("nanmedian", x)
        spread = _nan_stat("nanpercentile", x, 75.0) - _nan_stat("nanpercentile", x, 25.0)
        fallback = ~constant & ~(spread > 0)
        if fallback.any():
            spread[fallback] = _nan_stat("nanstd", x[:, fallback])
    else:
        raise ValueError(f"scaling must be one of {', '.join(CHOICES['scaling'])}; got {method!r}")
    center = np.where(constant, 0.0, center)
    spread = np.where(constant, 0.0, spread)
    return Scale(center=center, spread=spread, constant=constant, fallback=fallback)


def apply_scale(x: NDArray[np.float64], scale: Scale) -> NDArray[np.float64]:
    """Return ``(x - center) / spread`` column-wise; constant columns become all NaN.

    Parameters
    ----------
    x : ndarray of shape (n_rows, n_columns)
        NaN gaps stay NaN.
    scale : Scale
        From :func:`fit_scale` on the same columns.

    Returns
    -------
    ndarray of shape (n_rows, n_columns), a new array.
    """
    safe = np.where(scale.constant, 1.0, scale.spread)
    if scale.center.any() or (safe != 1.0).any():
        out = (x - scale.center) / safe
    else:  # no scaling: (x - 0) / 1 is x exactly, so a copy does (without two temporaries)
        out = np.array(x, dtype=np.float64, copy=True)
    out[:, scale.constant] = np.nan
    return out
