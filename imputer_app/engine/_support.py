"""Weak support: a filled cell whose nearest donor is unusually far (numpy only).

The threshold is the 95th percentile of the nearest-donor distances of every target
cell in the sheet (all fill columns pooled). A cell whose nearest donor is farther
than that is flagged ``weak``: its value rests on rows that are not much like it.
The 95th percentile is Kinfill's own convention, no outside source.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._search import ColumnDonors

WEAK_PERCENTILE = 95.0


def weak_threshold(donors: Iterable[ColumnDonors], percentile: float = WEAK_PERCENTILE) -> float:
    """Distance above which support is weak; NaN when no cell has a donor.

    Parameters
    ----------
    donors : iterable of ColumnDonors
        The nearest donor (column 0) of every target with at least one donor counts.
    percentile : float, default=95
        Which percentile of the pooled nearest-donor distances.
    """
    nearest = [d.distance[d.count > 0, 0] for d in donors if d.index.shape[1] > 0]
    pooled = np.concatenate(nearest) if nearest else np.empty(0)
    if not len(pooled):
        return float("nan")
    return float(np.percentile(pooled, percentile))


#: Words for the support levels of :func:`support_levels`.
SUPPORT_WORDS = ("", "ok", "weak")


def support_levels(donors: ColumnDonors, threshold: float) -> NDArray[np.intp]:
    """Per target, a position in :data:`SUPPORT_WORDS`.

    ``weak`` (2) when the nearest donor is beyond ``threshold``, else ``ok`` (1); 0 (no
    word) for a target without a donor.
    """
    if donors.index.shape[1] == 0:
        return np.zeros(len(donors.rows), dtype=np.intp)
    levels = np.where(donors.distance[:, 0] > threshold, 2, 1).astype(np.intp)
    levels[donors.count == 0] = 0
    return levels
