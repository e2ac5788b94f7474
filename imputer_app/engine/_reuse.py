"""A recovery test's hidden cells, kept so that the interval calibration can reuse them (numpy only).

A recovery test hides known cells and fills them for every k it tests. Kept here are,
per fill column, the scores of its hidden cells (each cell once) for every k (see
:func:`~imputer_app.engine._conformal.score_cells`): a fill whose plan differs from the
tested one only in k calibrates its intervals on them instead of hiding cells again.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._table import PreparedTable
from imputer_app.plan import FillPlan

FloatArray = NDArray[np.float64]

#: Plan settings that may differ between the test and the fill: the test tried every k,
#: and a column's cells do not depend on which other columns are filled.
FREE_SETTINGS = ("k", "k_by_column", "interval_level", "fill_columns", "carried_columns")


@dataclass(frozen=True)
class HiddenCells:
    """Scores of a recovery test's hidden known cells, for every k it tested.

    Attributes
    ----------
    ks : tuple of int
        The k values tested, ascending.
    scores : dict of str to ndarray of shape (len(ks), 3, cells)
        Per fill column: error, donors' SD and nearest-donor distance of each hidden
        cell, per k.
    rows : dict of str to ndarray of int
        Row position of each hidden cell, per fill column.
    plan : dict
        The tested plan (resolved, as :meth:`FillPlan.to_dict`).
    masking : str
        The test's hiding (``"random"`` or ``"pattern"``).
    """

    ks: tuple[int, ...]
    scores: dict[str, FloatArray]
    rows: dict[str, NDArray[np.intp]]
    plan: dict[str, Any]
    masking: str

    @property
    def n_cells(self) -> int:
        """Hidden cells kept over every column."""
        return sum(len(r) for r in self.rows.values())

    def at_k(self, table: PreparedTable) -> tuple[dict[str, FloatArray] | None, str]:
        """Per fill column of ``table``, its cells' scores at the column's k; or None and why not."""
        if _settings(self.plan) != _settings(table.plan.to_dict()):
            return None, "the recovery test's plan differs from the fill's beyond k"
        missing = [c for c in table.fill_columns if c not in self.scores]
        if missing:
            return None, f"the recovery test did not hide cells of column {missing[0]!r}"
        at = {k: i for i, k in enumerate(self.ks)}
        untested = [c for c in table.fill_columns if table.plan.k_for(c) not in at]
        if untested:
            k = table.plan.k_for(untested[0])
            return None, f"the recovery test did not try k = {k} (column {untested[0]!r})"
        return {c: self.scores[c][at[table.plan.k_for(c)]] for c in table.fill_columns}, ""


def _settings(plan: Mapping[str, Any]) -> dict[str, Any]:
    return {key: value for key, value in plan.items() if key not in FREE_SETTINGS}


def plan_key(plan: FillPlan) -> dict[str, Any]:
    """The settings of ``plan`` a reuse must match (everything but k and the level)."""
    return _settings(plan.to_dict())
