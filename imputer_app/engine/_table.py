"""A table made ready for the neighbour search: arrays only (numpy only).

:func:`imputer_app.engine.prepare` builds a :class:`PreparedTable` from a DataFrame
or a sheet; :func:`~imputer_app.engine.nearest_donors` and
:func:`~imputer_app.engine.combine` read it. The recovery test prepares once per
masking and reuses one neighbour search for every k.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._distance import Features
from imputer_app.plan import FillPlan


@dataclass(frozen=True)
class PreparedTable:
    """The numbers the engine works on, with the resolved plan.

    Attributes
    ----------
    n_rows : int
    row_labels : ndarray of shape (n_rows,)
        The input's index labels (file row numbers for a sheet).
    columns : tuple of str
        Every column of the input frame, in order.
    similarity_columns, fill_columns : tuple of str
        Resolved roles (also in ``plan``).
    kinds : dict of str to {"number", "category"}
        Kind of every similarity and fill column.
    values : dict of str to ndarray of shape (n_rows,)
        Per fill column: raw floats with NaN gaps (numbers; censored entries already
        substituted when the plan says so) or int class codes with -1 gaps (categories).
    categories : dict of str to ndarray
        Class labels of every category column, indexed by code.
    observed : dict of str to ndarray of bool, shape (n_rows,)
        Per fill column: cells holding a value (observed, or a substituted censored
        entry) that was not hidden; only these cells can be donors.
    plan : FillPlan
        The plan with similarity and fill columns filled in.
    warnings : tuple of str
        Plain-words remarks (constant columns left out, ...).
    features : Features
        Scaled similarity columns for the distance.
    groups : ndarray of int, shape (n_rows,), or None
        Group codes when the plan has a group column; -1 where the group is empty.
    group_labels : ndarray
        Group label per code.
    cap_upper, cap_lower : dict of str to ndarray of shape (n_rows,)
        Per numeric fill column: limit of a censored cell that is filled and capped
        ("<" gives an upper cap, ">" a lower one); NaN where there is none.
    unknown_limit : dict of str to ndarray of bool, shape (n_rows,)
        Per numeric fill column: censored cells whose limit is unknown (filled by kNN).
    measured : ndarray of bool, shape (n_rows,), or None
        The row has a value in a weighted similarity column, constant columns (left
        out of the distance) included.
    left_alone : dict of str to ndarray of bool, shape (n_rows,)
        Per fill column: empty cells that are not gaps (a formula's error result,
        unless the plan fills those); never targets, never donors.
    decimals : dict of str to int
        Per numeric fill column that is rounded, and per number column whose censored
        entries' stand-ins are rounded: the decimals its filled numbers get (the plan's
        ``decimals``, else the measured precision under its ``rounding``); stand-ins
        keep at least two significant digits beyond them.
    """

    n_rows: int
    row_labels: NDArray[np.generic]
    columns: tuple[str, ...]
    similarity_columns: tuple[str, ...]
    fill_columns: tuple[str, ...]
    kinds: dict[str, str]
    values: dict[str, NDArray[np.generic]]
    categories: dict[str, NDArray[np.generic]]
    observed: dict[str, NDArray[np.bool_]]
    plan: FillPlan
    warnings: tuple[str, ...]
    features: Features
    groups: NDArray[np.intp] | None = None
    group_labels: NDArray[np.generic] = field(default_factory=lambda: np.empty(0, dtype=object))
    cap_upper: dict[str, NDArray[np.float64]] = field(default_factory=dict)
    cap_lower: dict[str, NDArray[np.float64]] = field(default_factory=dict)
    unknown_limit: dict[str, NDArray[np.bool_]] = field(default_factory=dict)
    measured: NDArray[np.bool_] | None = None
    left_alone: dict[str, NDArray[np.bool_]] = field(default_factory=dict)
    decimals: dict[str, int] = field(default_factory=dict)

    def targets(self) -> dict[str, NDArray[np.bool_]]:
        """Default rows to fill per fill column: every cell not observed nor left alone."""
        out = {}
        for col in self.fill_columns:
            alone = self.left_alone.get(col)
            out[col] = ~self.observed[col] if alone is None else ~self.observed[col] & ~alone
        return out
