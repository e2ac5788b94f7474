"""The recovery test's result in one sentence a lab analyst can act on.

Both the app and ``kinfill score-k`` lead with it, then give the detail.
"""

from __future__ import annotations

import math

from imputer_app.validation._report import RecoveryReport


def _value(frame: object, row: object, column: str) -> float:
    try:
        return float(frame.loc[row, column])  # type: ignore[attr-defined]
    except (KeyError, TypeError, ValueError):
        return math.nan


def _score_name(report: RecoveryReport) -> str:
    # "score" (NRMSE) unless only category columns were tested
    return str(getattr(report, "score_name", "score"))


def about_as_good(report: RecoveryReport) -> tuple[int, int]:
    """The smallest and largest tested k whose error is within one standard error of the best."""
    name = _score_name(report)
    se_name = "se" if name == "score" else "category_se"
    best = _value(report.overall, report.best_k, name)
    se = _value(report.overall, report.best_k, se_name)
    limit = best + (0.0 if math.isnan(se) else se)
    scores = report.overall[name]
    close = [
        int(str(k)) for k, value in scores.items() if not math.isnan(float(value)) and float(value) <= limit
    ]
    return (min(close), max(close)) if close else (report.best_k, report.best_k)


def advice(report: RecoveryReport) -> str:
    """One sentence: which k to use and what it buys, in plain words.

    Example: ``Use k = 11: hidden values came back with 39 % less error than column
    averages; any k from 8 to 29 does about as well.``
    """
    name = _score_name(report)
    best = _value(report.overall, report.best_k, name)
    baseline = _value(report.baseline, "overall", name)
    k = report.best_k
    if math.isnan(best) or math.isnan(baseline) or baseline <= 0:
        return f"Use k = {k}: it brought hidden values back best (no column-average comparison was possible)."
    gain = 1.0 - best / baseline
    if gain <= 0:
        return (
            f"Neighbours do not beat column averages here (best k = {k}): check the similarity columns "
            "before filling."
        )
    low, high = about_as_good(report)
    text = f"Use k = {k}: hidden values came back with {round(100 * gain)} % less error than column averages"
    if high > low:
        text += f"; any k from {low} to {high} does about as well"
    if high == max(int(t) for t in report.overall.index) and high > k:
        text += f". The curve is flat up to the largest k tested ({high}); the range could go further"
    return text + "."
