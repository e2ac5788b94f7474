"""The run record: what was filled, from which file, how, and with which software.

One dictionary serves both exports: the xlsx sheet "About this fill" shows it as
key/value rows (:func:`about_rows`), the csv export writes it as ``<name>.run.json``
(:func:`record_json`). It is enough to repeat the fill: the plan, the input file's
SHA-256, sheet and header row, and the versions of Kinfill and its libraries.
"""

from __future__ import annotations

import json
import math
import platform
from collections.abc import Mapping
from datetime import UTC, datetime
from importlib import metadata
from typing import TYPE_CHECKING, Any, Protocol

import numpy as np
import pandas as pd

from imputer_app import CAUTIONS, __version__
from imputer_app.charts import ErrorVsK
from imputer_app.sheets._methods_text import methods_paragraph
from imputer_app.words import CHOICE_WORDS, STAND_IN_ROUNDING

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.plan import FillPlan
    from imputer_app.sheets._content import ExportContent
    from imputer_app.sheets._model import Sheet

#: Distributions whose versions every export records.
LIBRARIES = (
    "numpy", "pandas", "scikit-learn", "openpyxl", "python-calamine", "xlsxwriter", "matplotlib",
)  # fmt: skip

#: Name of the xlsx export's sheet that shows the run record (read back by _export_plan).
ABOUT_SHEET = "About this fill"

#: Row label of the methods paragraph in "About this fill".
METHODS_LABEL = "Methods text (ready to paste)"

#: Section titles of "About this fill", in order, keyed by the record's keys.
SECTIONS = {
    "run": "This fill",
    "input": "Input file",
    "output": "This export",
    "counts": "Counts",
    "plan": "Plan (as given)",
    "plan_resolved": "Plan (as used, columns resolved)",
    "units": "Units",
    "rounding": "Rounding of filled numbers",
    "unfilled_reasons": "Cells left empty, by reason",
    "warnings": "Warnings",
    "recovery_test": "Recovery test",
    "versions": "Software",
}

#: Row labels of "About this fill" that read better than their JSON key.
LABELS = {
    "kinfill_version": "Kinfill version",
    "created_utc": "created (UTC)",
    "sha256": "SHA-256",
    "chosen_k": "chosen k (used for this fill)",
    "best_k": "best k (lowest mean error)",
    "best_k_1se": "k by the one-standard-error rule",
    "ks": "k values tested",
    "baseline_score": "baseline score (column average)",
    "coverage": "coverage on hidden cells (nominal level, observed share, cells)",
    "n_hidden": "hidden known cells used",
    "neighbour_search": "neighbour search",
}


class RecoveryEvidence(ErrorVsK, Protocol):
    """What an export reads from a recovery report (``validation.RecoveryReport`` has it all).

    ``sheets`` sits beside ``validation`` in the layers, so it names what it reads here
    instead of importing the report's class.
    """

    @property
    def settings(self) -> dict[str, Any]: ...

    def to_frame(self) -> pd.DataFrame: ...


def utc_now() -> str:
    """Return the current time as ISO 8601 UTC text to the second."""
    return datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")


def library_versions() -> dict[str, str]:
    """Return the versions of Kinfill, Python and :data:`LIBRARIES` ('not installed' if absent)."""
    versions = {"kinfill": __version__, "python": platform.python_version()}
    for name in LIBRARIES:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def build_record(
    sheet: Sheet | None,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None,
    content: ExportContent,
    output: Mapping[str, Any],
) -> dict[str, Any]:
    """Return the run record as JSON-ready data.

    Parameters
    ----------
    sheet : Sheet or None
        The input sheet (None for a DataFrame given directly).
    result : FillResult
        The fill result being exported.
    plan : FillPlan
        The plan as the user gave it (``result.plan`` is the resolved one).
    report : RecoveryReport or None
        A recovery test's report, when one was run.
    content : ExportContent
        The export's content (counts, units).
    output : mapping
        Facts about this export (file, format, colours, comments, row numbers).
    """
    log = result.log
    methods = log["method"].astype(str) if len(log) else pd.Series([], dtype=str)
    record: dict[str, Any] = {
        "run": {
            "kinfill_version": __version__,
            "created_utc": utc_now(),
            "neighbour_search": getattr(result, "search", "") or None,
        },
        "input": _input(sheet),
        "output": dict(output),
        "counts": {
            "rows": int(content.frame.shape[0]),
            "columns": int(content.frame.shape[1]),
            "filled": int(np.count_nonzero(np.asarray(result.filled, dtype=bool))),
            "censored": int(np.count_nonzero(np.asarray(result.censored, dtype=bool))),
            "censored_substituted": int(methods.isin(["limit", "half_limit", "limit_sqrt2"]).sum()),
            "unfilled": len(result.unfilled),
            "weak_support": int((log["support"].astype(str) == "weak").sum()) if len(log) else 0,
        },
        "plan": plan.to_dict(),
        "plan_resolved": result.plan.to_dict(),
        "units": {n: u for n, u in zip(content.names, content.units, strict=True) if u},
        "rounding": _rounding(result),
        "unfilled_reasons": {str(k): int(v) for k, v in result.unfilled["reason"].value_counts().items()},
        "warnings": [str(w) for w in result.warnings] + (list(sheet.problems) if sheet is not None else []),
        "recovery_test": _recovery(report, result.plan.k),
        "intervals": _intervals(result),
        "versions": library_versions(),
        "cautions": CAUTIONS,
        "methods_text": methods_paragraph(result, plan, report, sheet),
    }
    return jsonable(record)


def _rounding(result: FillResult) -> dict[str, Any]:
    """The rounding rule and the decimals each rounded column's filled numbers got."""
    rule = CHOICE_WORDS["rounding"][result.plan.rounding]
    decimals = dict(getattr(result, "decimals", {}))
    out: dict[str, Any] = {"rule": f"{rule.label}: {rule.explanation}", "decimals": decimals}
    if decimals:
        out["below_limit_stand_ins"] = STAND_IN_ROUNDING
    return out


def _input(sheet: Sheet | None) -> dict[str, Any]:
    if sheet is None:
        return {"file": None, "note": "a table given directly, not read from a file"}
    src = sheet.source
    return {
        "file": src.path.name,
        "sha256": src.sha256,
        "sheet": src.sheet,
        "header_row": src.header_row,
        "units_row": src.units_row,
        "format": src.file_format,
        "delimiter": src.delimiter,
        "decimal": src.decimal,
        "encoding": src.encoding,
    }


def _intervals(result: FillResult) -> dict[str, Any] | None:
    """How the intervals were calibrated (None when they were off)."""
    calibration = getattr(result, "calibration", None)
    return None if calibration is None else calibration.to_dict()


def _recovery(report: RecoveryEvidence | None, chosen_k: int) -> dict[str, Any] | None:
    """Summarise a recovery report through its documented attributes."""
    if report is None:
        return None
    summary: dict[str, Any] = {
        "chosen_k": chosen_k,
        "best_k": getattr(report, "best_k", None),
        "best_k_1se": getattr(report, "best_k_1se", None),
        "k_by_column_1se": getattr(report, "k_by_column_1se", None),
        "ks": list(getattr(report, "ks", []) or []),
        "settings": getattr(report, "settings", {}),
    }
    baseline = getattr(report, "baseline", None)
    if isinstance(baseline, pd.DataFrame) and "score" in baseline and "overall" in baseline.index:
        summary["baseline_score"] = baseline.loc["overall", "score"]
    summary["per_k"] = recovery_table(report).to_dict(orient="records")
    return summary


def recovery_table(report: RecoveryEvidence) -> pd.DataFrame:
    """Return ``report.to_frame()`` with its index as ordinary columns."""
    table = report.to_frame()
    if not isinstance(table.index, pd.RangeIndex) or table.index.name is not None:
        table = table.reset_index()
    return table


def jsonable(value: Any) -> Any:
    """Return ``value`` with numpy/pandas scalars made plain and NaN/inf made None."""
    if isinstance(value, Mapping):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple | set | frozenset | np.ndarray | pd.Index):
        return [jsonable(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if value is None or isinstance(value, str | int | float | bool):
        return value
    if value is pd.NA or value is pd.NaT:
        return None
    return str(value)


def record_json(record: Mapping[str, Any]) -> str:
    """Return the run record as indented JSON text."""
    return json.dumps(record, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def about_rows(record: Mapping[str, Any]) -> list[tuple[str, Any, str]]:
    """Return "About this fill" as rows of (key, value, style).

    ``style`` is ``"section"`` for a section title, ``"caution"`` for the cautions
    and ``""`` otherwise. Values are numbers or text (lists joined with ``"; "``).
    """
    rows: list[tuple[str, Any, str]] = [("Cautions", record["cautions"], "caution"), ("", None, "")]
    if record.get("methods_text"):
        rows.extend([(METHODS_LABEL, record["methods_text"], ""), ("", None, "")])
    for key, title in SECTIONS.items():
        value = record.get(key)
        if value in (None, {}, []):
            continue
        rows.append((title, None, "section"))
        if isinstance(value, Mapping):
            rows.extend(_mapping_rows(value))
        else:
            rows.extend((str(number), _flat(v), "") for number, v in enumerate(value, start=1))
        rows.append(("", None, ""))
    # The readable rows above lose nothing for ordinary names, but a column name holding
    # "; " or "=" cannot be parsed back from them: keep the exact plan for re-runs too.
    rows.append(("Plan for re-runs", None, "section"))
    rows.append(("plan (JSON)", json.dumps(record["plan"], ensure_ascii=False, sort_keys=True), ""))
    return rows


def _mapping_rows(value: Mapping[str, Any]) -> list[tuple[str, Any, str]]:
    out: list[tuple[str, Any, str]] = []
    for key, item in value.items():
        if key == "per_k" or item is None:  # per_k: the table is on the "Recovery test" sheet
            continue
        label = LABELS.get(str(key), str(key).replace("_", " "))
        if isinstance(item, Mapping) and item and all(isinstance(v, Mapping) for v in item.values()):
            out.extend((f"{label}: {sub}", _flat(v), "") for sub, v in item.items())
        else:
            out.append((label, _flat(item), ""))
    return out


def _flat(value: Any) -> Any:
    """Return a cell value: numbers stay numbers, lists and tables become text."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float | str):
        return value
    if isinstance(value, Mapping):
        return "; ".join(f"{k}={_text(v)}" for k, v in value.items())
    if isinstance(value, list | tuple):
        return "; ".join(_text(v) for v in value)
    return str(value)


def _text(value: Any) -> str:
    if isinstance(value, Mapping):
        return "(" + ", ".join(f"{k}={_text(v)}" for k, v in value.items()) + ")"
    if isinstance(value, list | tuple):
        return "(" + ", ".join(_text(v) for v in value) + ")"
    return "" if value is None else str(value)
