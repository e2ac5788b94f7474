"""Qt-free: the recovery panel's request, its per-k table and its summary in plain words.

A :class:`RecoveryRequest` is the immutable set of choices a user makes in the panel;
:meth:`RecoveryRequest.job` turns it into a worker job that calls
:func:`imputer_app.validation.recovery_test`. :func:`report_table` and
:func:`summary_text` describe a finished :class:`~imputer_app.validation.RecoveryReport`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import pandas as pd

from imputer_app import validation
from imputer_app.gui.formatting import NOT_AVAILABLE, Cell, number_cell
from imputer_app.plan import DEFAULT_KS, FillPlan
from imputer_app.work import CancelFlag, Progress

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport

#: Largest k the panel offers (larger k is rarely useful and slow to score).
K_LIMIT = 100

#: Hiding styles: value passed to recovery_test, label, explanation.
MASKINGS = (
    (
        "auto",
        "Automatic",
        "The sheet's own gap patterns where it has enough incomplete rows to copy from, "
        "otherwise random known cells; the result says which was used",
    ),
    (
        "random",
        "Random known cells",
        "Hide a share of each fill column's known cells at random (gaps assumed MCAR)",
    ),
    (
        "pattern",
        "The sheet's own gap patterns",
        "Copy the gap patterns of the sheet's incomplete rows onto complete rows, "
        "so the test looks like the sheet's real gaps",
    ),
)


@dataclass(frozen=True)
class RecoveryRequest:
    """The choices of one recovery test run.

    Attributes
    ----------
    hide_fraction : float
        Share of known cells hidden per repeat, in (0, 1).
    repeats : int
        Number of fold splits (>= 1); more repeats give a steadier curve.
    k_from, k_to : int
        Inclusive range of k values scored.
    masking : {"auto", "random", "pattern"}
        How cells are chosen for hiding (as :func:`imputer_app.validation.recovery_test`).
    seed : int
        Seed of the hiding, so the same request gives the same report.
    """

    hide_fraction: float = 0.1
    repeats: int = 5
    k_from: int = min(DEFAULT_KS)
    k_to: int = max(DEFAULT_KS)
    masking: str = "auto"
    seed: int = 0

    @property
    def ks(self) -> list[int]:
        """The k values to score, ascending."""
        low, high = sorted((int(self.k_from), int(self.k_to)))
        return list(range(max(1, low), high + 1))

    def job(
        self, data: Sheet | pd.DataFrame, plan: FillPlan
    ) -> Callable[[Progress, CancelFlag], RecoveryReport]:
        """Return ``job(progress, cancel) -> RecoveryReport`` for a worker thread.

        ``data`` (a DataFrame or Sheet) and ``plan`` are only read, never modified.
        """
        ks = self.ks

        def run(progress: Progress, cancel: CancelFlag) -> RecoveryReport:
            # Looked up at call time so that tests can stand in a slow or failing test.
            return validation.recovery_test(
                data,
                plan,
                ks=ks,
                hide_fraction=self.hide_fraction,
                repeats=self.repeats,
                seed=self.seed,
                masking=self.masking,
                progress=progress,
                cancel=cancel,
            )

        return run


def frame_of(data: Sheet | pd.DataFrame) -> pd.DataFrame:
    """Return the DataFrame of a Sheet-like object, or ``data`` itself."""
    return data if isinstance(data, pd.DataFrame) else data.frame


def tested_columns(data: Sheet | pd.DataFrame, plan: FillPlan) -> list[str]:
    """Return the columns a recovery test scores: the plan's fill columns (``validation.fill_columns``)."""
    return validation.fill_columns(data, plan)


def k_ceiling(data: Sheet | pd.DataFrame, plan: FillPlan) -> int:
    """Return the largest k worth testing: ``min(100, donors)``.

    ``donors`` is the most a hidden cell can have: the known cells of the best-filled
    tested column, less the hidden cell itself. At least 1.
    """
    counts = validation.known_counts(frame_of(data))
    known = [int(counts[c]) for c in tested_columns(data, plan)]
    donors = max(known, default=1) - 1
    return max(1, min(K_LIMIT, donors))


# ---------------------------------------------------------------------- per-k table
def _metric(kind: str) -> str:
    return "NRMSE" if kind == "number" else "error rate"


def report_headers(report: RecoveryReport) -> tuple[list[str], list[str]]:
    """Return the per-k table's column titles and their tooltips."""
    has_numbers = "number" in report.kinds.values()
    has_categories = "category" in report.kinds.values()
    headers = ["k", "Choice"]
    tips = ["Number of donors averaged", "Which k the rules pick: lowest error, or the one-SE rule"]
    if has_numbers:
        headers += ["NRMSE", "SE"]
        tips += [
            "Mean NRMSE over the number fill columns (RMSE / standard deviation); lower is better",
            "Standard error of the NRMSE over the repeats",
        ]
    if has_categories:
        headers += ["Error rate", "Error rate SE"]
        tips += [
            "Share of hidden category cells filled with the wrong class; lower is better",
            "Standard error of the error rate over the repeats",
        ]
    for column, kind in report.kinds.items():
        headers.append(f"{column} {_metric(kind)}")
        tips.append(f"Mean {_metric(kind)} of column '{column}' over the repeats")
    return headers, tips


def _choice(k: int, report: RecoveryReport) -> str:
    names = [name for name, value in (("best", report.best_k), ("one-SE", report.best_k_1se)) if value == k]
    return ", ".join(names)


def _row_numbers(
    report: RecoveryReport, values: pd.Series, per_column: dict[str, Any], strong: bool
) -> list[Cell]:
    """Cells after the first two: overall scores, then per-column scores."""
    cells: list[Cell] = []
    if "number" in report.kinds.values():
        cells += [number_cell(values.get("score"), strong=strong), number_cell(values.get("se"))]
    if "category" in report.kinds.values():
        cells += [
            number_cell(values.get("category_error"), strong=strong),
            number_cell(values.get("category_se")),
        ]
    cells += [number_cell(per_column.get(column)) for column in report.kinds]
    return cells


def report_rows(report: RecoveryReport) -> list[list[Cell]]:
    """Return one row per tested k, then the column-average baseline row.

    Raw values (``Cell.value``) are the report's own numbers: ``overall`` for the
    overall columns, ``summary[(column, "mean")]`` per column, ``baseline`` for the
    last row.
    """
    rows: list[list[Cell]] = []
    for label, values in report.overall.iterrows():
        k = int(str(label))  # the index holds the tested k values
        chosen = _choice(k, report)
        per_column = {
            column: report.summary[(column, "mean")].get(k, math.nan)
            for column in report.kinds
            if (column, "mean") in report.summary.columns
        }
        head = [Cell(str(k), k, strong=bool(chosen)), Cell(chosen, chosen, strong=bool(chosen))]
        rows.append(head + _row_numbers(report, values, per_column, bool(chosen)))
    base = report.baseline
    overall = base.loc["overall"] if "overall" in base.index else pd.Series(dtype=float)
    assert isinstance(overall, pd.Series)  # one row label: a row, not a frame
    per_column = {c: base.loc[c, "score"] for c in report.kinds if c in base.index}
    head = [
        Cell(
            "average",
            "average",
            "Every hidden cell filled with its column's average "
            "(most common class for categories): the bar kNN must beat",
        ),
        Cell("baseline", "baseline"),
    ]
    rows.append(head + _row_numbers(report, overall, per_column, False))
    return rows


# ---------------------------------------------------------------------- summary
def _score(frame: pd.DataFrame, key: Any, name: Any) -> float:
    try:
        return float(frame.loc[key, name])
    except (KeyError, TypeError, ValueError):
        return math.nan


def verdict(best: float, best_se: float, baseline: float) -> str:
    """Say in words whether neighbours beat the column average.

    Parameters
    ----------
    best : float
        Score of the best k (lower is better).
    best_se : float
        Its standard error (NaN counts as 0).
    baseline : float
        Score of the column-average fill of the same hidden cells.
    """
    if math.isnan(best) or math.isnan(baseline):
        return "no comparison with the column average"
    se = 0.0 if math.isnan(best_se) else best_se
    if best + se < baseline:
        return "neighbours help"
    if best < baseline:
        return "neighbours help only a little (within one standard error)"
    return "neighbours do not beat the column average; check the similarity columns"


def summary_text(report: RecoveryReport) -> str:
    """Return the one-line summary of a recovery test.

    Example: ``best k = 7 (NRMSE 0.41); one-SE rule suggests k = 12; column average
    scores 0.98 — neighbours help.``
    """
    name = report.score_name
    metric = "NRMSE" if name == "score" else "error rate"
    se_name = "se" if name == "score" else "category_se"
    best = _score(report.overall, report.best_k, name)
    baseline = _score(report.baseline, "overall", name)
    text = validation.advice(report) + "\n"
    text += f"Detail: best k = {report.best_k} ({metric} {_two(best)})"
    if report.best_k_1se == report.best_k:
        text += "; one-SE rule agrees"
    else:
        text += f"; one-SE rule suggests k = {report.best_k_1se}"
    text += f"; column average scores {_two(baseline)}"
    text += " — " + verdict(best, _score(report.overall, report.best_k, se_name), baseline)
    if name == "score" and "category" in report.kinds.values():
        cat = _score(report.overall, report.best_k, "category_error")
        cat_base = _score(report.baseline, "overall", "category_error")
        text += (
            f". Category columns at k = {report.best_k}: error rate {_two(cat)} "
            f"(most common class: {_two(cat_base)})"
        )
    no_gain = columns_without_gain(report, report.best_k)
    if no_gain:
        text += f". At k = {report.best_k}, no gain over the column average for: {', '.join(no_gain)}"
    return text + "."


def columns_without_gain(report: RecoveryReport, k: int) -> list[str]:
    """Fill columns whose error at ``k`` is not below their own column-average error.

    Such a column is filled no better by neighbours than by its average, a hint that the
    similarity columns say little about it.
    """
    worse = []
    for column in report.kinds:
        knn = _score(report.summary, k, (column, "mean")) if (column, "mean") in report.summary else math.nan
        base = _score(report.baseline, column, "score")
        if not (math.isnan(knn) or math.isnan(base)) and knn >= base:
            worse.append(column)
    return worse


def _two(value: float) -> str:
    """Two decimals, as errors near 1 need them (1.03 must not read as 1)."""
    return NOT_AVAILABLE if math.isnan(value) else f"{value:.2f}"
