"""Column kinds and default roles: which columns measure similarity, which are filled.

A column's kind comes from the plan, else from the sheet, else from its values
(:func:`kind_of_values`). Without roles in the plan, every number or category
column measures similarity, except the columns a fill could damage, which are
carried with a reason (:func:`carry_reasons`): identifiers, dates, empty and
constant columns, computed columns (the sheet says so), and free text. A text
column is free text when its entries are long, when it is mostly empty, or when it
has too many levels for a category: a category is used only with at most
max(10, sqrt(n)) levels for its n filled cells, each level seen at least twice on
average (common practice, no source).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from imputer_app.engine._input import Input
from imputer_app.plan import FillPlan

#: Kinds that can measure similarity and be filled.
USABLE_KINDS = ("number", "category")

#: Most levels a category may have: max(MIN_LEVELS, sqrt(filled cells)); and each level
#: must be seen at least LEVEL_REPEATS times on average.
MIN_LEVELS, LEVEL_REPEATS = 10, 2
#: A text entry longer than this (characters, median of the column) is free text.
LONG_TEXT = 30

#: Why a column of each kind that cannot be used is carried.
KIND_REASONS = {
    "identifier": "an identifier (a different value in every row)",
    "date": "dates or times",
    "empty": "holds no value",
}


def kind_of_values(series: pd.Series) -> str:
    """Kind of a DataFrame column from its dtype and values: number, category, date, identifier or empty.

    Numbers are numeric dtypes (or text columns holding only numbers); bool, text and
    pandas categoricals are categories, except text whose values are all distinct
    (an identifier); datetimes are dates; an all-empty column is empty.
    """
    values = series.dropna()
    if pd.api.types.is_bool_dtype(series.dtype):
        return "category" if len(values) else "empty"
    if len(values) == 0:
        return "empty"
    if pd.api.types.is_datetime64_any_dtype(series.dtype) or pd.api.types.is_timedelta64_dtype(series.dtype):
        return "date"
    if pd.api.types.is_numeric_dtype(series.dtype):
        return "number"
    if isinstance(series.dtype, pd.CategoricalDtype):
        return "category"
    items = values.tolist()
    if all(isinstance(v, int | float | np.number) and not isinstance(v, bool | np.bool_) for v in items):
        return "number"
    if len(items) > 1 and values.is_unique:
        return "identifier"
    return "category"


def plain_number(dtype: np.dtype | pd.api.extensions.ExtensionDtype) -> bool:
    """A numeric, non-bool dtype (numpy fast path first)."""
    if isinstance(dtype, np.dtype):
        return dtype.kind in "iuf"
    return bool(pd.api.types.is_numeric_dtype(dtype) and not pd.api.types.is_bool_dtype(dtype))


def column_kinds(inp: Input, plan: FillPlan) -> dict[str, str]:
    """Kind of every column: the plan's override, else the sheet's, else from the values."""
    frame = inp.frame
    has_values = frame.notna().any(axis=0).to_numpy()
    dtypes = frame.dtypes.tolist()
    plain = {dtype: plain_number(dtype) for dtype in set(dtypes)}  # a wide table has few dtypes
    sheet_kinds = inp.sheet_kinds or {}
    kinds = {}
    for col, dtype, has in zip(inp.names, dtypes, has_values.tolist(), strict=True):
        kind = plan.kinds.get(col) or sheet_kinds.get(col)
        if kind is None and has and plain[dtype]:
            kind = "number"  # the common case, without looking at the values
        kinds[col] = kind or kind_of_values(frame[col])
    return kinds


def carry_reasons(inp: Input, plan: FillPlan, kinds: Mapping[str, str]) -> dict[str, str]:
    """Why each column is carried by default (a column absent from the result is usable).

    The sheet's own reasons (computed columns) come first; then the kind (identifier,
    date, empty); then constant columns and free text (rules in the module docstring).
    A kind the plan forces skips the free-text rules: the user said what it is.
    """
    frame = inp.frame
    out: dict[str, str] = {}
    constant = _constant_numbers(frame, [c for c in inp.names if kinds[c] == "number"])
    for col in inp.names:
        kind = kinds[col]
        why = inp.sheet_reasons.get(col) or KIND_REASONS.get(kind)
        if why is None and kind == "number":
            why = constant.get(col)
        elif why is None and kind == "category":
            why = _category_reason(frame[col], forced=col in plan.kinds)
        if why:
            out[col] = why
    return out


def _constant_numbers(frame: pd.DataFrame, columns: list[str]) -> dict[str, str]:
    """The reason for each number column whose filled cells (two or more) are all equal.

    One pass over all number columns at once: a wide sheet has thousands of them.
    """
    if not columns:
        return {}
    # the whole frame when it is all asked for: selecting thousands of columns by name costs
    part = frame if frame.columns.tolist() == columns else frame[columns]
    if all(d.kind in "fiu" for d in part.dtypes.tolist()):
        values = part.to_numpy(dtype=float, na_value=np.nan)  # one block: no per-column work
    else:
        values = np.column_stack(
            [pd.to_numeric(part[c], errors="coerce").to_numpy(dtype=float, na_value=np.nan) for c in columns]
        )
    present = np.isfinite(values)
    finite = values if present.all() else np.where(present, values, np.nan)
    low = np.fmin.reduce(finite, axis=0, initial=np.inf)  # fmin passes over the NaN gaps
    high = np.fmax.reduce(finite, axis=0, initial=-np.inf)
    same = (np.count_nonzero(present, axis=0) >= 2) & (low == high)
    return {columns[j]: f"constant (every filled cell is {low[j]:g})" for j in np.flatnonzero(same)}


def _category_reason(series: pd.Series, forced: bool) -> str | None:
    values = series.dropna()
    n, levels = len(values), int(values.nunique())
    if n >= 2 and levels == 1 and n == len(series):
        return "constant (the same entry in every row)"
    if forced or not n:
        return None
    text = values[values.map(lambda v: isinstance(v, str))]
    if len(text) and float(text.str.len().median()) > LONG_TEXT:
        return "free text (long entries)"
    if len(text) and 2 * n < len(series):
        return f"free text (mostly empty: {n} of {len(series)} rows hold an entry)"
    most = max(MIN_LEVELS, int(np.sqrt(n)))
    if levels > most or n < LEVEL_REPEATS * levels:
        return (
            f"free text ({levels} different entries in {n} rows; a category is used with at most "
            f"{most} levels, each seen twice on average)"
        )
    return None


def similarity_columns(
    names: list[str], plan: FillPlan, kinds: Mapping[str, str], reasons: Mapping[str, str]
) -> tuple[str, ...]:
    """The plan's similarity columns, or every usable column not carried (nor the group)."""
    if plan.similarity_columns is not None:
        return plan.similarity_columns
    carried = set(plan.carried_columns) | set(reasons)
    return tuple(c for c in names if kinds[c] in USABLE_KINDS and c not in carried and c != plan.group_column)


def carried_columns(
    names: list[str], plan: FillPlan, kinds: Mapping[str, str], used: set[str], reasons: Mapping[str, str]
) -> tuple[str, ...]:
    """The plan's carried columns plus every unused column that cannot be used or has a reason."""
    skip = used | set(plan.carried_columns) | {plan.group_column}
    extra = [c for c in names if (kinds[c] not in USABLE_KINDS or c in reasons) and c not in skip]
    return (*plan.carried_columns, *extra)
