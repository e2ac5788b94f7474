"""Turn DataFrames and sheets into arrays and back (the engine's only pandas import).

:func:`prepare` resolves column roles and kinds, applies the plan's censored
handling and scaling and hands the numeric core a :class:`PreparedTable`;
:func:`impute` runs the search and builds the :class:`FillResult` (filled frame,
flags, fill log and the table of cells left empty).
"""

from __future__ import annotations

import copy
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from imputer_app.engine._columns import Columns, scaled_features
from imputer_app.engine._log import (
    Censored,
    LogTable,
    Records,
    fill_records,
    repeated,
    substitution_records,
)
from imputer_app.engine._search import search_cells
from imputer_app.engine._stack import Stack
from imputer_app.engine._support import weak_threshold
from imputer_app.engine._table import PreparedTable
from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

LOG_COLUMNS = (
    "row", "column", "value", "original_state", "method", "k", "donors",
    "distances", "donor_values", "spread", "support", "note",
)  # fmt: skip
UNFILLED_COLUMNS = ("row", "column", "reason")
USABLE_KINDS = ("number", "category")


@dataclass(frozen=True)
class FillResult:
    """The outcome of :func:`impute`.

    Attributes
    ----------
    frame : DataFrame
        Filled copy of the input: same index, columns and order (dtypes kept where
        the filled values allow).
    filled : DataFrame of bool
        True where Kinfill wrote a kNN (or column-mean) value into a gap or into a
        censored cell it was asked to fill.
    censored : DataFrame of bool
        True where the input cell was censored, whatever the handling.
    log : DataFrame
        The fill log: one row per value written, columns :data:`LOG_COLUMNS`.
    unfilled : DataFrame
        Cells left empty, columns ``row``, ``column``, ``reason``.
    plan : FillPlan
        The plan actually used (similarity and fill columns resolved).
    warnings : tuple of str
        Plain-words remarks (constant columns left out, ...).
    k_weak_threshold : float
        Distance above which a cell's support is "weak" (NaN when nothing was filled).
    """

    frame: pd.DataFrame
    filled: pd.DataFrame
    censored: pd.DataFrame
    log: pd.DataFrame
    unfilled: pd.DataFrame
    plan: FillPlan
    warnings: tuple[str, ...]
    k_weak_threshold: float


# ---------------------------------------------------------------- input reading
@dataclass(frozen=True)
class _Input:
    names: tuple[str, ...]  # the frame's column names (iterating a pandas Index is slow)
    frame: pd.DataFrame
    states: pd.DataFrame | None
    notes: pd.DataFrame | None
    sheet_kinds: dict[str, str] | None


def _unpack(data: Any) -> _Input:
    if isinstance(data, pd.DataFrame):
        frame, states, notes, kinds = data, None, None, None
    elif hasattr(data, "frame"):
        frame = data.frame
        states = getattr(data, "states", None)
        notes = getattr(data, "cell_notes", None)
        cols = getattr(data, "columns", None)
        kinds = {c.name: c.kind for c in cols} if isinstance(cols, list | tuple) and cols else None
    else:
        raise PlanError(f"cannot fill a {type(data).__name__}; give a table (DataFrame) or a read sheet")
    if not isinstance(frame, pd.DataFrame):
        raise PlanError("the sheet's frame is not a table")
    names = tuple(frame.columns.tolist())
    bad = [c for c in names if not isinstance(c, str)]
    if bad:
        raise PlanError(f"column names must be text; column {bad[0]!r} is not")
    if frame.columns.has_duplicates:
        dup = frame.columns[frame.columns.duplicated()][0]
        raise PlanError(f"column {dup!r} appears twice; column names must be unique")
    return _Input(names, frame, states, notes, kinds)


def detect_kind(series: pd.Series) -> str:
    """Kind of a DataFrame column: number, category, date, identifier or empty.

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


def _plain_number(dtype: Any) -> bool:
    """A numeric, non-bool dtype (numpy fast path first)."""
    if isinstance(dtype, np.dtype):
        return dtype.kind in "iuf"
    return bool(pd.api.types.is_numeric_dtype(dtype) and not pd.api.types.is_bool_dtype(dtype))


def _kinds(inp: _Input, plan: FillPlan) -> dict[str, str]:
    """Detected kind of every column, with the plan's overrides applied."""
    frame = inp.frame
    has_values = frame.notna().any(axis=0).to_numpy()
    dtypes = frame.dtypes.tolist()
    plain = {dtype: _plain_number(dtype) for dtype in set(dtypes)}  # a wide table has few dtypes
    sheet_kinds = inp.sheet_kinds or {}
    kinds = {}
    for col, dtype, has in zip(inp.names, dtypes, has_values.tolist(), strict=True):
        kind = plan.kinds.get(col) or sheet_kinds.get(col)
        if kind is None and has and plain[dtype]:
            kind = "number"  # the common case, without looking at the values
        kinds[col] = kind or detect_kind(frame[col])
    return kinds


def _similarity(names: list[str], plan: FillPlan, kinds: Mapping[str, str]) -> tuple[str, ...]:
    """The plan's similarity columns, or every usable column not carried nor the group."""
    if plan.similarity_columns is not None:
        return plan.similarity_columns
    carried = set(plan.carried_columns)
    return tuple(c for c in names if kinds[c] in USABLE_KINDS and c not in carried and c != plan.group_column)


def _carried(names: list[str], plan: FillPlan, kinds: Mapping[str, str], used: set[str]) -> tuple[str, ...]:
    """The plan's carried columns plus every unused identifier, date or empty column."""
    skip = used | set(plan.carried_columns) | {plan.group_column}
    extra = [c for c in names if kinds[c] not in USABLE_KINDS and c not in skip]
    return (*plan.carried_columns, *extra)


def default_roles(data: Any) -> dict[str, str]:
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
    table = _prepare(_unpack(data), FillPlan(), scale=False)[0]
    roles = {}
    for col in table.columns:
        if col in table.fill_columns:
            roles[col] = "fill"
        elif col in table.similarity_columns:
            roles[col] = "similarity"
        else:
            roles[col] = "carried"
    return roles


# ---------------------------------------------------------------- censored cells
def _state_masks(inp: _Input, columns: list[str], words: tuple[str, ...]) -> dict[str, NDArray[np.bool_]]:
    """Per state word, bool (n_rows, len(columns)): the sheet's state of the cell is that word.

    All False without states or for a column the states lack. Categorical states (what
    the sheet reader gives) are compared by code, column by column: far faster than
    turning the whole table of states into text.
    """
    out = {word: np.zeros((len(inp.frame), len(columns)), dtype=bool) for word in words}
    if inp.states is None:
        return out
    for j, col in enumerate(columns):
        if col not in inp.states.columns:
            continue
        series = inp.states[col]
        if isinstance(series.dtype, pd.CategoricalDtype):
            codes, classes = series.cat.codes.to_numpy(), series.cat.categories
            for word in words:
                if word in classes:
                    out[word][:, j] = codes == classes.get_loc(word)
        else:
            text = series.astype(object).to_numpy()
            for word in words:
                out[word][:, j] = text == word
    return out


def _censored(inp: _Input, col: str, mask: NDArray[np.bool_]) -> Censored:
    """Censored cells ``mask`` of ``col`` with their side, limit and text from the cell notes."""
    n = len(mask)
    side = np.full(n, "", dtype="<U1")
    limit = np.full(n, np.nan)
    text = repeated("", n)
    notes = inp.notes
    if notes is not None and len(notes) and {"row", "column"} <= set(notes.columns):
        mine = notes[notes["column"] == col]
        pos = inp.frame.index.get_indexer(pd.Index(mine["row"]))
        ok = (pos >= 0) & mask[np.maximum(pos, 0)]
        if "side" in mine.columns:
            side[pos[ok]] = mine["side"].fillna("").astype(str).to_numpy()[ok]
        if "limit" in mine.columns:
            limit[pos[ok]] = pd.to_numeric(mine["limit"], errors="coerce").to_numpy(dtype=float)[ok]
        if "text" in mine.columns:
            text[pos[ok]] = mine["text"].fillna("").astype(str).to_numpy()[ok]
    return Censored(mask, side, limit, text)


# ---------------------------------------------------------------- prepare
def _numbers(frame: pd.DataFrame, col: str) -> NDArray[np.float64]:
    series = frame[col]
    if pd.api.types.is_bool_dtype(series.dtype):
        return np.asarray(series.astype(float).to_numpy(), dtype=np.float64)
    got = pd.to_numeric(series, errors="coerce")
    bad = got.isna() & series.notna()
    if bad.any():
        raise PlanError(f"column {col!r} is used as numbers but holds text such as {series[bad].iloc[0]!r}")
    return np.asarray(got.to_numpy(dtype=float, na_value=np.nan), dtype=np.float64)


def _codes(series: pd.Series) -> tuple[NDArray[np.intp], NDArray[np.generic]]:
    values = series.astype(object).where(series.notna(), None)
    try:
        codes, labels = pd.factorize(values, sort=True, use_na_sentinel=True)
    except TypeError:  # mixed types cannot be sorted
        codes, labels = pd.factorize(values, sort=False, use_na_sentinel=True)
    return np.asarray(codes, dtype=np.intp), np.asarray(labels, dtype=object)


def _read_columns(
    inp: _Input, used: list[str], kinds: Mapping[str, str], censored: str, hide: NDArray[np.bool_] | None
) -> Columns:
    out = Columns({}, {}, {}, {})
    position = {name: j for j, name in enumerate(inp.names)}
    used = list(dict.fromkeys(used))
    numbers = [c for c in used if kinds[c] == "number"]
    block = _number_block(inp.frame, numbers)  # a new array: written in place below
    marked = _state_masks(inp, numbers, ("censored",))["censored"]
    for j in np.flatnonzero(marked.any(axis=0)).tolist():
        cen = out.censored[numbers[j]] = _censored(inp, numbers[j], marked[:, j])
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


def _number_block(frame: pd.DataFrame, columns: list[str]) -> NDArray[np.float64]:
    """Float array (n_rows, len(columns)); numeric dtypes read in one go, others checked."""
    dtypes = dict(zip(frame.columns.tolist(), frame.dtypes.tolist(), strict=True))
    if columns == list(dtypes) and set(dtypes.values()) <= {np.dtype(np.float64)}:
        return frame.to_numpy(dtype=np.float64, na_value=np.nan, copy=True)  # the common case: one copy
    out = np.empty((len(frame), len(columns)))
    plain = [j for j, c in enumerate(columns) if _plain_number(dtypes[c])]
    if plain:
        out[:, plain] = frame[[columns[j] for j in plain]].to_numpy(dtype=float, na_value=np.nan)
    for j in sorted(set(range(len(columns))) - set(plain)):
        out[:, j] = _numbers(frame, columns[j])
    return out


def _groups(inp: _Input, plan: FillPlan, hide: NDArray[np.bool_] | None) -> tuple[Any, NDArray[np.generic]]:
    if plan.group_column is None:
        return None, np.empty(0, dtype=object)
    codes, labels = _codes(inp.frame[plan.group_column])
    if hide is not None:
        codes = np.where(hide[:, inp.names.index(plan.group_column)], -1, codes)
    return codes, labels


def prepare(data: Any, plan: FillPlan, *, hide: NDArray[np.bool_] | None = None) -> PreparedTable:
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
    return _prepare(_unpack(data), plan, hide=hide)[0]


def _prepare(
    inp: _Input,
    plan: FillPlan,
    *,
    hide: NDArray[np.bool_] | None = None,
    scale: bool = True,
    cancel: CancelFlag | None = None,
) -> tuple[PreparedTable, dict[str, Censored]]:
    n = len(inp.frame)
    if hide is not None:
        hide = np.asarray(hide, dtype=bool)
        if hide.shape != inp.frame.shape:
            raise PlanError(f"hide mask has shape {hide.shape}; the table has shape {inp.frame.shape}")
    names = list(inp.names)
    plan.check_columns(names)
    kinds_all = _kinds(inp, plan)
    sim = _similarity(names, plan, kinds_all)
    for col in (*sim, *(plan.fill_columns or ())):
        if kinds_all[col] == "date":
            raise PlanError(f"column {col!r} holds dates; it cannot be a similarity or fill column")
        if kinds_all[col] not in USABLE_KINDS:  # named explicitly: identifiers as categories
            kinds_all[col] = "category" if kinds_all[col] == "identifier" else "number"
    cols = _read_columns(inp, [*sim, *(plan.fill_columns or ())], kinds_all, plan.censored, hide)
    if plan.fill_columns is None:
        gappy = cols.gap_columns()
        fill = tuple(c for c in sim if c != plan.group_column and c in gappy)
    else:
        fill = plan.fill_columns
    resolved = plan.replace(
        similarity_columns=sim,
        fill_columns=fill,
        carried_columns=_carried(names, plan, kinds_all, {*sim, *fill}),
    )
    kinds = {c: ("number" if kinds_all[c] == "number" else "category") for c in (*sim, *fill)}
    raise_if_cancelled(cancel)  # each step takes about a second on a sheet of ten million cells
    features, warnings = scaled_features(cols, resolved, kinds, scale)
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
    finite = np.isfinite(cols.block)
    for col in fill:
        if kinds[col] == "number":
            values[col] = cols.numbers[col]
            observed[col] = finite[:, cols.where[col]]
            cen = cols.censored.get(col)
            if cen is not None:
                unknown_limit[col] = cen.mask & ~np.isfinite(cen.limit)
                measured = values[col][observed[col] & ~cen.mask]  # not the stand-ins for limits
                caps = _censored_caps(cen, unknown_limit[col], measured, resolved.censored)
                if caps is not None:
                    cap_upper[col], cap_lower[col] = caps
        else:
            values[col] = cols.codes[col]
            observed[col] = cols.codes[col] >= 0
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
    ), cols.censored


def _censored_caps(
    cen: Any, unknown: NDArray[np.bool_], measured: NDArray[Any], mode: str
) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """Upper and lower caps for censored cells filled by kNN, or None when none is.

    With ``fill_capped`` every censored cell is capped at its limit. A cell whose limit
    is unknown ("<LOD" with no number) is filled by kNN in every mode; it is still below
    every measured value of its column (each passed the same limit), so the smallest
    measured value caps it (the largest, for an above-range entry).
    """
    capping = cen.mask & ((mode == "fill_capped") | unknown)
    if not capping.any():
        return None
    below = cen.side != ">"
    limit = cen.limit
    if unknown.any() and measured.size:
        limit = np.where(unknown, np.where(below, measured.min(), measured.max()), limit)
    return np.where(capping & below, limit, np.nan), np.where(capping & ~below, limit, np.nan)


# ---------------------------------------------------------------- impute
def impute(
    data: Any, plan: FillPlan, progress: Progress | None = None, cancel: CancelFlag | None = None
) -> FillResult:
    """Fill the gaps of ``data`` by k-nearest-neighbour imputation.

    Parameters
    ----------
    data : DataFrame or sheet-like
        A DataFrame of shape (n_rows, n_columns) with NaN gaps, or an object with
        ``frame``, ``states`` and ``cell_notes`` (a read sheet, whose censored cells
        are handled as the plan says). Never modified.
    plan : FillPlan
        The settings; the resolved plan is returned in ``FillResult.plan``.
    progress : callable(done, total), optional
        Called once per chunk of the neighbour search, and once more (``done ==
        total``) when the values and the log are ready.
    cancel : Event-like or callable, optional
        Checked while preparing, once per chunk of the search and while building the
        log; raises :class:`~imputer_app.errors.Cancelled` and returns nothing.

    Returns
    -------
    FillResult

    Raises
    ------
    PlanError
        The plan does not fit the data (unknown column, text used as numbers, ...).

    Examples
    --------
    >>> frame = pd.DataFrame({"a": [1.0, 2.0, 3.0, None], "b": [1.0, 2.0, 3.0, 3.1]})
    >>> impute(frame, FillPlan(k=1, scaling="none")).frame["a"].tolist()
    [1.0, 2.0, 3.0, 3.0]
    """
    raise_if_cancelled(cancel)
    inp = _unpack(data)
    table, censored = _prepare(inp, plan, cancel=cancel)
    # the search's steps, and one more for the values and the log (up to 40 % of the time on a
    # wide sheet), so that the bar is not full while the log is built
    steps = 0

    def searching(done: int, total: int) -> None:
        nonlocal steps
        steps = total
        report(progress, done, total + 1)

    # one flat search over every fill column: values and log rows are worked out for all at once
    found, cell_col = search_cells(table, kmax=table.plan.k, progress=searching, cancel=cancel)
    stack = Stack.of_cells(table.fill_columns, found, cell_col)
    threshold = weak_threshold([stack.donors])
    records = Records(inp.names)
    fill_records(table, stack, threshold, records)
    for col, cen in censored.items():
        substitution_records(col, cen, table.plan.censored, records)
        if col not in table.fill_columns:  # a censored entry with no number and no fill stays empty
            left = np.flatnonzero(cen.mask & np.isnan(cen.substitute(table.plan.censored)))
            why = f"censored entry with no number to stand for it; {col!r} is not a fill column"
            records.add_empty(left, col, [why] * len(left))
    raise_if_cancelled(cancel)
    result = _result(inp, table, censored, records, threshold, cancel)
    report(progress, steps + 1, steps + 1)
    return result


def _result(
    inp: _Input,
    table: PreparedTable,
    censored: Mapping[str, Censored],
    records: Records,
    threshold: float,
    cancel: CancelFlag | None = None,
) -> FillResult:
    frame = inp.frame
    labels = frame.index
    log = records.log_table(table.row_labels)
    raise_if_cancelled(cancel)  # the log's tuples take about half of this step
    filled = np.zeros(frame.shape, dtype=bool)
    filled[log.pos[log.filled], log.column[log.filled]] = True
    states = _state_masks(inp, list(inp.names), ("censored", "text_in_number"))
    flags = states["censored"]  # every censored cell, whatever its column's role
    unfilled = pd.DataFrame(
        {
            "row": labels[records.empty_field("pos")],
            "column": records.empty_field("column"),
            "reason": records.empty_field("reason"),
        },
        columns=list(UNFILLED_COLUMNS),
    )
    return FillResult(
        frame=_filled_frame(frame, table, log.pos, log.column, log.fields["value"]),
        filled=pd.DataFrame(filled, index=labels, columns=frame.columns, copy=False),
        censored=pd.DataFrame(flags, index=labels, columns=frame.columns, copy=False),
        log=_log_frame(inp, log, states),
        unfilled=unfilled.reset_index(drop=True),
        plan=table.plan,
        warnings=table.warnings,
        k_weak_threshold=threshold,
    )


def _filled_frame(
    frame: pd.DataFrame,
    table: PreparedTable,
    pos: NDArray[np.intp],
    colpos: NDArray[np.intp],
    values: NDArray[Any],
) -> pd.DataFrame:
    """A copy of ``frame`` with ``values`` written at (pos, colpos)."""
    written = np.flatnonzero(np.bincount(colpos, minlength=frame.shape[1]))
    dtypes = frame.dtypes.tolist()
    numbers = [table.kinds.get(table.columns[j], "number") == "number" for j in written.tolist()]
    if set(dtypes) <= {np.dtype(np.float64)} and all(numbers):  # the common case: one copy, one write
        block = frame.to_numpy(dtype=np.float64, copy=True)
        block[pos, colpos] = values.astype(np.float64)
        out = pd.DataFrame(block, index=frame.index, columns=frame.columns, copy=False)
        out.attrs = copy.deepcopy(frame.attrs)
        return out
    out = frame.copy(deep=True)
    floats = [dtypes[j] == np.float64 for j in written.tolist()]
    fast = np.array(floats, dtype=bool) & np.array(numbers, dtype=bool)
    if fast.any():  # float columns: one write into the frame's float block
        cols = written[fast]
        block = frame.iloc[:, cols].to_numpy(dtype=np.float64, copy=True)
        sel = np.isin(colpos, cols)
        block[pos[sel], np.searchsorted(cols, colpos[sel])] = values[sel].astype(np.float64)
        out.iloc[:, cols] = block
    for j in written[~fast]:
        col = table.columns[j]
        sel = colpos == j
        out[col] = _write(frame[col], pos[sel], values[sel], table.kinds.get(col, "number"))
    return out


def _log_frame(inp: _Input, log: LogTable, states: Mapping[str, NDArray[np.bool_]]) -> pd.DataFrame:
    """The fill log as a DataFrame (already ordered by row and then by column).

    ``states`` holds the cells marked ``censored`` and ``text_in_number``; others were gaps.
    """
    pos, colpos = log.pos, log.column
    state = repeated("missing", len(pos))
    for word in ("text_in_number", "censored"):
        state[states[word][pos, colpos]] = word
    columns: dict[str, Any] = {"row": inp.frame.index.to_numpy()[pos], "original_state": state, **log.fields}
    return pd.DataFrame(columns, columns=list(LOG_COLUMNS))


def _write(original: pd.Series, pos: NDArray[np.intp], values: NDArray[np.object_], kind: str) -> pd.Series:
    """``original`` with ``values`` written at row positions ``pos``, dtype kept if it can hold them."""
    if kind == "number" and (pd.api.types.is_numeric_dtype(original.dtype) or original.isna().all()):
        new: NDArray[Any] = (
            pd.to_numeric(original, errors="coerce").to_numpy(dtype=float, na_value=np.nan).copy()
        )
        new[pos] = values.astype(float)
    else:
        new = original.astype(object).to_numpy(copy=True)
        new[pos] = values
    series = pd.Series(new, index=original.index, name=original.name)
    has_na = bool(series.isna().any())
    dtype = original.dtype
    if (
        has_na
        and (pd.api.types.is_bool_dtype(dtype) or pd.api.types.is_integer_dtype(dtype))
        and isinstance(dtype, np.dtype)
    ):
        return series if kind == "number" else series.astype(object)
    if pd.api.types.is_integer_dtype(dtype) and not np.all(
        np.equal(np.mod(series.dropna().astype(float), 1), 0)
    ):
        return series
    try:
        return series.astype(dtype)
    except (TypeError, ValueError):
        return series
