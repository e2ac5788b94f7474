"""Read the plan back out of an export that :func:`write_result` wrote.

The csv export's ``<name>.run.json`` holds the plan exactly; the xlsx export's
"About this fill" sheet holds it as a ``plan (JSON)`` row when present, else as the
readable key/value rows of its "Plan (as given)" section, which are parsed back. The
labels read here are the ones :mod:`imputer_app.sheets._run_record` writes.

An export is checked like any workbook the reader opens (type, zip directory,
decompression-bomb limits, :mod:`imputer_app.sheets._guards`) before a parser sees it,
and a run record is read only up to the plan-file size limit.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from os import PathLike
from pathlib import Path
from typing import Any

from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from imputer_app.plan_text import MAX_PLAN_BYTES
from imputer_app.sheets._guards import check_workbook_file
from imputer_app.sheets._run_record import ABOUT_SHEET, SECTIONS
from imputer_app.sheets._write_csv import side_files

#: Label of the exact plan row an xlsx export may carry in "About this fill".
PLAN_JSON_LABELS = ("plan (json)", "plan json")
_LIST_KEYS = ("similarity_columns", "fill_columns", "carried_columns")
_TABLE_TYPES: dict[str, type] = {
    "weights": float,
    "decimals": int,
    "kinds": str,
    "markers": str,
    "limits": float,
    "k_by_column": int,
}
_BOOL_KEYS = ("fill_formula_errors",)
#: "About this fill (2)": the name an export of an export gives its own record sheet.
_ABOUT_AGAIN = re.compile(rf"^{re.escape(ABOUT_SHEET)} \((\d+)\)$")


def read_export_plan(path: str | PathLike[str]) -> FillPlan:
    """Return the plan recorded in an export made by Kinfill.

    Parameters
    ----------
    path : str or path-like
        An xlsx export, a csv/tsv export (its ``<name>.run.json`` is read), or a
        ``.run.json`` file itself.

    Returns
    -------
    FillPlan
        The plan as the user gave it for that fill.

    Raises
    ------
    PlanError
        The file holds no Kinfill run record, or its plan is invalid.
    SheetError
        The workbook is damaged, disguised or a possible decompression bomb (refused
        from its zip directory, before anything is decompressed).

    Examples
    --------
    >>> plan = read_export_plan("june.filled.xlsx")  # doctest: +SKIP
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".json":
        data = _plan_in_json(path)
    elif suffix in (".csv", ".tsv", ".txt"):
        data = _plan_in_json(_record_beside(path))
    elif suffix in (".xlsx", ".xlsm"):
        data = _plan_in_workbook(path)
    else:
        raise PlanError(f"{path.name} is not a Kinfill export (expected .xlsx, .csv or .run.json)")
    return FillPlan.from_dict(data, source=path.name)


def _record_beside(path: Path) -> Path:
    record = side_files(path, with_unfilled=False)["record"]
    if not record.is_file():
        raise PlanError(
            f"{path.name} has no run record beside it ({record.name} not found); is it a Kinfill export?"
        )
    return record


#: Largest run record read: its plan plus the run's notes (the plan alone is at most
#: :data:`~imputer_app.plan_text.MAX_PLAN_BYTES`).
MAX_RECORD_BYTES = 16 * MAX_PLAN_BYTES


def _plan_in_json(path: Path) -> Mapping[str, Any]:
    try:
        if not path.is_file():
            raise PlanError(f"{path.name} is not an ordinary file; give a Kinfill run record (.run.json)")
        with path.open("rb") as handle:
            data = handle.read(MAX_RECORD_BYTES + 1)
        if len(data) > MAX_RECORD_BYTES:
            raise PlanError(
                f"{path.name} is larger than {MAX_RECORD_BYTES // 1_000_000} MB; not a Kinfill run record"
            )
        record = json.loads(data.decode("utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError, RecursionError) as exc:
        raise PlanError(f"cannot read the run record {path.name}: {exc}") from None
    plan = record.get("plan") if isinstance(record, dict) else None
    if not isinstance(plan, dict):
        raise PlanError(f"{path.name} holds no plan; is it a Kinfill run record?")
    return plan


def _plan_in_workbook(path: Path) -> Mapping[str, Any]:
    from openpyxl import load_workbook

    check_workbook_file(path, path.suffix.lower().lstrip("."))
    try:
        book = load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a damaged file
        raise PlanError(f"cannot open {path.name} to read its plan: {exc}") from None
    try:
        about = newest_about_sheet(book.sheetnames)
        if about is None:
            raise PlanError(f"{path.name} has no sheet {ABOUT_SHEET!r}; is it a Kinfill export?")
        rows = [(r[0], r[1] if len(r) > 1 else None) for r in book[about].iter_rows(values_only=True) if r]
    finally:
        book.close()
    for key, value in rows:
        if isinstance(key, str) and key.strip().lower() in PLAN_JSON_LABELS and isinstance(value, str):
            try:
                plan = json.loads(value)
            except json.JSONDecodeError as exc:
                raise PlanError(f"{path.name}: the plan (JSON) cell is damaged: {exc}") from None
            if isinstance(plan, dict):
                return plan
    return plan_from_about_rows(rows, path.name)


def newest_about_sheet(names: Sequence[str]) -> str | None:
    """The record sheet of the latest fill: "About this fill (N)" with the highest N.

    An export exported again keeps the first fill's "About this fill" and adds its own
    under the next free name; the newest plan is the one to repeat.
    """
    numbered = [(int(m.group(1)), name) for name in names if (m := _ABOUT_AGAIN.match(name))]
    if numbered:
        return max(numbered)[1]
    return ABOUT_SHEET if ABOUT_SHEET in names else None


def plan_from_about_rows(rows: Sequence[tuple[Any, Any]], name: str) -> dict[str, Any]:
    """Parse the "Plan (as given)" section of "About this fill" back into plan data.

    The section lists ``key`` / ``value`` rows: lists joined with ``"; "``, tables as
    ``column=value; ...`` and bounds as ``bounds: column`` / ``lower=..; upper=..``.
    Column names containing ``"; "`` or ``=`` cannot be told apart in this form.
    """
    title = SECTIONS["plan"]
    keys = [str(k) if k is not None else "" for k, _ in rows]
    if title not in keys:
        raise PlanError(f"{name} has no {title!r} section in {ABOUT_SHEET!r}; is it a Kinfill export?")
    data: dict[str, Any] = {"bounds": {}}
    for key, value in rows[keys.index(title) + 1 :]:
        if not key:
            break
        label = str(key).strip()
        text = "" if value is None else value
        if label.startswith("bounds: "):
            data["bounds"][label[len("bounds: ") :]] = {s: float(v) for s, v in _pairs(str(text)).items()}
            continue
        field = label.replace(" ", "_")
        if field in _LIST_KEYS:
            data[field] = [p for p in str(text).split("; ") if p] if text != "" else []
        elif field in _TABLE_TYPES:
            data[field] = {c: _TABLE_TYPES[field](v) for c, v in _pairs(str(text)).items()}
        elif field in _BOOL_KEYS:
            data[field] = text is True or str(text).strip().lower() == "true"
        elif field in ("k", "format"):
            data[field] = int(float(text))
        elif field == "interval_level":
            data[field] = text if text in ("off", "") else float(text)
        elif field != "bounds":
            data[field] = str(text)
    return data


def _pairs(text: str) -> dict[str, str]:
    out: dict[str, str] = {}
    for part in filter(None, text.split("; ")):
        column, _, value = part.rpartition("=")
        out[column] = value
    return out
