"""Each fill column's own k, chosen from a recovery test without chasing noise.

A column's error curve over k is the mean of a few repeats, so its lowest point is
partly chance. :func:`k_by_column` uses the one-standard-error band of each column
(Hastie, Tibshirani & Friedman, *The Elements of Statistical Learning*, 2nd ed.,
sec. 7.10): every k whose mean error is within one standard error of the column's
lowest is as good as the data can tell, and of those the one nearest the sheet's best
single k is taken. A column thus keeps the sheet's k unless its own curve shows,
beyond its noise, that another k is better. :func:`plan_with_k` turns a report into a plan for
``kinfill fill --k best`` and ``--k best-per-column``.
"""

from __future__ import annotations

from typing import Any, Protocol

import numpy as np
import pandas as pd

from imputer_app.plan import FillPlan


class RecoveryReport(Protocol):
    """What a k choice reads from a recovery report (``validation.RecoveryReport`` has it)."""

    @property
    def summary(self) -> pd.DataFrame: ...

    @property
    def best_k(self) -> int: ...

    @property
    def best_k_1se(self) -> int: ...

    @property
    def settings(self) -> dict[str, Any]: ...


#: What ``--k`` may say besides a number.
K_CHOICES = ("best", "best-per-column")


def k_by_column(summary: pd.DataFrame, default_k: int) -> dict[str, int]:
    """Per fill column, the k in its one-SE band nearest to ``default_k``.

    Parameters
    ----------
    summary : DataFrame
        :attr:`RecoveryReport.summary` (indexed by k; columns ``(column, "mean" | "se")``).
    default_k : int
        The sheet's best single k; a column keeps it when it lies in the column's band.

    Returns
    -------
    dict of str to int
        Columns with no finite score are left out. A tie in distance goes to the larger
        k (the smoother fill).

    Examples
    --------
    >>> cols = pd.MultiIndex.from_tuples([("a", "mean"), ("a", "se")], names=["column", "stat"])
    >>> table = pd.DataFrame([[0.50, 0.02], [0.40, 0.03], [0.42, 0.03]], index=[1, 3, 5], columns=cols)
    >>> k_by_column(table, 5), k_by_column(table, 1)
    ({'a': 5}, {'a': 3})
    """
    ks = np.array([int(k) for k in summary.index])
    out: dict[str, int] = {}
    for column in summary.columns.get_level_values("column").unique():
        means = summary[(column, "mean")].to_numpy(dtype=float)
        if not np.isfinite(means).any():
            continue
        ses = summary[(column, "se")].to_numpy(dtype=float)
        best = int(np.nanargmin(means))
        margin = ses[best] if np.isfinite(ses[best]) else 0.0
        band = np.isfinite(means) & (means <= means[best] + margin + 1e-12 * max(1.0, abs(means[best])))
        inside = ks[band]
        gap = np.abs(inside - int(default_k))
        out[str(column)] = int(inside[gap == gap.min()].max())
    return out


def plan_with_k(plan: FillPlan, report: RecoveryReport, choice: str) -> FillPlan:
    """``plan`` with the k the recovery test chose.

    Parameters
    ----------
    plan : FillPlan
        The plan tested; only its k settings change.
    report : RecoveryReport
        A recovery test of this plan on this sheet.
    choice : {"best", "best-per-column"}
        ``best``: the single k with the lowest overall score; ``best-per-column``:
        each fill column's k from :func:`k_by_column`, with the single best k for
        any column not scored.
    """
    if choice == "best":
        return plan.replace(k=int(report.best_k), k_by_column={})
    if choice == "best-per-column":
        return plan.replace(k=int(report.best_k), k_by_column=k_by_column(report.summary, int(report.best_k)))
    raise ValueError(f"choice must be one of {', '.join(K_CHOICES)}; got {choice!r}")


def choice_record(report: RecoveryReport, choice: str) -> dict[str, Any]:
    """What the export and the run record say about the test that chose k."""
    return {
        "choice": choice,
        "best_k": int(report.best_k),
        "best_k_1se": int(report.best_k_1se),
        "k_by_column": k_by_column(report.summary, int(report.best_k)),
        "recovery_test": {
            key: report.settings[key] for key in ("hide_fraction", "repeats", "seed", "masking", "ks")
        },
    }
