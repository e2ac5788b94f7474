"""The result of a recovery test and its export forms."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from imputer_app.engine import HiddenCells
from imputer_app.errors import KinfillError
from imputer_app.validation._per_column_k import k_by_column
from imputer_app.validation._scoring import (
    baseline_table,
    best_k,
    best_k_by_column,
    one_se_rule,
    overall_by_k,
    summarise,
)


@dataclass(frozen=True)
class RecoveryReport:
    """Errors of every k on hidden known cells, with the column-mean baseline.

    Attributes
    ----------
    scores : DataFrame
        Long table, one row per k, fill column and repeat: ``k``, ``column``,
        ``repeat``, ``fold``, ``rmse``, ``mae``, ``nrmse``, ``error_rate``, ``n_hidden`` (cells
        scored) and ``n_unfilled`` (hidden cells no donor reached; not scored).
        Number columns have NaN ``error_rate``; category columns NaN RMSE/MAE/NRMSE.
    summary : DataFrame
        Indexed by k; columns ``(column, "mean" | "se")``: the mean over every fold
        of each column's score (NRMSE for numbers, error rate for categories) and its
        standard error across the folds of a repeat, averaged over repeats.
    overall : DataFrame
        Indexed by k: ``score`` (mean NRMSE over number fill columns), ``se``,
        ``category_error`` (mean error rate over category fill columns), ``category_se``.
    baseline : DataFrame
        The same hidden cells filled with the column mean of the visible cells
        (numbers) or the most common class of the known cells (categories), of the
        row's own group when the plan has a group column: one row per column plus
        ``overall``;
        see :func:`imputer_app.validation._scoring.baseline_table`.
    best_k : int
        k with the lowest overall score (category error when no number column).
    best_k_1se : int
        Largest k within one standard error of the best (ESL 2nd ed., sec. 7.10).
    best_k_by_column : dict of str to int
        Lowest-score k per fill column.
    ks : tuple of int
        The k values tested, ascending.
    kinds : dict of str to str
        Fill column name to ``"number"`` or ``"category"``, in plan order.
    settings : dict
        ``hide_fraction``, ``repeats``, ``folds`` (per repeat), ``seed``, ``masking``
        (the hiding used), ``masking_asked``, ``ks`` and ``plan`` (the resolved plan
        as a dict), enough to repeat the test exactly.
    warnings : tuple of str
        Plain-words remarks (k values dropped, cells no donor reached, ...).
    hidden : HiddenCells or None
        The hidden cells (each once) scored for every k: pass them to
        ``impute(data, plan, hidden=report.hidden)`` so that the fill's intervals are
        calibrated on them instead of on cells hidden again.
    """

    scores: pd.DataFrame
    summary: pd.DataFrame
    overall: pd.DataFrame
    baseline: pd.DataFrame
    best_k: int
    best_k_1se: int
    best_k_by_column: dict[str, int]
    ks: tuple[int, ...]
    kinds: dict[str, str]
    settings: dict[str, Any]
    warnings: tuple[str, ...] = field(default=())
    hidden: HiddenCells | None = field(default=None, repr=False, compare=False)

    @property
    def masking(self) -> str:
        """The hiding used: ``"random"`` or ``"pattern"`` (``auto`` resolved)."""
        return str(self.settings.get("masking", "random"))

    @property
    def k_by_column_1se(self) -> dict[str, int]:
        """Per fill column, the k in its one-SE band nearest the best single k (ESL sec. 7.10)."""
        return k_by_column(self.summary, self.best_k)

    @property
    def score_name(self) -> str:
        """Name of the overall score column that chose k (``score`` or ``category_error``)."""
        return "score" if "number" in self.kinds.values() else "category_error"

    def to_frame(self) -> pd.DataFrame:
        """Return one row per k for export.

        Columns: ``score``, ``se``, ``category_error``, ``category_se``, ``choice``
        ("best", "one-SE" or both), then per fill column ``<column> NRMSE`` and
        ``<column> NRMSE SE`` plus ``<column> RMSE`` in the column's own units
        (numbers), or ``<column> error rate`` and ``<column> error rate SE``
        (categories). Indexed by k.
        """
        table = self.overall.copy()
        table["choice"] = [_choice(int(k), self.best_k, self.best_k_1se) for k in table.index]
        rmse = self.scores.groupby(["k", "column"])["rmse"].mean().unstack("column")
        for column, kind in self.kinds.items():
            label = "NRMSE" if kind == "number" else "error rate"
            if (column, "mean") not in self.summary.columns:
                continue
            table[f"{column} {label}"] = self.summary[(column, "mean")].reindex(table.index)
            table[f"{column} {label} SE"] = self.summary[(column, "se")].reindex(table.index)
            if kind == "number" and column in rmse.columns:
                table[f"{column} RMSE"] = rmse[column].reindex(table.index)
        return table

    def to_dict(self) -> dict[str, Any]:
        """Return the report as JSON-ready data (NaN becomes ``None``)."""
        summary = {
            column: {
                "mean": _plain(self.summary[(column, "mean")].tolist()),
                "se": _plain(self.summary[(column, "se")].tolist()),
            }
            for column in self.summary.columns.get_level_values("column").unique()
        }
        baseline = self.baseline.astype(object).where(self.baseline.notna(), None)
        return {
            "settings": _plain(self.settings),
            "ks": [int(k) for k in self.ks],
            "kinds": dict(self.kinds),
            "best_k": int(self.best_k),
            "best_k_1se": int(self.best_k_1se),
            "best_k_by_column": {str(c): int(k) for c, k in self.best_k_by_column.items()},
            "k_by_column_1se": self.k_by_column_1se,
            "overall": _plain(self.overall.reset_index().to_dict(orient="records")),
            "baseline": _plain(baseline.to_dict(orient="index")),
            "summary": summary,
            "scores": _plain(self.scores.to_dict(orient="records")),
            "warnings": list(self.warnings),
        }


def _choice(k: int, best: int, one_se: int) -> str:
    labels = [name for name, value in (("best", best), ("one-SE", one_se)) if value == k]
    return ", ".join(labels)


def _plain(value: Any) -> Any:
    """Turn numpy scalars into Python ones and NaN into None, recursively."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def build_report(
    scores: pd.DataFrame,
    baseline_scores: pd.DataFrame,
    kinds: dict[str, str],
    ks: tuple[int, ...],
    settings: dict[str, Any],
    warnings: tuple[str, ...] = (),
) -> RecoveryReport:
    """Summarise per-repeat scores into a :class:`RecoveryReport`.

    Parameters
    ----------
    scores : DataFrame
        Long kNN score table (see :attr:`RecoveryReport.scores`).
    baseline_scores : DataFrame
        The baseline's scores, same columns without ``k``.
    kinds : dict of str to {"number", "category"}
        Fill columns in plan order.
    ks : tuple of int
        k values tested.
    settings : dict
        Stored as :attr:`RecoveryReport.settings`.
    warnings : tuple of str
        Remarks collected so far.

    Raises
    ------
    KinfillError
        When no hidden cell could be scored.
    """
    if scores.empty or not scores["n_hidden"].gt(0).any():
        raise KinfillError("the recovery test could not score any hidden cell: no hidden cell had a donor")
    kinds = {c: kind for c, kind in kinds.items() if c in set(scores["column"])}
    overall = overall_by_k(scores, kinds)
    name, se_name = ("score", "se") if "number" in kinds.values() else ("category_error", "category_se")
    if not overall[name].notna().any():
        raise KinfillError("the recovery test could not score any k: every tested column is constant")
    summary = summarise(scores, kinds)
    tested = [int(k) for k in overall.index]
    unfilled = int(scores.loc[scores["k"] == tested[0], "n_unfilled"].sum())
    notes = [f"{unfilled} hidden cell(s) had no donor and were not scored"] if unfilled else []
    return RecoveryReport(
        scores=scores,
        summary=summary,
        overall=overall,
        baseline=baseline_table(baseline_scores, kinds),
        best_k=best_k(tested, overall[name].to_numpy()),
        best_k_1se=one_se_rule(tested, overall[name].to_numpy(), overall[se_name].to_numpy()),
        best_k_by_column=best_k_by_column(summary),
        ks=tuple(int(k) for k in ks),
        kinds=kinds,
        settings=settings,
        warnings=tuple(dict.fromkeys((*warnings, *notes))),
    )
