"""The used columns of a table as arrays, and their scaled similarity features (numpy only)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._distance import Features
from imputer_app.engine._log import Censored
from imputer_app.engine._scaling import apply_scale, fit_scale
from imputer_app.plan import FillPlan


@dataclass
class Columns:
    """Raw per-column arrays of the used columns (after hide and censored handling)."""

    numbers: dict[str, NDArray[np.float64]]
    codes: dict[str, NDArray[np.intp]]
    labels: dict[str, NDArray[np.generic]]
    censored: dict[str, Censored]


def has_gap(cols: Columns, col: str) -> bool:
    """True when ``col`` has a cell without a value."""
    if col in cols.numbers:
        return bool(np.isnan(cols.numbers[col]).any())
    return bool((cols.codes[col] < 0).any())


def scaled_features(
    cols: Columns, plan: FillPlan, kinds: Mapping[str, str], scale: bool
) -> tuple[Features, list[str]]:
    """Scaled similarity columns and weights; constant or zero-weight columns left out."""
    warnings: list[str] = []
    sim = [c for c in plan.similarity_columns or () if plan.weight(c) > 0]
    num = [c for c in sim if kinds[c] == "number"]
    cat = [c for c in sim if kinds[c] != "number"]
    n = len(next(iter(cols.numbers.values()), next(iter(cols.codes.values()), np.empty(0))))
    x = np.column_stack([cols.numbers[c] for c in num]) if num else np.empty((n, 0))
    codes = np.column_stack([cols.codes[c] for c in cat]) if cat else np.empty((n, 0), dtype=np.intp)
    fitted = fit_scale(x, plan.scaling if scale else "none")
    keep_num = ~fitted.constant
    keep_cat = np.array(
        [len(np.unique(codes[:, j][codes[:, j] >= 0])) > 1 for j in range(len(cat))], dtype=bool
    )
    for col, ok, values in [*zip(num, keep_num, x.T, strict=True), *zip(cat, keep_cat, codes.T, strict=True)]:
        if not ok:
            has = np.isfinite(values).any() if values.dtype.kind == "f" else (values >= 0).any()
            why = "is constant" if has else "has no values"
            warnings.append(f"column {col!r} {why}; left out of the distance")
    for col in np.asarray(num)[fitted.fallback].tolist() if num else []:
        warnings.append(f"column {col!r} has zero interquartile range; scaled by its standard deviation")
    scaled = apply_scale(x, fitted)[:, keep_num]
    w_num = np.array([plan.weight(c) for c in num])[keep_num] if num else np.empty(0)
    w_cat = np.array([plan.weight(c) for c in cat])[keep_cat] if cat else np.empty(0)
    total = float(w_num.sum() + w_cat.sum())
    if total <= 0 and (plan.fill_columns or ()):
        warnings.append(
            "no similarity column is left to compare rows (all are constant, empty or weighted 0)"
        )
    return Features(scaled, w_num, codes[:, keep_cat], w_cat, total), warnings
