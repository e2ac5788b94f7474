"""Settings chosen by evidence on the command line: ``--k best``, ``suggest-weights``.

``kinfill fill FILE --k best`` (or ``best-per-column``) runs the recovery test with its
default settings before filling and fills with the k it chose; the export's run
record then holds that test. ``kinfill suggest-weights FILE --out plan.toml`` learns
the similarity columns' weights from the sheet and writes a plan (never applied
silently: the user passes the plan to ``kinfill fill --plan``).
"""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING, Any

from imputer_app.cli.progress import StopFlag
from imputer_app.plan import FillPlan
from imputer_app.work import Progress

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport, WeightSuggestion

#: Words ``--k`` takes besides a number.
K_WORDS = ("best", "best-per-column")


def k_option(text: str) -> int | str:
    """``--k``: a whole number of at least 1, ``best`` or ``best-per-column``."""
    word = text.strip().lower()
    if word in K_WORDS:
        return word
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a whole number of at least 1, best or best-per-column; got {text!r}"
        ) from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1; got {value}")
    return value


def chosen_by_test(
    sheet: Sheet, plan: FillPlan, choice: str, progress: Progress, stop: StopFlag
) -> tuple[FillPlan, RecoveryReport]:
    """Run the recovery test (default settings) and return the plan with the k it chose."""
    from imputer_app.validation import plan_with_k, recovery_test

    report = recovery_test(sheet, plan, progress=progress, cancel=stop)
    return plan_with_k(plan, report, choice), report


def k_line(plan: FillPlan, report: RecoveryReport, choice: str) -> str:
    """One line saying which k the recovery test chose."""
    settings = report.settings
    test = (
        f"recovery test: {settings['repeats']} repeats, {settings['hide_fraction']:g} hidden, "
        f"seed {settings['seed']}"
    )
    if choice == "best":
        return f"k = {plan.k}, the best single k of the {test}"
    shown = ", ".join(f"{c} {k}" for c, k in plan.k_by_column.items())
    return f"k per column ({shown}), each column's one-SE choice of the {test}"


def interval_line(result: FillResult) -> str | None:
    """One line on the intervals of a fill, or None when they were off."""
    calibration = result.calibration
    if calibration is None:
        return None
    used = [c.n_hidden for c in calibration.columns.values() if c.usable]
    missing = [name for name, c in calibration.columns.items() if not c.usable]
    where = " of the recovery test" if calibration.from_test else ""
    line = f"intervals: {calibration.level:.0%}, calibrated on {sum(used)} hidden known cells{where}"
    if missing:
        line += f"; none for {', '.join(missing)} (too few hidden cells)"
    observed, cells = calibration.checks.at(calibration.level) if calibration.checks else (float("nan"), 0)
    if cells:
        line += f"; {observed:.1%} of {cells} hidden cells fell inside intervals calibrated on others"
    if calibration.remark:
        line += f" ({calibration.remark})"
    return line


def weights_text(got: WeightSuggestion) -> str:
    """The suggestion as a small table with the overall scores before and after."""
    lines = [f"{'column':<24} {'weight':>7} {'suggested':>10} {'score before':>13} {'score after':>12}"]
    for column, row in got.table.iterrows():
        cells = [
            f"{row['weight_before']:7g}",
            f"{row['weight_after']:10g}",
            f"{row['score_before']:13.3f}" if row["score_before"] == row["score_before"] else f"{'':13}",
            f"{row['score_after']:12.3f}" if row["score_after"] == row["score_after"] else f"{'':12}",
        ]
        lines.append(f"{str(column)[:24]:<24} " + " ".join(cells))
    lines.append(
        f"overall recovery score on hidden cells the search never used: "
        f"{got.score_before:.3f} with the plan's weights, {got.score_after:.3f} with the suggested ones"
    )
    if not got.score_after < got.score_before:
        lines.append("the suggested weights did not do better there: keeping the plan's weights is as good")
    return "\n".join(lines)


def weights_record(got: WeightSuggestion, sheet: Sheet) -> dict[str, Any]:
    """The suggestion as JSON, with the input it was learned on."""
    source = sheet.source
    given = {"file": source.path.name, "sha256": source.sha256, "sheet": source.sheet}
    return {"input": given, **got.to_dict(), "plan": got.plan.to_dict()}
