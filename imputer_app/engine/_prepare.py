"""Resolve a plan against the input and build the arrays of the neighbour search.

:func:`prepare` checks the plan's columns, decides kinds and roles
(:mod:`~imputer_app.engine._roles`), reads the used columns into arrays (censored
entries substituted or capped as the plan says, hidden cells made gaps) and scales
the similarity columns into a :class:`PreparedTable`. :func:`default_roles` reports
the roles the default plan gives each column.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from imputer_app.engine._censored import Censored, censored_caps, with_ros
from imputer_app.engine._columns import Columns, scaled_features
from imputer_app.engine._input import Input, SheetLike, censored_cells, state_masks, unpack
from imputer_app.engine._roles import (
    USABLE_KINDS,
    carried_columns,
    carry_reasons,
    column_kinds,
    plain_number,
    similarity_columns,
)
from imputer_app.engine._table import PreparedTable
from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from imputer_app.plan_rounding import column_decimals
from imputer_app.work import CancelFlag, raise_if_cancelled


def default_roles(data: pd.DataFrame | SheetLike) -> dict[str, str]:
    """Role of every column under the default plan ``FillPlan()``.

    Parameters
    ----------
    data : DataFrame or sheet-like
        A sheet-like object has ``frame`` (and optionally ``states``, ``cell_notes``
        and ``columns``).

    Returns
    -------
    dict of str to {"fill", "similarity", "carried"}
        ``"fill"`` means both a similarity and a fill column.
    """
    table = prepare_input(unpack(data), FillPlan(), scale=False)[0]
    roles = {}
    for col in table.columns:
        if col in table.fill_columns:
            roles[col] = "fill"
        elif col in table.similarity_columns:
            roles[col] = "similarity"
        else:
            roles[col] = "carried"
    return roles


def default_role_reasons(data: pd.DataFrame | SheetLike) -> dict[str, str]:
    """Why each column the default plan carries is carried, in plain words.

    Parameters
    ----------
    data : DataFrame or sheet-like
        As for :func:`default_roles`.

    Returns
    -------
    dict of str to str
        Column name to reason ("an identifier ...", "computed by formulas in the
        sheet", "free text ..."); columns the default plan uses are absent.
    """
    inp = unpack(data)
    plan = FillPlan()
    return carry_reasons(inp, plan, column_kinds(inp, plan))


def _numbers(frame: pd.DataFrame, col: str) -> NDArray[np.float64]:
    """Column ``col`` as floats; a PlanError when it holds text that is not a number."""
    series = frame[col]
    if pd.api.types.is_bool_dtype(series.dtype):
        return np.asarray(series.astype(float).to_numpy(), dtype=np.float64)
    got = pd.to_numeric(series, errors="coerce")
    bad = got.isna() & series.notna()
    if bad.any():
        raise PlanError(f"column {col!r} is used as numbers but holds text such as {series[bad].iloc[0]!r}")
    return np.asarray(got.to_numpy(dtype=float, na_value=np.nan), dtype=np.float64)


def _codes(series: pd.Series) -> tuple[NDArray[np.intp], NDArray[np.generic]]:
    """Class codes (-1 for an empty cell) and the class labels, sorted when they can be."""
    values = series.astype(object).where(series.notna(), None)
    try:
        codes, labels = pd.factorize(values, sort=True, use_na_sentinel=True)
    except TypeError:  # mixed types cannot be sorted
        codes, labels = pd.factorize(values, sort=False, use_na_sentinel=True)
    return np.asarray(codes, dtype=np.intp), np.asarray(labels, dtype=object)


def _read_columns(
    inp: Input, used: list[str], kinds: Mapping[str, str], plan: FillPlan, hide: NDArray[np.bool_] | None
) -> Columns:
    """The ``used`` columns as arrays: censored entries substituted, hidden cells made gaps.

    A below-limit cell whose limit the sheet does not give ("n.d.") takes the plan's
    limit for its column (``plan.limits``) when there is one.
    """
    censored = plan.censored
    out = Columns({}, {}, {}, {})
    position = {name: j for j, name in enumerate(inp.names)}
    used = list(dict.fromkeys(used))
    numbers = [c for c in used if kinds[c] == "number"]
    block = _number_block(inp.frame, numbers)  # a new array: written in place below
    marked = state_masks(inp, numbers, ("censored",))["censored"]
    rank = _label_rank(inp.frame.index) if censored == "ros" and marked.any() else None
    for j in np.flatnonzero(marked.any(axis=0)).tolist():
        cen = censored_cells(inp, numbers[j], marked[:, j])
        if numbers[j] in plan.limits:  # the plan's limit stands in where the sheet gave none
            cen.limit[cen.mask & np.isnan(cen.limit) & (cen.side != ">")] = plan.limits[numbers[j]]
        # stand-ins are rounded like the column's fills (similarity-only columns too)
        places = column_decimals(plan.decimals, plan.rounding, numbers[j], inp.decimals.get(numbers[j]))
        cen = replace(cen, decimals=places)
        if rank is not None:  # fitted to the values left visible, so a hidden cell cannot help
            hidden = hide is not None and hide[:, position[numbers[j]]]
            seen = np.where(hidden, np.nan, block[:, j])
            cen = with_ros(cen, seen, rank)
        out.censored[numbers[j]] = cen
        block[:, j] = np.where(cen.mask, cen.substitute(censored), block[:, j])
    if hide is not None and numbers:
        block[hide[:, [position[c] for c in numbers]]] = np.nan
    out.block, out.where = block, {col: j for j, col in enumerate(numbers)}
    out.numbers = {col: block[:, j] for j, col in enumerate(numbers)}
    for col in used:
        if kinds[col] != "number":
            codes, labels = _codes(inp.frame[col])
            if hide is not None:
                codes = np.where(hide[:, position[col]], -1, codes)
            out.codes[col], out.labels[col] = codes, labels
    return out


def _label_rank(index: pd.Index) -> NDArray[np.float64]:
    """Rank of each row label (position on a tie), so that an order by it ignores the row order."""
    labels = np.asarray(index, dtype=object)
    try:
        order = np.argsort(labels, kind="stable")
    except TypeError:  # labels of mixed types: compare them as text
        order = np.argsort(labels.astype(str), kind="stable")
    rank = np.empty(len(labels))
    rank[order] = np.arange(len(labels))
    return rank


def _number_block(frame: pd.DataFrame, columns: list[str]) -> NDArray[np.float64]:
    """Float array (n_rows, len(columns)); numeric dtypes read in one go, others checked."""
    dtypes = dict(zip(frame.columns.tolist(), frame.dtypes.tolist(), strict=True))
    if columns == list(dtypes) and set(dtypes.values()) <= {np.dtype(np.float64)}:
        return frame.to_numpy(dtype=np.float64, na_value=np.nan, copy=True)  # the common case: one copy
    out = np.empty((len(frame), len(columns)))
    plain = [j for j, c in enumerate(columns) if plain_number(dtypes[c])]
    if plain:
        out[:, plain] = frame[[columns[j] for j in plain]].to_numpy(dtype=float, na_value=np.nan)
    for j in sorted(set(range(len(columns))) - set(plain)):
        out[:, j] = _numbers(frame, columns[j])
    return out


def _groups(
    inp: Input, plan: FillPlan, hide: NDArray[np.bool_] | None
) -> tuple[NDArray[np.intp] | None, NDArray[np.generic]]:
    """Group codes (-1 where the group is empty or hidden) and labels; None without a group column."""
    if plan.group_column is None:
        return None, np.empty(0, dtype=object)
    codes, labels = _codes(inp.frame[plan.group_column])
    if hide is not None:
        codes = np.where(hide[:, inp.names.index(plan.group_column)], -1, codes)
    return codes, labels


def prepare(
    data: pd.DataFrame | SheetLike, plan: FillPlan, *, hide: NDArray[np.bool_] | None = None
) -> PreparedTable:
    """Resolve the plan against ``data`` and build the arrays for the neighbour search.

    Parameters
    ----------
    data : DataFrame or sheet-like
        Never modified. A sheet-like object brings ``states`` and ``cell_notes``
        (censored cells) and ``columns`` (detected kinds).
    plan : FillPlan
        The settings; None-valued roles are resolved against ``data``.
    hide : ndarray of bool, shape (n_rows, n_frame_columns), optional
        Cells treated as gaps (scaling statistics are computed without them).

    Returns
    -------
    PreparedTable

    Raises
    ------
    PlanError
        The plan names a column the data lacks, uses a date column, or uses a column
        holding text as numbers.
    """
    return prepare_input(unpack(data), plan, hide=hide)[0]


def prepare_input(
    inp: Input,
    plan: FillPlan,
    *,
    hide: NDArray[np.bool_] | None = None,
    scale: bool = True,
    cancel: CancelFlag | None = None,
) -> tuple[PreparedTable, dict[str, Censored]]:
    """:func:`prepare` on checked input; also returns each number column's censored cells.

    ``scale=False`` skips scaling (roles only); ``cancel`` is checked between the steps.
    """
    n = len(inp.frame)
    if hide is not None:
        hide = np.asarray(hide, dtype=bool)
        if hide.shape != inp.frame.shape:
            raise PlanError(f"hide mask has shape {hide.shape}; the table has shape {inp.frame.shape}")
    names = list(inp.names)
    plan.check_columns(names)
    kinds_all = column_kinds(inp, plan)
    reasons = carry_reasons(inp, plan, kinds_all)
    sim = similarity_columns(names, plan, kinds_all, reasons)
    for col in (*sim, *(plan.fill_columns or ())):
        if kinds_all[col] == "date":
            raise PlanError(f"column {col!r} holds dates; it cannot be a similarity or fill column")
        if kinds_all[col] not in USABLE_KINDS:  # named explicitly: identifiers as categories
            kinds_all[col] = "category" if kinds_all[col] == "identifier" else "number"
    cols = _read_columns(inp, [*sim, *(plan.fill_columns or ())], kinds_all, plan, hide)
    if plan.fill_columns is None:
        gappy = cols.gap_columns()
        fill = tuple(c for c in sim if c != plan.group_column and c in gappy)
    else:
        fill = plan.fill_columns
    resolved = plan.replace(
        similarity_columns=sim,
        fill_columns=fill,
        carried_columns=carried_columns(names, plan, kinds_all, {*sim, *fill}, reasons),
    )
    kinds = {c: ("number" if kinds_all[c] == "number" else "category") for c in (*sim, *fill)}
    raise_if_cancelled(cancel)  # each step takes about a second on a sheet of ten million cells
    features, warnings, has_values = scaled_features(cols, resolved, kinds, scale)
    if resolved.rounding_note:  # an old plan: its fill is redone as it was, and said so
        warnings.insert(0, resolved.rounding_note)
    if resolved.neighbour_weighting == "inverse_distance" and resolved.numeric_rule == "median":
        warnings.append(
            "numeric_rule 'median' is not used with inverse-distance weighting (weighted mean used)"
        )
    fill = resolved.fill_columns or ()
    values: dict[str, NDArray[np.generic]] = {}
    observed: dict[str, NDArray[np.bool_]] = {}
    cap_upper: dict[str, NDArray[np.float64]] = {}
    cap_lower: dict[str, NDArray[np.float64]] = {}
    unknown_limit: dict[str, NDArray[np.bool_]] = {}
    decimals: dict[str, int] = {}
    finite = np.isfinite(cols.block)
    for col in fill:
        if kinds[col] == "number":
            values[col] = cols.numbers[col]
            observed[col] = finite[:, cols.where[col]]
            cen = cols.censored.get(col)
            if cen is not None:
                unknown_limit[col] = cen.mask & ~np.isfinite(cen.limit)
                measured = values[col][observed[col] & ~cen.mask]  # not the stand-ins for limits
                caps = censored_caps(cen, unknown_limit[col], measured, resolved.censored)
                if caps is not None:
                    cap_upper[col], cap_lower[col] = caps
            rounded = column_decimals(resolved.decimals, resolved.rounding, col, inp.decimals.get(col))
            if rounded is not None:
                decimals[col] = rounded
        else:
            values[col] = cols.codes[col]
            observed[col] = cols.codes[col] >= 0
    for col, cen in cols.censored.items():  # stand-ins of similarity-only columns are rounded too
        if cen.decimals is not None:
            decimals.setdefault(col, cen.decimals)
    if scale and features.total_weight <= 0 and any(o.any() and not o.all() for o in observed.values()):
        raise PlanError(
            "no similarity column can compare rows: every one is constant, empty or weighted 0; "
            "choose other similarity columns or weights"
        )
    # A formula's error result (#DIV/0!) is NaN like a gap, but it is the lab's formula
    # that failed, not a missing measurement: not a gap unless the plan fills those.
    left_alone: dict[str, NDArray[np.bool_]] = {}
    if not resolved.fill_formula_errors and fill:
        errors = state_masks(inp, list(fill), ("formula_error",))["formula_error"]
        for j in np.flatnonzero(errors.any(axis=0)).tolist():
            left_alone[fill[j]] = errors[:, j]
    groups, group_labels = _groups(inp, resolved, hide)
    return PreparedTable(
        n_rows=n,
        row_labels=np.asarray(inp.frame.index),
        columns=inp.names,
        similarity_columns=tuple(resolved.similarity_columns or ()),
        fill_columns=tuple(fill),
        kinds=kinds,
        values=values,
        categories=dict(cols.labels),
        observed=observed,
        plan=resolved,
        warnings=tuple(warnings),
        features=features,
        groups=groups,
        group_labels=group_labels,
        cap_upper=cap_upper,
        cap_lower=cap_lower,
        unknown_limit=unknown_limit,
        measured=has_values,
        left_alone=left_alone,
        decimals=decimals,
    ), cols.censored
