"""The used columns of a table as arrays, and their scaled similarity features (numpy only)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._censored import Censored
from imputer_app.engine._distance import Features
from imputer_app.engine._scaling import apply_scale, fit_scale
from imputer_app.plan import FillPlan


@dataclass
class Columns:
    """Raw per-column arrays of the used columns (after hide and censored handling).

    Numeric columns are the columns of one float ``block`` (n_rows, n_numbers), so
    that work on all of them (gaps, scaling) is one array operation; ``numbers``
    holds views of its columns.
    """

    numbers: dict[str, NDArray[np.float64]]
    codes: dict[str, NDArray[np.intp]]
    labels: dict[str, NDArray[np.generic]]
    censored: dict[str, Censored]
    block: NDArray[np.float64] = field(default_factory=lambda: np.empty((0, 0)))
    where: dict[str, int] = field(default_factory=dict)  # numeric column -> column of ``block``

    def number_matrix(self, names: Sequence[str]) -> NDArray[np.float64]:
        """The numeric columns ``names`` as an (n_rows, len(names)) array (``block`` itself if all)."""
        at = [self.where[c] for c in names]
        return self.block if at == list(range(self.block.shape[1])) else self.block[:, at]

    def gap_columns(self) -> set[str]:
        """The columns with at least one cell without a value."""
        gaps = np.asarray(np.isnan(self.block).any(axis=0), dtype=bool)
        out = {c for c, j in self.where.items() if gaps[j]}
        return out | {c for c, codes in self.codes.items() if (codes < 0).any()}


def scaled_features(
    cols: Columns, plan: FillPlan, kinds: Mapping[str, str], scale: bool
) -> tuple[Features, list[str], NDArray[np.bool_]]:
    """Scaled similarity columns and weights; constant or zero-weight columns left out.

    Also returns, per row, whether it has a value in a weighted similarity column,
    constant ones included (to tell "constant" from "empty" when a row has no donor).
    """
    warnings: list[str] = []
    weight = {c: plan.weight(c) for c in plan.similarity_columns or ()}
    sim = [c for c in plan.similarity_columns or () if weight[c] > 0]
    num = [c for c in sim if kinds[c] == "number"]
    cat = [c for c in sim if kinds[c] != "number"]
    n = len(next(iter(cols.numbers.values()), next(iter(cols.codes.values()), np.empty(0))))
    x = cols.number_matrix(num) if num else np.empty((n, 0))
    codes = np.column_stack([cols.codes[c] for c in cat]) if cat else np.empty((n, 0), dtype=np.intp)
    fitted = fit_scale(x, plan.scaling if scale else "none")
    measured = np.asarray(np.isfinite(x).any(axis=1) | (codes >= 0).any(axis=1), dtype=bool)
    keep_num = ~fitted.constant
    keep_cat = np.array(
        [len(np.unique(codes[:, j][codes[:, j] >= 0])) > 1 for j in range(len(cat))], dtype=bool
    )
    left_out = [(num[j], np.isfinite(x[:, j]).any()) for j in np.flatnonzero(~keep_num).tolist()]
    left_out += [(cat[j], (codes[:, j] >= 0).any()) for j in np.flatnonzero(~keep_cat).tolist()]
    for col, has in left_out:
        why = "is constant" if has else "has no values"
        warnings.append(f"column {col!r} {why}; left out of the distance")
    for j in np.flatnonzero(fitted.fallback).tolist():
        warnings.append(f"column {num[j]!r} has zero interquartile range; scaled by its standard deviation")
    scaled = apply_scale(x, fitted)[:, keep_num]
    w_num = np.array([weight[c] for c in num])[keep_num] if num else np.empty(0)
    w_cat = np.array([weight[c] for c in cat])[keep_cat] if cat else np.empty(0)
    total = float(w_num.sum() + w_cat.sum())
    if total <= 0 and (plan.fill_columns or ()):
        warnings.append(
            "no similarity column is left to compare rows (all are constant, empty or weighted 0)"
        )
    mismatch = mismatch_factor(scaled, plan.scaling if scale else "none") if w_cat.size else 1.0
    return Features(scaled, w_num, codes[:, keep_cat], w_cat, total, mismatch), warnings, measured


def mismatch_factor(scaled: NDArray[np.float64], scaling: str) -> float:
    """What a category mismatch adds to the squared distance: a typical numeric difference.

    Gower (1971) scores a mismatch 1 and a numeric difference by its share of the range;
    Kinfill's own rule (no outside source) makes a mismatch weigh as much as the squared
    difference of two random rows of a numeric similarity column under the plan's
    scaling, ``E[(x - y)^2] = 2 var(x)``, averaged over the numeric similarity columns:
    2 for z-scores (exactly, by construction), about 0.1 for range scaling, about 0.8 for
    robust scaling of normal data. Without numeric similarity columns a mismatch adds 1.

    Parameters
    ----------
    scaled : ndarray of shape (n_rows, n_numeric)
        The scaled numeric similarity columns (constant ones left out), NaN gaps.
    scaling : str
        The plan's scaling.
    """
    if scaled.shape[1] == 0:
        return 1.0
    if scaling == "zscore":
        return 2.0
    seen = np.isfinite(scaled)
    n = seen.sum(axis=0)
    z = np.where(seen, scaled, 0.0)
    mean = z.sum(axis=0) / np.maximum(n, 1)
    var = (np.where(seen, z - mean, 0.0) ** 2).sum(axis=0) / np.maximum(n, 1)
    used = n >= 2
    return float(2.0 * var[used].mean()) if used.any() else 1.0
