"""The arrays behind the data table, made once per sheet and once per fill, off the window's thread.

Turning a sheet's columns into numpy arrays, its cell states into codes and a fill's
log into weak-fill codes takes time in proportion to the rows (about a second for a
1,000,000-row sheet). :func:`sheet_arrays` and :func:`layer_arrays` do that work where
it is called: the window calls them in the worker that reads the sheet or computes the
fill, so that the table model only takes ready arrays on the window's thread.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app.gui.gap_map import MarkedCells, marked_cells
from imputer_app.gui.markers import FILL_WEAK, OBSERVED, STATE_CODES

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet

#: Most decimals a column's measured numbers are shown with.
MAX_DECIMALS = 6


@dataclass(frozen=True)
class SheetArrays:
    """A sheet as the table shows it: one array per column, cell codes, notes and marks.

    Attributes
    ----------
    names, kinds, units : list of str
        Column names, kinds ("number", "category", ...) and units, in table order.
    labels : ndarray
        The sheet's row labels (file row numbers).
    values : list of ndarray
        Each column as read (float for numbers, objects else).
    decimals : list of int
        Decimals of each column's measured numbers (0 for text columns).
    codes : ndarray of int8, shape (n_rows, n_columns)
        Cell codes (see :mod:`imputer_app.gui.markers`).
    notes : dict
        ``(row, column) -> original text`` of cells read as a gap or a limit.
    marked : MarkedCells
        The cells the gap map marks (no fill layer).
    gap_cells : ndarray of intp
        Flat positions (``row * n_columns + column``, ascending) of the gaps, unreadable
        and censored cells: where "next gap" goes.
    code_counts : ndarray of int64
        How many cells have each code.
    """

    names: list[str]
    kinds: list[str]
    units: list[str]
    labels: np.ndarray
    values: list[np.ndarray]
    decimals: list[int]
    codes: np.ndarray
    notes: dict[tuple[int, int], str]
    marked: MarkedCells
    gap_cells: np.ndarray
    code_counts: np.ndarray


@dataclass(frozen=True)
class LayerArrays:
    """A fill as the table draws it over its sheet.

    Attributes
    ----------
    values : list of ndarray
        Each column of the filled frame.
    fill : ndarray of int8, shape (n_rows, n_columns)
        0 not filled, 1 filled, 2 filled with weak support.
    marked : MarkedCells
        The cells the gap map marks, drawn as a preview (see :meth:`MarkedCells.as_kind`).
    log_cells : ndarray of int64
        For each fill-log entry, its cell as ``row * n_columns + column`` (-1: not in the table).
    weak_cells : ndarray of intp
        Flat positions (ascending) of the cells filled with weak support.
    n_filled : int
        Cells the fill wrote.
    """

    values: list[np.ndarray]
    fill: np.ndarray
    marked: MarkedCells
    log_cells: np.ndarray
    weak_cells: np.ndarray
    n_filled: int


def sheet_arrays(sheet: Sheet) -> SheetArrays:
    """The table's arrays of ``sheet`` (O(rows); run it off the window's thread for a long sheet)."""
    frame = sheet.frame
    names = [str(c) for c in frame.columns]
    info = {c.name: c for c in sheet.columns}
    kinds = [info[n].kind if n in info else _kind_of(frame[n]) for n in names]
    values = [_column_array(frame[n], kind) for n, kind in zip(names, kinds, strict=True)]
    codes = state_codes(sheet.states, names)
    marked = marked_cells(codes, np.zeros_like(codes), "")
    return SheetArrays(
        names=names,
        kinds=kinds,
        units=[(info[n].unit or "") if n in info else "" for n in names],
        labels=frame.index.to_numpy(),
        values=values,
        decimals=[_decimals_of(v) if v.dtype.kind == "f" else 0 for v in values],
        codes=codes,
        notes=_note_texts(sheet, frame.index, names),
        marked=marked,
        # every cell the map marks without a fill is a gap, unreadable or censored cell
        gap_cells=marked.rows * len(names) + marked.columns,
        code_counts=np.bincount(codes.ravel().astype(np.intp), minlength=len(STATE_CODES) + 1),
    )


def layer_arrays(result: FillResult, base: SheetArrays) -> LayerArrays:
    """The arrays of a fill over the sheet of ``base`` (O(rows); off the window's thread)."""
    frame = result.frame
    fill = _fill_codes(result, base.names)
    return LayerArrays(
        values=[_column_array(frame[n], k) for n, k in zip(base.names, base.kinds, strict=True)],
        fill=fill,
        marked=marked_cells(base.codes, fill, "preview"),
        log_cells=_log_cells(result, base),
        weak_cells=np.flatnonzero(fill == FILL_WEAK),
        n_filled=int(np.count_nonzero(fill)),
    )


def _log_cells(result: FillResult, base: SheetArrays) -> np.ndarray:
    log = result.log
    if log is None or len(log) == 0:
        return np.zeros(0, dtype=np.int64)
    rows = label_positions(pd.Index(base.labels), log["row"]).astype(np.int64)
    cols = pd.Index(base.names).get_indexer(pd.Index(log["column"])).astype(np.int64)
    return np.where((rows >= 0) & (cols >= 0), rows * len(base.names) + cols, -1)


# ------------------------------------------------------------------- helpers
def state_codes(states: pd.DataFrame, names: list[str]) -> np.ndarray:
    """Return int8 cell codes of shape (n_rows, n_columns) from a sheet's states."""
    codes = np.zeros((len(states), len(names)), dtype=np.int8)
    for j, name in enumerate(names):
        cat = pd.Categorical(states[name]) if name in states else pd.Categorical([])
        if len(cat) == 0:
            continue
        lut = np.array(
            [STATE_CODES.get(str(c), OBSERVED) for c in cat.categories] + [OBSERVED], dtype=np.int8
        )
        codes[:, j] = lut[cat.codes]  # code -1 (NaN state) picks the trailing OBSERVED
    return codes


def _fill_codes(result: FillResult, names: list[str]) -> np.ndarray:
    filled = result.filled.reindex(columns=names, fill_value=False).to_numpy(dtype=bool)
    fill = filled.astype(np.int8)
    log = result.log
    if log is not None and len(log) and "support" in log:
        weak = log[log["support"] == "weak"]
        rows = label_positions(result.filled.index, weak["row"])
        cols = pd.Index(names).get_indexer(pd.Index(weak["column"]))
        ok = (rows >= 0) & (cols >= 0)
        fill[rows[ok], cols[ok]] = np.where(filled[rows[ok], cols[ok]], FILL_WEAK, fill[rows[ok], cols[ok]])
    return fill


def label_positions(index: pd.Index, labels: Any) -> np.ndarray:
    """Positions in ``index`` of row ``labels`` (-1 where a label is not there)."""
    positions = index.get_indexer(pd.Index(list(labels)))
    return np.asarray(positions, dtype=np.intp)


def _note_texts(sheet: Sheet, index: pd.Index, names: list[str]) -> dict[tuple[int, int], str]:
    notes = getattr(sheet, "cell_notes", None)
    if notes is None or len(notes) == 0:
        return {}
    rows = label_positions(index, notes["row"])
    cols = pd.Index(names).get_indexer(pd.Index(notes["column"]))
    texts = notes["text"].astype(object).to_numpy()
    return {
        (int(r), int(c)): str(t)
        for r, c, t in zip(rows, cols, texts, strict=True)
        if r >= 0 and c >= 0 and isinstance(t, str) and t
    }


def _kind_of(series: pd.Series) -> str:
    return "number" if pd.api.types.is_numeric_dtype(series) else "category"


def _column_array(series: pd.Series, kind: str) -> np.ndarray:
    """One column as a numpy array: float for numbers, formatted text for dates, objects else."""
    if pd.api.types.is_bool_dtype(series):
        return series.astype(object).to_numpy()
    if pd.api.types.is_numeric_dtype(series):
        return series.to_numpy(dtype=float, na_value=np.nan)
    if pd.api.types.is_datetime64_any_dtype(series):
        stamps = series.to_numpy(dtype="datetime64[ns]")
        midnight = bool(np.all(np.isnat(stamps) | (stamps == stamps.astype("datetime64[D]"))))
        text = np.datetime_as_string(stamps, unit="D" if midnight else "m")
        return np.where(np.isnat(stamps), "", text).astype(object)
    return series.astype(object).to_numpy()


def _decimals_of(values: np.ndarray) -> int:
    """Most decimals used by the column's measured numbers (checked on a sample, at most 6)."""
    sample = values[np.isfinite(values)][:2000]
    for d in range(MAX_DECIMALS + 1):
        scaled = sample * 10.0**d
        if np.all(np.abs(scaled - np.round(scaled)) < 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return d
    return MAX_DECIMALS
