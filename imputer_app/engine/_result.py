"""The :class:`FillResult`: the filled frame, its flags, the fill log and the cells left empty.

:func:`build_result` turns the stored records (:mod:`~imputer_app.engine._log`) back
into DataFrames with the input's labels, keeping each column's dtype where the filled
values allow.
"""

from __future__ import annotations

import copy
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from imputer_app.engine._conformal import Calibration
from imputer_app.engine._input import Input, state_masks
from imputer_app.engine._log import LogTable, Records, repeated
from imputer_app.engine._table import PreparedTable
from imputer_app.plan import FillPlan
from imputer_app.plan_rounding import outward
from imputer_app.words import LOG_COLUMNS, UNFILLED_COLUMNS
from imputer_app.work import CancelFlag, raise_if_cancelled


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
        The fill log: one row per value written, columns :data:`imputer_app.words.LOG_COLUMNS`.
    unfilled : DataFrame
        Cells left empty, columns :data:`imputer_app.words.UNFILLED_COLUMNS`.
    plan : FillPlan
        The plan actually used (similarity and fill columns resolved).
    warnings : tuple of str
        Plain-words remarks (constant columns left out, ...).
    k_weak_threshold : float
        Distance above which a cell's support is "weak" by the distance rule (NaN when
        nothing was filled).
    calibration : Calibration or None
        How the intervals were calibrated (None when ``plan.interval_level`` is None).
    decimals : dict of str to int
        Per numeric column whose written numbers were rounded (fills, and the stand-ins
        of censored entries), its decimals (the plan's ``decimals``, else the sheet's
        measured precision under ``plan.rounding``); interval bounds are rounded outward
        to the same decimals, and a stand-in keeps at least two significant digits
        (:func:`~imputer_app.plan_rounding.round_stand_ins`).
    search : str
        Which neighbour search found the donors (all pairs in blocks, or k-d trees per
        gap pattern for long sheets with few similarity columns); both are exact.
    coverage : DataFrame or None
        Nominal against observed coverage of the intervals (see :attr:`coverage`).

    Notes
    -----
    ``impute(X, plan)`` with a 2-D ndarray ``X`` gives ``frame`` with columns 0..n-1
    (like ``pd.DataFrame(X)``) and :attr:`array`, the filled array itself (what
    scikit-learn's ``KNNImputer().fit_transform(X)`` returns).
    """

    frame: pd.DataFrame
    filled: pd.DataFrame
    censored: pd.DataFrame
    log: pd.DataFrame
    unfilled: pd.DataFrame
    plan: FillPlan
    warnings: tuple[str, ...]
    k_weak_threshold: float
    calibration: Calibration | None = None
    decimals: Mapping[str, int] = field(default_factory=dict)
    search: str = ""

    @property
    def coverage(self) -> pd.DataFrame | None:
        """Nominal against observed coverage of the intervals, measured on hidden known cells.

        Columns ``column``, ``level``, ``observed``, ``n_cells``: per fill column and
        nominal level, the share of its hidden cells inside an interval whose quantile
        was computed from *other* hidden cells (cross-fitting), and how many cells
        were scored; rows with column ``"(all)"`` pool every fill column. None when
        intervals are off or too few cells were hidden for any level.
        """
        checks = None if self.calibration is None else self.calibration.checks
        if checks is None:
            return None
        scored = checks.scored.sum(axis=0)
        names = ["(all)"] * len(checks.levels) + [c for c in checks.columns for _ in checks.levels]
        n_cells = np.concatenate([scored, checks.scored.ravel()])
        inside = np.concatenate([checks.inside.sum(axis=0), checks.inside.ravel()])
        table = pd.DataFrame(
            {
                "column": names,
                "level": np.tile(np.asarray(checks.levels, dtype=np.float64), len(checks.columns) + 1),
                "observed": np.where(n_cells > 0, inside / np.maximum(n_cells, 1), np.nan),
                "n_cells": n_cells.astype(np.int64),
            }
        )
        table = table[table["n_cells"] > 0].reset_index(drop=True)
        return table if len(table) else None

    @property
    def array(self) -> NDArray[Any]:
        """The filled values as a 2-D ndarray (``frame.to_numpy()``: float when every column is a number)."""
        return self.frame.to_numpy()


def build_result(
    inp: Input,
    table: PreparedTable,
    records: Records,
    threshold: float,
    cancel: CancelFlag | None = None,
) -> FillResult:
    """The :class:`FillResult` of ``records``: values written into a copy of the input, flags and tables."""
    frame = inp.frame
    labels = frame.index
    log = records.log_table(table.row_labels)
    _round_intervals(log, table)
    raise_if_cancelled(cancel)  # the log's tuples take about half of this step
    filled = np.zeros(frame.shape, dtype=bool)
    filled[log.pos[log.filled], log.column[log.filled]] = True
    states = state_masks(inp, list(inp.names), ("censored", "text_in_number", "formula_error"))
    flags = states["censored"]  # every censored cell, whatever its column's role
    unfilled = pd.DataFrame(
        {
            "row": labels[records.empty_field("pos")],
            "column": records.empty_field("column"),
            "reason": records.empty_field("reason"),
        },
        columns=list(UNFILLED_COLUMNS),
    )
    out = _filled_frame(frame, table, log.pos, log.column, log.fields["value"])
    columns = frame.columns if inp.labels is None else inp.labels
    if inp.labels is not None:  # the input's own labels back (the engine named them as text)
        out.columns = inp.labels
    return FillResult(
        frame=out,
        filled=pd.DataFrame(filled, index=labels, columns=columns, copy=False),
        censored=pd.DataFrame(flags, index=labels, columns=columns, copy=False),
        log=_log_frame(inp, log, states),
        unfilled=unfilled.reset_index(drop=True),
        plan=table.plan,
        warnings=table.warnings,
        k_weak_threshold=threshold,
        decimals=dict(table.decimals),
    )


def _round_intervals(log: LogTable, table: PreparedTable) -> None:
    """Round each interval outward to its column's decimals, as its filled value was rounded."""
    if not table.decimals or "lower" not in log.fields or "upper" not in log.fields:
        return
    per_column = np.array([table.decimals.get(c, -1) for c in table.columns], dtype=np.intp)
    lower, upper = (np.asarray(log.fields[side], dtype=np.float64) for side in ("lower", "upper"))
    log.fields["lower"], log.fields["upper"] = outward(lower, upper, per_column[log.column])


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


def _log_frame(inp: Input, log: LogTable, states: Mapping[str, NDArray[np.bool_]]) -> pd.DataFrame:
    """The fill log as a DataFrame (already ordered by row and then by column).

    ``states`` holds the cells marked ``censored``, ``text_in_number`` and
    ``formula_error`` (filled only when the plan says); others were gaps.
    """
    pos, colpos = log.pos, log.column
    state = repeated("missing", len(pos))
    for word in ("text_in_number", "censored", "formula_error"):
        state[states[word][pos, colpos]] = word
    rows = inp.frame.index.to_numpy()[pos]
    columns: dict[str, Any] = {"row": rows, "original_state": state, **log.fields}
    columns["original_text"] = _original_texts(inp, rows, np.asarray(inp.names, dtype=object)[colpos])
    # the arrays were made for this log alone: no copy of them (about half the time)
    return pd.DataFrame(columns, columns=list(LOG_COLUMNS), copy=False)


def _original_texts(inp: Input, rows: NDArray[Any], names: NDArray[np.object_]) -> NDArray[np.object_]:
    """The text each logged cell held in the sheet ("n.d.", "NA", "<0.05"), "" for a blank cell."""
    out = repeated("", len(rows))
    notes = inp.notes
    if (
        notes is None
        or not len(notes)
        or not len(rows)
        or not {"row", "column", "text"} <= set(notes.columns)
    ):
        return out
    texts = pd.Series(notes["text"].fillna("").astype(str).to_numpy(), index=[notes["row"], notes["column"]])
    texts = texts[~texts.index.duplicated()]
    at = texts.index.get_indexer(pd.MultiIndex.from_arrays([rows, names]))
    found = at >= 0
    out[found] = texts.to_numpy()[at[found]]
    return out


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
