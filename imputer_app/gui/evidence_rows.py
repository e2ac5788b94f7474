"""Qt-free: the rows of the recovery panel's per-column view and suggested-weights view.

:func:`column_rows` lays out, for every fill column of a
:class:`~imputer_app.validation.RecoveryReport`, the k the test chooses for that
column (:attr:`RecoveryReport.k_by_column_1se`, the one-standard-error band of the
column's own curve), its error there and at the sheet's single best k, and the
column-average baseline. :func:`weight_rows` lays out a
:class:`~imputer_app.validation.WeightSuggestion`. The sentences that go with them say
what changed in the plan in plain words.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from imputer_app import validation
from imputer_app.gui.formatting import NOT_AVAILABLE, Cell, number_cell
from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    from imputer_app.validation import RecoveryReport, WeightSuggestion


# ---------------------------------------------------------------------- per column
def column_headers(report: RecoveryReport) -> tuple[list[str], list[str]]:
    """Titles and tooltips of the per-column table."""
    best = report.best_k
    return (
        ["Column", "Own k", "Error", f"At k = {best}", "Average", "Plan k"],
        [
            "Fill column (errors are NRMSE for numbers, the share of wrong classes for categories)",
            "The column's own k: of the k within one standard error of the column's lowest error, "
            "the one nearest the sheet's best single k",
            "The column's error on hidden cells at its own k; lower is better",
            f"The column's error at the sheet's best single k ({best})",
            "The column's error when every hidden cell gets the column's average "
            "(most common class for categories): the bar kNN must beat",
            "The k the plan uses for this column now",
        ],
    )


def _mean(report: RecoveryReport, column: str, k: int | None) -> float:
    if k is None or (column, "mean") not in report.summary.columns:
        return math.nan
    try:
        value: Any = report.summary.loc[k, (column, "mean")]
        return float(value)
    except (KeyError, TypeError, ValueError):
        return math.nan


def _baseline(report: RecoveryReport, column: str) -> float:
    try:
        value: Any = report.baseline.loc[column, "score"]
        return float(value)
    except (KeyError, TypeError, ValueError):
        return math.nan


def column_rows(report: RecoveryReport, plan: FillPlan) -> list[list[Cell]]:
    """One row per fill column of ``report``: own k, errors at own and best k, baseline, plan's k.

    Raw values are the report's own numbers (``summary[(column, "mean")]`` at the k,
    ``baseline.loc[column, "score"]``), so sorting and tests compare them exactly.
    """
    own_ks = report.k_by_column_1se
    rows = []
    for column, kind in report.kinds.items():
        metric = "NRMSE" if kind == "number" else "error rate"
        own = own_ks.get(column)
        lowest = report.best_k_by_column.get(column)
        own_tip = f"lowest {metric} at k = {lowest}" if lowest is not None else ""
        at_own, at_best = _mean(report, column, own), _mean(report, column, report.best_k)
        base = _baseline(report, column)
        beaten = not (math.isnan(at_own) or math.isnan(base)) and at_own < base
        rows.append(
            [
                Cell(column, column, f"{column} ({kind}; error as {metric})"),
                Cell(
                    str(own) if own is not None else NOT_AVAILABLE,
                    own if own is not None else math.nan,
                    own_tip,
                ),
                number_cell(at_own, digits=3, tooltip=metric, strong=beaten),
                number_cell(at_best, digits=3, tooltip=metric),
                number_cell(
                    base, digits=3, tooltip="" if beaten else "neighbours do not beat the average here"
                ),
                Cell(str(plan.k_for(column)), plan.k_for(column)),
            ]
        )
    return rows


def per_column_plan(plan: FillPlan, report: RecoveryReport) -> FillPlan:
    """``plan`` with each fill column's own k, the sheet's best k for others (``--k best-per-column``)."""
    return validation.plan_with_k(plan, report, "best-per-column")


def per_column_text(plan: FillPlan, report: RecoveryReport) -> str:
    """The status line after "Use each column's best k" (short: the panel is narrow)."""
    settings = report.settings
    test = (
        f"recovery test ({settings.get('repeats')} repeats, "
        f"{_share(settings.get('hide_fraction'))} hidden, seed {settings.get('seed')}; in the export)"
    )
    other = {column: k for column, k in plan.k_by_column.items() if k != plan.k}
    if not other:
        return f"Own k per column from the {test}: all {plan.k}, the best k."
    shown = ", ".join(f"{column} {k}" for column, k in other.items())
    return f"Own k per column from the {test}: {shown}; {plan.k} for the others."


def one_k_text(plan: FillPlan, dropped: dict[str, int]) -> str:
    """The status line after "Use one k for all"."""
    if not dropped:
        return f"k = {plan.k} for every column."
    shown = ", ".join(f"{column} {k}" for column, k in dropped.items())
    return f"One k for all: k = {plan.k} for every column (per-column k dropped: {shown})."


def _share(value: Any) -> str:
    try:
        return f"{float(value):.0%}"
    except (TypeError, ValueError):
        return NOT_AVAILABLE


# ---------------------------------------------------------------------- weights
WEIGHT_HEADERS = ["Column", "Weight now", "Suggested", "Error now", "Error after"]
WEIGHT_TIPS = [
    "Similarity or fill column",
    "The column's weight in the distance in the plan now (0: not used)",
    "The weight the search suggests (0: the column is left out of the distance)",
    "The column's own error on judging cells with the plan's weights (fill columns only)",
    "The column's own error on the same judging cells with the suggested weights",
]


def weight_rows(suggestion: WeightSuggestion) -> list[list[Cell]]:
    """One row per column of the suggestion's table; changed weights in bold."""
    rows = []
    for column, row in suggestion.table.iterrows():
        before, after = float(row["weight_before"]), float(row["weight_after"])
        changed = not math.isclose(before, after)
        rows.append(
            [
                Cell(str(column), str(column)),
                number_cell(before, digits=3),
                number_cell(after, digits=3, strong=changed, tooltip="changed" if changed else "unchanged"),
                number_cell(row["score_before"], digits=3),
                number_cell(row["score_after"], digits=3),
            ]
        )
    return rows


def weights_summary(suggestion: WeightSuggestion) -> str:
    """One or two sentences on the suggestion's honest effect."""
    before, after = suggestion.score_before, suggestion.score_after
    text = (
        f"Overall error on hidden cells the search never used: {_num(before)} with the plan's weights, "
        f"{_num(after)} with the suggested ones"
    )
    if math.isfinite(before) and math.isfinite(after) and before > 0 and after < before:
        text += f" ({(before - after) / before:.0%} lower)."
    else:
        text += ". The suggestion does no better there: keeping the plan's weights is as good."
    return text


def weights_text(weights: dict[str, float], before: float, after: float) -> str:
    """The status line after applying suggested weights."""
    shown = ", ".join(f"{column} {value:g}" for column, value in weights.items())
    return f"Suggested weights applied: {shown} (error on judging cells {_num(before)} -> {_num(after)})."


def _num(value: float) -> str:
    return NOT_AVAILABLE if not math.isfinite(value) else f"{value:.3f}"
