"""What ``kinfill gaps`` prints: the gap check in plain words, or the same numbers as JSON."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import pandas as pd

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet
    from imputer_app.validation import GapCheck

#: What the test cannot say, printed under its result whatever the p-value.
LIMITS = (
    "The test looks at means only: it cannot tell gaps that depend on other columns (kNN copes when "
    "those are similarity columns) from gaps that depend on the missing value itself (no fill copes), "
    "and a large p-value does not prove the gaps random."
)

#: Rows of the differences table printed (the JSON holds all of them).
TOP_DIFFERENCES = 10
#: Rows of the pattern table printed (the JSON holds all of them).
TOP_PATTERNS = 15


def gaps_text(check: GapCheck, name: str) -> str:
    """Return the gap check of the sheet ``name`` as plain text.

    Parameters
    ----------
    check : GapCheck
        From :func:`imputer_app.validation.gap_check`.
    name : str
        The file's name, for the first line.
    """
    mcar = check.mcar
    lines = [f"{name}: gap check of {len(check.columns)} columns ({', '.join(check.columns)})", ""]
    lines.append("Little's test of missing completely at random (Little 1988; means and covariance by EM):")
    if math.isfinite(mcar.statistic):
        lines.append(
            f"  statistic {mcar.statistic:.4g}, df {mcar.df}, p-value {mcar.p_value:.3g} "
            f"({mcar.n_rows_used} rows, {mcar.n_patterns} gap patterns, {len(mcar.columns)} number columns)"
        )
    lines.append(f"  {mcar.meaning}")
    lines.append(f"  {LIMITS}")
    lines += ["", check.headline, ""]
    lines.append(f"How rows with a gap differ from the others (largest first, top {TOP_DIFFERENCES}):")
    lines.append(_table(difference_rows(check.differences).head(TOP_DIFFERENCES)))
    lines += ["", f"Gap patterns (x = gap; most frequent first, top {TOP_PATTERNS}):"]
    lines.append(_table(pattern_rows(check.patterns).head(TOP_PATTERNS)))
    if len(check.patterns) > TOP_PATTERNS:
        lines.append(f"  ... {len(check.patterns) - TOP_PATTERNS} more patterns in --json")
    return "\n".join(lines)


#: Columns of :func:`difference_rows`, in order.
DIFFERENCE_ROWS = ("gap_column", "other_column", "difference", "measure", "detail", "n_gap", "n_present")


def difference_rows(table: pd.DataFrame) -> pd.DataFrame:
    """The differences table for reading: the difference as signed text and its measure.

    Shared by the command line and the app's Gaps view.
    """
    if table.empty:
        return pd.DataFrame(columns=list(DIFFERENCE_ROWS))
    shown = table.copy()
    shown["difference"] = [_number(v) for v in shown["difference"]]
    shown["measure"] = ["SD units" if k == "number" else "share" for k in shown["kind"]]
    return shown[list(DIFFERENCE_ROWS)]


def pattern_rows(table: pd.DataFrame, gap: str = "x", value: str = ".") -> pd.DataFrame:
    """The pattern table for reading: ``gap`` where a column has a gap, the share in per cent.

    Shared by the command line and the app's Gaps view.
    """
    shown = table.copy()
    for column in shown.columns:
        if shown[column].dtype == bool:
            shown[column] = shown[column].map({True: gap, False: value})
    if "share" in shown:
        shown["share"] = [f"{100 * float(v):.1f} %" for v in shown["share"]]
    return shown


def _number(value: Any) -> str:
    number = float(value)
    return f"{number:+.2f}" if math.isfinite(number) else "-"


def _table(table: pd.DataFrame) -> str:
    if table.empty:
        return "  (none)"
    return "\n".join("  " + line for line in table.to_string(index=False).splitlines())


def gaps_record(check: GapCheck, sheet: Sheet) -> dict[str, Any]:
    """Return the gap check as JSON-ready data, with the input it was run on and the cautions.

    Numbers are the check's own (not rounded); NaN becomes null.
    """
    from imputer_app import CAUTIONS

    mcar = check.mcar
    source = sheet.source
    return {
        "input": {
            "file": source.path.name,
            "sha256": source.sha256,
            "sheet": source.sheet,
            "header_row": source.header_row,
        },
        "columns": list(check.columns),
        "similarity_columns": list(check.similarity_columns),
        "mcar": {
            "statistic": _plain(mcar.statistic),
            "df": int(mcar.df),
            "p_value": _plain(mcar.p_value),
            "columns": list(mcar.columns),
            "n_patterns": int(mcar.n_patterns),
            "n_rows_used": int(mcar.n_rows_used),
            "iterations": int(mcar.iterations),
            "converged": bool(mcar.converged),
            "singular": bool(mcar.singular),
            "meaning": mcar.meaning,
        },
        "headline": check.headline,
        "differences": _records(check.differences),
        "patterns": _records(check.patterns),
        "cautions": CAUTIONS,
    }


def _records(table: pd.DataFrame) -> list[dict[str, Any]]:
    return [{str(k): _plain(v) for k, v in row.items()} for row in table.to_dict(orient="records")]


def _plain(value: Any) -> Any:
    if hasattr(value, "item"):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value
