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
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

#: The rounding rules a plan may name: the column's measured precision, or none.
ROUNDINGS = ("measured", "as_computed")
DEFAULT_ROUNDING = "measured"
#: Most decimals a filled number is rounded to (a float holds about 15-17 digits).
MAX_DECIMALS = 15
#: Significant digits a stored number is read to when no cell text gives its decimals.
SIGNIFICANT = 12


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
