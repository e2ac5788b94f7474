"""Column kinds and default roles: which columns measure similarity, which are filled.

A column's kind comes from the plan, else from the sheet, else from its values
(:func:`kind_of_values`). Without roles in the plan, every number or category
column measures similarity, and identifiers, dates and empty columns are carried.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from imputer_app.engine._input import Input
from imputer_app.plan import FillPlan

#: Kinds that can measure similarity and be filled.
USABLE_KINDS = ("number", "category")


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


def similarity_columns(names: list[str], plan: FillPlan, kinds: Mapping[str, str]) -> tuple[str, ...]:
    """The plan's similarity columns, or every usable column not carried nor the group."""
    if plan.similarity_columns is not None:
        return plan.similarity_columns
    carried = set(plan.carried_columns)
    return tuple(c for c in names if kinds[c] in USABLE_KINDS and c not in carried and c != plan.group_column)


def carried_columns(
    names: list[str], plan: FillPlan, kinds: Mapping[str, str], used: set[str]
) -> tuple[str, ...]:
    """The plan's carried columns plus every unused identifier, date or empty column."""
    skip = used | set(plan.carried_columns) | {plan.group_column}
    extra = [c for c in names if kinds[c] not in USABLE_KINDS and c not in skip]
    return (*plan.carried_columns, *extra)
