"""Plain-text summaries printed by the command line (no colours, pipe-friendly).

pandas is imported inside the functions that need it, so that ``kinfill --help`` and
the stop-signal handling start at once.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from imputer_app.words import SUBSTITUTION_PHRASES

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport


# C0 controls but tab and newline, DEL and the C1 controls: what a terminal obeys.
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def terminal_safe(text: str) -> str:
    r"""Return ``text`` with control characters shown as escapes, e.g. ESC as ``\x1b``.

    Column names and cells come from the user's sheet; printed raw, an ``ESC [31m`` in
    a cell would recolour the terminal (or worse). Tab and newline are kept.

    Examples
    --------
    >>> print(terminal_safe("pH\x1b[31m\tred\x9b"))  # doctest: +NORMALIZE_WHITESPACE
    pH\x1b[31m	red\x9b
    """
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def fill_summary(
    source: Path,
    result: FillResult,
    written: Sequence[Path],
    sheet: Sheet | None = None,
    layout: str = "workbook",
) -> str:
    """Return the summary of ``kinfill fill``: cells filled, left empty, and files written.

    Parameters
    ----------
    source : Path
        The input sheet.
    result : FillResult
        The fill (``filled``, ``log``, ``unfilled``, ``plan``).
    written : sequence of Path
        Files the export wrote.
    sheet : Sheet or None, default=None
        The sheet as read; its ``cell_notes`` tell censored entries with no limit written.
    layout : {"workbook", "table"}, default="workbook"
        The export's layout, to say what the xlsx holds (the workbook, or a flat table).
    """
    log = result.log
    filled = result.filled
    n_filled = int(filled.to_numpy().sum())
    weak = int((log["support"] == "weak").sum()) if len(log) else 0
    per_column = filled.sum(axis=0)
    per_column = per_column[per_column > 0]
    lines = [f"{source.name}: {len(filled)} rows; k = {result.plan.k}"]
    # every column with its count, however many: a cut list hides where the estimates are
    by_column = ", ".join(f"{col} {int(n)}" for col, n in per_column.items())
    lines.append(
        f"filled {n_filled} cells ({weak} with weak support)" + (f": {by_column}" if by_column else "")
    )
    if len(log):
        means = int((log["method"] == "column_mean").sum())
        if means:
            lines.append(f"  {means} of them with the column mean (no donor)")
        lines.extend(_censored_fill_lines(log, _no_limit_cells(sheet)))
        for method, words in SUBSTITUTION_PHRASES.items():
            count = int((log["method"] == method).sum())
            if count:
                lines.append(f"censored entries stood in by {words}: {count} (flagged as censored)")
    lines.extend(_unfilled_lines(result.unfilled))
    lines.append("wrote:")
    lines.extend(f"  {path}{_what_it_holds(path, sheet, layout)}" for path in written)
    lines.append("Filled values are estimates, not measurements (see the cautions in the export).")
    return "\n".join(lines)


def _no_limit_cells(sheet: Sheet | None) -> set[tuple[Any, str]]:
    """(row label, column) of censored entries whose limit the sheet did not give."""
    notes = sheet.cell_notes if sheet is not None else None
    if notes is None or not len(notes):
        return set()
    unknown = notes[(notes["state"] == "censored") & notes["limit"].isna()]
    return set(zip(unknown["row"], unknown["column"], strict=True))


def _censored_fill_lines(log: pd.DataFrame, no_limit: set[tuple[Any, str]]) -> list[str]:
    """Count censored entries that kNN filled: they are in "filled" but are not gaps.

    A below-limit entry with no limit written ("< LOD" and no limit column) is filled by
    kNN and kept below the column's lowest measured value, so it deserves a look.
    """
    if "original_state" not in log.columns:
        return []
    import pandas as pd

    knn = (log["original_state"] == "censored") & log["method"].isin(["knn", "knn_capped"])
    cells = pd.Series(list(zip(log["row"], log["column"], strict=True)), index=log.index)
    unknown = knn & cells.isin(no_limit)
    capped = int((knn & ~unknown).sum())
    lines = []
    if capped:
        lines.append(
            f"  of them censored entries filled by kNN, capped at their limit: {capped} (flagged as censored)"
        )
    if unknown.any():
        lines.append(
            "  of them censored entries with no limit written, filled by kNN and kept beyond the "
            f"column's measured values: {int(unknown.sum())} (flagged as censored)"
        )
    return lines


def _what_it_holds(path: Path, sheet: Sheet | None = None, layout: str = "workbook") -> str:
    """Say where the filled data and its fill log are, so nobody has to guess."""
    name = path.name
    if name.endswith((".xlsx", ".xlsm")):
        fmt = sheet.source.file_format if sheet is not None else ""
        if sheet is not None and layout == "workbook" and fmt in ("xlsx", "xlsm"):
            return (
                f'  (your workbook, every sheet kept; filled cells marked in sheet "{sheet.source.sheet}", '
                'fill log in "Fill log", run record in "About this fill")'
            )
        from imputer_app.sheets import export_limits

        limits = export_limits(sheet, path, layout)
        if sheet is not None and limits:
            return (
                f'  (a copy of your workbook; filled cells marked in sheet "{sheet.source.sheet}", '
                f'fill log in "Fill log", run record in "About this fill"; {limits})'
            )
        return '  (cleaned sheet "Filled", fill log in sheet "Fill log", run record in "About this fill")'
    for suffix, words in (
        (".fill-log.csv", "fill log"),
        (".run.json", "run record"),
        (".not-filled.csv", "cells left empty, with reasons"),
        (".png", "picture of the fill"),
        (".svg", "picture of the fill"),
    ):
        if name.endswith(suffix):
            return f"  ({words})"
    return "  (cleaned table)"


def listing(items: Sequence[str], limit: int = 10) -> str:
    """Join ``items`` with commas, cutting long lists (wide sheets) after ``limit``.

    Examples
    --------
    >>> listing(["a 1", "b 2", "c 3"], limit=2)
    'a 1, b 2 and 1 more'
    """
    if len(items) <= limit:
        return ", ".join(items)
    return ", ".join(items[:limit]) + f" and {len(items) - limit} more"


def _unfilled_lines(unfilled: pd.DataFrame) -> list[str]:
    if not len(unfilled):
        return ["left empty: none"]
    lines = [f"left empty {len(unfilled)} cells:"]
    counts = unfilled.groupby("reason", sort=False).size().sort_values(ascending=False, kind="stable")
    lines.extend(f"  {int(n):5d}  {reason}" for reason, n in counts.items())
    return lines


def recovery_table(report: RecoveryReport) -> str:
    """Return the per-k table of ``kinfill score-k`` with the best and one-SE k.

    Parameters
    ----------
    report : RecoveryReport
        ``overall`` (indexed by k), ``baseline``, ``best_k``, ``best_k_1se``,
        ``best_k_by_column`` and ``settings``.
    """
    from imputer_app.validation import advice

    overall = report.overall
    settings = report.settings
    lines = [
        advice(report),
        f"recovery test: {settings.get('hide_fraction', 0):.0%} of known cells hidden, "
        f"{settings.get('repeats', '?')} repeats, seed {settings.get('seed', '?')}, "
        f"{settings.get('masking', '?')} hiding",
    ]
    show_numbers = _any_finite(overall.get("score"))
    show_categories = _any_finite(overall.get("category_error"))
    header = f"{'k':>4}"
    if show_numbers:
        header += f"  {'NRMSE':>8}  {'SE':>7}"
    if show_categories:
        header += f"  {'error rate':>10}  {'SE':>7}"
    lines.append(header)
    for position in range(len(overall)):
        k = int(overall.index[position])
        row = overall.iloc[position]
        text = f"{k:>4}"
        if show_numbers:
            text += f"  {_num(row['score'], 8)}  {_num(row['se'], 7)}"
        if show_categories:
            text += f"  {_num(row['category_error'], 10)}  {_num(row['category_se'], 7)}"
        marks = [name for name, best in (("best", report.best_k), ("one-SE", report.best_k_1se)) if best == k]
        lines.append(text + ("  <- " + ", ".join(marks) if marks else ""))
    lines.append(_baseline_line(report.baseline, show_numbers, show_categories))
    lines.append(f"best k: {report.best_k}    one-SE k: {report.best_k_1se}")
    if show_numbers and _no_k_beats_average(overall, report.baseline):
        lines.append(
            "warning: no k tested beats the column average here; the neighbours add nothing "
            "(check the similarity columns and weights)"
        )
    by_column = listing([f"{col} {k}" for col, k in report.best_k_by_column.items()])
    if by_column:
        lines.append(f"best k by column: {by_column}")
    lines.append("NRMSE: mean over number fill columns of RMSE / column SD; lower is better")
    return "\n".join(lines)


def _baseline_line(baseline: pd.DataFrame, show_numbers: bool, show_categories: bool) -> str:
    text = f"{'avg':>4}"
    row = _overall_row(baseline)
    if show_numbers:
        text += f"  {_num(_get(row, 'score'), 8)}  {'':>7}"
    if show_categories:
        text += f"  {_num(_get(row, 'category_error'), 10)}  {'':>7}"
    return text + "  <- column average (no kNN)"


def _no_k_beats_average(overall: pd.DataFrame, baseline: pd.DataFrame) -> bool:
    """True when the column-average NRMSE is at or below every k's NRMSE."""
    average = _get(_overall_row(baseline), "score")
    scores = [float(v) for v in overall["score"] if math.isfinite(float(v))]
    return math.isfinite(average) and bool(scores) and min(scores) >= average


def _overall_row(baseline: pd.DataFrame) -> pd.Series | None:
    """The baseline's ``overall`` row (all fill columns together), if it has one."""
    import pandas as pd

    row = baseline.loc["overall"] if "overall" in baseline.index else None
    return row if isinstance(row, pd.Series) else None


def _get(row: pd.Series | None, key: str) -> float:
    if row is None or key not in row.index:
        return math.nan
    return float(row[key])


def _any_finite(values: pd.Series | None) -> bool:
    if values is None:
        return False
    return any(isinstance(v, int | float) and math.isfinite(v) for v in values)


def _num(value: float | None, width: int) -> str:
    if value is None or not math.isfinite(float(value)):
        return f"{'-':>{width}}"
    return f"{float(value):>{width}.4f}"
