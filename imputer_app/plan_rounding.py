"""How filled numbers are rounded: to the column's measured precision, or as computed.

A lab writes each measured column to a fixed number of decimals (a pH meter gives two,
a balance four). By default a filled number is rounded to its column's *measured
precision*: the most decimals among the column's observed values (common practice, no
source), read from the cell text where the reader has it (a delimited file's text, a
workbook cell's number format) and otherwise from the stored number read to
:data:`SIGNIFICANT` significant digits, so that binary noise such as
``7.233749999999999`` never counts as precision. The plan's ``decimals`` table sets a
column's decimals outright; ``rounding = "as_computed"`` leaves the others unrounded.

Interval bounds of a filled number are rounded *outward* to the same decimals (the
lower bound down, the upper bound up), so that the interval written never claims less
than the calibrated one, and it still holds the rounded value.

A censored entry's stand-in (the value a below-limit entry such as ``"<0.02"`` stands
for: a ROS estimate, half the limit, ...) follows the same rule, but never keeps fewer
than :data:`STAND_IN_SIGNIFICANT` significant digits: it lies below the lab's limit, often
below the column's last decimal, and rounding a ROS estimate of 0.0122 in a two-decimal
column to 0.01 (or 0.0042 to 0.0) would replace the estimate by an artefact of the
column's format (:func:`round_stand_ins`).

Examples
--------
>>> import numpy as np
>>> float_decimals(np.array([6.42, 7.5, 0.1 + 0.2]))
2
>>> column_decimals({"pH": 1}, "measured", "pH", 2), column_decimals({}, "as_computed", "pH", 2)
(1, None)
>>> lo, hi = outward(np.array([6.4149]), np.array([6.4201]), np.array([2]))
>>> float(lo[0]), float(hi[0])
(6.41, 6.43)
>>> round_stand_ins(np.array([0.0122215, 0.025, 0.5]), 2).tolist()
[0.012, 0.025, 0.5]
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

#: The rounding rules a plan may name: the column's measured precision, or none.
ROUNDINGS = ("measured", "as_computed")
DEFAULT_ROUNDING = "measured"
#: What a plan without a ``rounding`` key means: it was written before Kinfill rounded
#: filled numbers (a plan file, an export's recorded plan), when they were left as
#: computed; reading it so gives the same fill again. A plan made now says its rounding.
LEGACY_ROUNDING = "as_computed"
#: Most decimals a filled number is rounded to (a float holds about 15-17 digits).
MAX_DECIMALS = 15
#: Significant digits a stored number is read to when no cell text gives its decimals.
SIGNIFICANT = 12
#: Significant digits a censored entry's stand-in keeps at least, whatever its column's
#: decimals (Kinfill's own rule: two digits keep a ROS estimate's rank among the others).
STAND_IN_SIGNIFICANT = 2


def float_decimals(values: NDArray[np.float64]) -> int | None:
    """The most decimals among finite ``values``, each read to :data:`SIGNIFICANT` digits.

    Parameters
    ----------
    values : ndarray of float of shape (n,)
        NaN and infinities are left out.

    Returns
    -------
    int or None
        From 0 to :data:`MAX_DECIMALS`; None when no value is finite.
    """
    finite = np.asarray(values, dtype=np.float64)
    finite = finite[np.isfinite(finite)]
    if not finite.size:
        return None
    finite = np.unique(finite)
    # the decimals a value shows at SIGNIFICANT digits: no fewer than 0, no more than MAX
    scale = np.abs(finite)
    tolerance = np.maximum(scale, 1e-300) * 0.5 * 10.0 ** (1 - SIGNIFICANT)
    for decimals in range(MAX_DECIMALS + 1):
        if np.all(np.abs(np.round(finite, decimals) - finite) <= tolerance):
            return decimals
    return MAX_DECIMALS


def column_decimals(
    decimals: Mapping[str, int], rounding: str, column: str, measured: int | None
) -> int | None:
    """The decimals a filled number of ``column`` is rounded to, or None for no rounding.

    The plan's ``decimals`` entry wins; otherwise the measured precision under the
    ``"measured"`` rule, and none under ``"as_computed"``.
    """
    if column in decimals:
        return int(decimals[column])
    if rounding == "measured" and measured is not None:
        return min(int(measured), MAX_DECIMALS)
    return None


def outward(
    lower: NDArray[np.float64], upper: NDArray[np.float64], decimals: NDArray[np.intp]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Round interval bounds outward to ``decimals`` per cell (-1: left as they are).

    The lower bound goes down and the upper bound up, so the rounded interval holds the
    calibrated one. A bound already at that many decimals (within float noise) stays.
    """
    low = np.array(lower, dtype=np.float64, copy=True)
    high = np.array(upper, dtype=np.float64, copy=True)
    for d in np.unique(decimals[decimals >= 0]).tolist():
        sel = decimals == d
        factor = 10.0**d
        # scaled bounds with float noise taken off first (6.41 * 100 is 640.9999999999999)
        low[sel] = np.floor(np.round(low[sel] * factor, 6)) / factor
        high[sel] = np.ceil(np.round(high[sel] * factor, 6)) / factor
    return low, high


def stand_in_decimals(values: NDArray[np.float64], decimals: int) -> NDArray[np.intp]:
    """Decimals each stand-in value is rounded to: ``decimals``, or more for 2 significant digits.

    Parameters
    ----------
    values : ndarray of float of shape (n,)
        Stand-in values; NaN, infinities and 0 get ``decimals``.
    decimals : int
        The column's decimals (:func:`column_decimals`).

    Returns
    -------
    ndarray of int of shape (n,)
        At least ``decimals``, at least enough for :data:`STAND_IN_SIGNIFICANT`
        significant digits, at most :data:`MAX_DECIMALS`.
    """
    values = np.asarray(values, dtype=np.float64)
    size = np.abs(np.where(np.isfinite(values) & (values != 0), values, 1.0))
    # a value's leading digit sits at 10**floor(log10|v|): 0.0122 needs 3 decimals for "0.012"
    needed = STAND_IN_SIGNIFICANT - 1 - np.floor(np.log10(size)).astype(np.intp)
    needed = np.where(np.isfinite(values) & (values != 0), needed, 0)
    return np.clip(np.maximum(needed, int(decimals)), 0, MAX_DECIMALS)


def round_stand_ins(values: NDArray[np.float64], decimals: int | None) -> NDArray[np.float64]:
    """Round stand-in values to their column's ``decimals``, keeping 2 significant digits.

    Parameters
    ----------
    values : ndarray of float of shape (n,)
        Stand-ins of censored entries (NaN stays NaN).
    decimals : int or None
        The column's decimals; None leaves the values as computed.

    Returns
    -------
    ndarray of float of shape (n,)
        A new array, each value rounded (half to even) to :func:`stand_in_decimals`.
    """
    out = np.array(values, dtype=np.float64, copy=True)
    if decimals is None:
        return out
    places = stand_in_decimals(out, decimals)
    for d in np.unique(places).tolist():
        sel = places == d
        out[sel] = np.round(out[sel], d)
    return out
