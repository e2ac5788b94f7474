"""What an export shows, worked out once for the xlsx and the csv writer.

:func:`build_content` checks that a :class:`FillResult` belongs to its sheet and
gathers, per cell, its mark (plain, filled, censored) and any original text to show
("<0.05", a word in a number column); per log row, display text (tuples joined with
``"; "``) and the words of a cell comment.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app.errors import ExportError
from imputer_app.words import EXPORT_LOG_COLUMNS, SUBSTITUTION_PHRASES, UNFILLED_COLUMNS

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets._model import Sheet

#: Cell marks (codes into a writer's styles).
PLAIN, FILLED, CENSORED = 0, 1, 2

#: Donors listed in a cell comment before "... more" (the fill log lists all).
COMMENT_DONORS = 10


@dataclass(frozen=True)
class Layout:
    """Where header, units and data rows go in a worksheet (1-based row numbers).

    ``aligned`` is True when every data row keeps its row number from the input
    file, so that a fill log's row label points at the same row in both files.
    """

    header_row: int
    units_row: int | None
    data_rows: np.ndarray
    aligned: bool


@dataclass
class ExportContent:
    """Everything the writers need, taken from a sheet and its fill result.

    Attributes
    ----------
    frame : DataFrame of shape (n_rows, n_columns)
        The filled table (``FillResult.frame``).
    names, units, kinds : list
        Per column: header text, unit (or None) and kind.
    marks : ndarray of int8 of shape (n_rows, n_columns)
        :data:`PLAIN`, :data:`FILLED` or :data:`CENSORED` (censored wins).
    texts : dict of int to dict of int to str
        Per column position, per row position: original text written in place of a
        blank (a censored entry or a word in a number column that was not filled), or
        in place of the trimmed text the fill used (a text cell not filled whose file
        text has spaces around it: ``'  lead'`` leaves as ``'  lead'``).
    originals : dict of (int, int) to str
        Original text of every censored or text-in-number cell, for comments.
    log : DataFrame
        ``FillResult.log`` as given.
    log_cells : ndarray of int of shape (n_log, 2)
        Row and column position of each log row (-1 when not found).
    log_table : DataFrame
        The fill log for export, columns :data:`~imputer_app.words.EXPORT_LOG_COLUMNS`.
    unfilled : DataFrame
        Cells left empty, columns :data:`~imputer_app.words.UNFILLED_COLUMNS`.
    layout : Layout
        Row placement for a worksheet.
    sample_ids : Series or None
        Row label to the lab's sample ID (:func:`sample_ids`), None without one.
    decimals : list of int or None
        Per column, the decimals its filled numbers were rounded to
        (``FillResult.decimals``); None where they were left as computed.
    """

    frame: pd.DataFrame
    names: list[str]
    units: list[str | None]
    kinds: list[str]
    marks: np.ndarray
    texts: dict[int, dict[int, str]]
    originals: dict[tuple[int, int], str]
    log: pd.DataFrame
    log_cells: np.ndarray
    log_table: pd.DataFrame
    unfilled: pd.DataFrame
    layout: Layout
    sample_ids: pd.Series | None = None
    decimals: list[int | None] | None = None

    @property
    def has_units(self) -> bool:
        """True when any column has a unit."""
        return any(self.units)

    @property
    def n_marked(self) -> int:
        """Number of cells with a mark (each gets a comment when comments are written)."""
        return int(np.count_nonzero(self.marks))


def build_content(sheet: Sheet | None, result: FillResult) -> ExportContent:
    """Gather the export's content from ``sheet`` (may be None) and ``result``.

    Parameters
    ----------
    sheet : Sheet or None
        The sheet that was filled; None for a DataFrame given directly.
    result : FillResult
        The engine's result for that sheet.

    Raises
    ------
    ExportError
        When the result's table does not match the sheet or its own masks.
    """
    frame = result.frame
    _check_shapes(sheet, result)
    names = [str(c) for c in frame.columns]
    given = sheet.units if sheet is not None else {}
    units: list[str | None] = [given.get(n) for n in names]
    detected = sheet.kinds if sheet is not None else {}
    kinds = [detected.get(n) or _kind_of(frame.iloc[:, j]) for j, n in enumerate(names)]
    marks = np.zeros(frame.shape, dtype=np.int8)
    marks[np.asarray(result.filled, dtype=bool)] = FILLED
    marks[np.asarray(result.censored, dtype=bool)] = CENSORED
    originals = _original_texts(sheet, frame)
    texts: dict[int, dict[int, str]] = {}
    if originals:
        blank = frame.isna().to_numpy()
        for (i, j), text in originals.items():
            if blank[i, j]:
                texts.setdefault(j, {})[i] = text
    for j, untrimmed in _untrimmed_texts(sheet, frame, marks).items():
        texts.setdefault(j, {}).update(untrimmed)
    log = result.log
    ids = sample_ids(sheet, result)
    unfilled = pd.DataFrame({c: result.unfilled[c] for c in UNFILLED_COLUMNS})
    if ids is not None:
        unfilled["sample_id"] = _ids_of(ids, unfilled["row"])
    return ExportContent(
        frame=frame,
        names=names,
        units=units,
        kinds=kinds,
        marks=marks,
        texts=texts,
        originals=originals,
        log=log,
        log_cells=_positions(frame, log),
        log_table=log_table(log, ids),
        unfilled=unfilled,
        layout=_layout(sheet, frame, any(units)),
        sample_ids=ids,
        decimals=[dict(getattr(result, "decimals", {})).get(n) for n in names],
    )


def _check_shapes(sheet: Sheet | None, result: FillResult) -> None:
    frame = result.frame
    for name in ("filled", "censored"):
        if getattr(result, name).shape != frame.shape:
            raise ExportError(
                f"the fill result's {name} table does not match its filled table; nothing was written"
            )
    if sheet is None:
        return
    if list(sheet.frame.columns) != list(frame.columns) or not sheet.frame.index.equals(frame.index):
        raise ExportError(
            f"the fill result does not belong to sheet {sheet.source.path.name} (rows or columns differ); "
            "fill the sheet again before exporting"
        )


def _kind_of(series: pd.Series) -> str:
    if pd.api.types.is_bool_dtype(series.dtype):
        return "category"
    if pd.api.types.is_numeric_dtype(series.dtype):
        return "number"
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return "date"
    return "category"


def _original_texts(sheet: Sheet | None, frame: pd.DataFrame) -> dict[tuple[int, int], str]:
    if sheet is None or sheet.cell_notes is None or len(sheet.cell_notes) == 0:
        return {}
    notes = sheet.cell_notes
    keep = notes["state"].isin(["censored", "text_in_number"]).to_numpy()
    notes = notes[keep]
    if not frame.index.is_unique:
        return {}
    rows = frame.index.get_indexer(pd.Index(notes["row"]))
    cols = frame.columns.get_indexer(pd.Index(notes["column"]))
    return {
        (int(i), int(j)): str(text)
        for i, j, text in zip(rows, cols, notes["text"], strict=True)
        if i >= 0 and j >= 0 and isinstance(text, str)
    }


def _untrimmed_texts(
    sheet: Sheet | None, frame: pd.DataFrame, marks: np.ndarray
) -> dict[int, dict[int, str]]:
    """Text cells not filled whose text in the file differs from the (trimmed) text in ``frame``.

    Category matching uses the trimmed text; the export gives each such cell back as
    the file had it, spaces, tabs and non-breaking spaces included.
    """
    raw = getattr(sheet, "raw_text", None)
    if raw is None or raw.shape != frame.shape:
        return {}
    found: dict[int, dict[int, str]] = {}
    for j in [j for j, dtype in enumerate(frame.dtypes) if pd.api.types.is_object_dtype(dtype)]:
        values = frame.iloc[:, j].to_numpy(dtype=object)
        originals = raw[:, j]
        rows = np.flatnonzero((marks[:, j] == PLAIN) & pd.notna(values) & (values != originals))
        texts = {
            i: text
            for i, text, value in zip(
                rows.tolist(), originals[rows].tolist(), values[rows].tolist(), strict=True
            )
            if type(text) is str and type(value) is str
        }
        if texts:
            found[j] = texts
    return found


def _positions(frame: pd.DataFrame, log: pd.DataFrame) -> np.ndarray:
    if len(log) == 0 or not frame.index.is_unique:
        return np.full((len(log), 2), -1, dtype=np.int64)
    rows = frame.index.get_indexer(pd.Index(log["row"]))
    cols = frame.columns.get_indexer(pd.Index(log["column"]))
    return np.column_stack([rows, cols]).astype(np.int64)


def _is_row_numbers(index: pd.Index) -> bool:
    return (
        pd.api.types.is_integer_dtype(index.dtype)
        and index.is_unique
        and index.is_monotonic_increasing
        and len(index) > 0
        and int(index[0]) >= 1
    )


def _layout(sheet: Sheet | None, frame: pd.DataFrame, has_units: bool) -> Layout:
    if sheet is not None and _is_row_numbers(frame.index):
        header = int(sheet.source.header_row)
        first = int(frame.index[0])
        units = (sheet.source.units_row or header + 1) if has_units else None
        # header_row 0 means the file had no header row: there is no row above the data
        # to put the names in, so fall back to the compact layout below.
        if 1 <= header < first and (units is None or header < units < first):
            return Layout(header, units, frame.index.to_numpy(dtype=np.int64), True)
    units = 2 if has_units else None
    first_data = 3 if has_units else 2
    return Layout(1, units, np.arange(first_data, first_data + len(frame), dtype=np.int64), False)


# --------------------------------------------------------------------- log text
def value_text(value: Any) -> str:
    """Return a value as short text: numbers to 15 significant digits, None/NaN as ''."""
    if value is None:
        return ""
    if isinstance(value, float | np.floating):
        return "" if math.isnan(value) else f"{float(value):.15g}"
    return str(value)


def distance_text(value: Any) -> str:
    """Return a donor distance to 6 significant digits."""
    return format(float(value), ".6g")


def join_text(values: Iterable[Any] | None, fmt: Callable[[Any], str] = value_text) -> str:
    """Join a tuple of values with ``"; "`` (None gives '')."""
    if values is None or (isinstance(values, float) and math.isnan(values)):
        return ""
    return "; ".join(map(fmt, values))


def sample_ids(sheet: Sheet | None, result: FillResult) -> pd.Series | None:
    """The lab's name of every row (row label to text), or None when the sheet has none.

    The names come from the plan's ``id_column``, else the first carried identifier.
    """
    plan = result.plan
    name = getattr(plan, "id_column", None)
    if name is None and sheet is not None:
        carried = set(plan.carried_columns)
        name = next((c.name for c in sheet.columns if c.kind == "identifier" and c.name in carried), None)
    if name is None or name not in result.frame.columns:
        return None
    values = result.frame[name]
    return pd.Series([value_text(v) for v in values], index=values.index, dtype=object)


def _ids_of(ids: pd.Series, rows: Iterable[Any]) -> list[str]:
    """The sample ID of each row label ("" for a label the sheet does not have)."""
    at = ids.index.get_indexer(pd.Index(list(rows)))
    values = ids.to_numpy(dtype=object)
    return [values[i] if i >= 0 else "" for i in at.tolist()]


def log_table(log: pd.DataFrame, ids: pd.Series | None = None) -> pd.DataFrame:
    """Return ``FillResult.log`` as an export table (columns ``words.EXPORT_LOG_COLUMNS``).

    Tuples (donors, distances, donor values) become ``"; "``-joined text; the value
    keeps its type (number or text); ``spread`` stays a float (NaN when not applicable).
    ``ids`` (row label to sample ID) fills ``sample_id``; without it the column is empty.
    """
    n = len(log)
    if n == 0:
        return pd.DataFrame({c: pd.Series([], dtype=object) for c in EXPORT_LOG_COLUMNS})
    k = pd.to_numeric(log["k"], errors="coerce")
    return pd.DataFrame(
        {
            "row": log["row"].to_numpy(dtype=object),
            "column": [str(c) for c in log["column"]],
            "original_state": log["original_state"].astype(str).to_numpy(dtype=object),
            "method": log["method"].astype(str).to_numpy(dtype=object),
            "value": log["value"].to_numpy(dtype=object),
            "lower": _floats(log, "lower"),
            "upper": _floats(log, "upper"),
            "k": k.astype("Int64") if k.notna().all() else k,
            "donors": [join_text(t, str) for t in log["donors"]],
            "distances": [join_text(t, distance_text) for t in log["distances"]],
            "donor_values": [join_text(t) for t in log["donor_values"]],
            "spread": pd.to_numeric(log["spread"], errors="coerce").astype(float),
            "support": log["support"].fillna("").astype(str).to_numpy(dtype=object),
            "note": log["note"].fillna("").astype(str).to_numpy(dtype=object),
            # the cell's text in the sheet ("n.d.", "NA"); a log made by an older engine has none
            "original_text": (
                log["original_text"].fillna("").astype(str).to_numpy(dtype=object)
                if "original_text" in log.columns
                else np.full(n, "", dtype=object)
            ),
            "sample_id": _ids_of(ids, log["row"]) if ids is not None else np.full(n, "", dtype=object),
        },
        index=pd.RangeIndex(n),
    )


def _floats(log: pd.DataFrame, name: str) -> np.ndarray:
    """A float column of the log (NaN throughout when the log has none)."""
    if name not in log:
        return np.full(len(log), np.nan)
    return pd.to_numeric(log[name], errors="coerce").to_numpy(dtype=float)


# --------------------------------------------------------------------- comments
def cell_comments(content: ExportContent) -> dict[tuple[int, int], str]:
    """Return the comment text of every marked cell, keyed by (row, column) position.

    A logged cell's comment names its method, donors (row labels), distances, donor
    values, spread, k and support; a censored cell's also quotes its original entry.
    """
    comments: dict[tuple[int, int], str] = {}
    entries = content.log.to_dict(orient="records")
    for (i, j), entry in zip(content.log_cells.tolist(), entries, strict=True):
        if i >= 0 and j >= 0:
            number = content.kinds[j] == "number"
            comments[(i, j)] = _log_comment(entry, content.originals.get((i, j)), number, content.sample_ids)
    rows, cols = np.nonzero(content.marks == CENSORED)
    for i, j in zip(rows.tolist(), cols.tolist(), strict=True):
        if (i, j) not in comments:
            text = content.originals.get((i, j))
            censored = f'Censored entry "{text}"' if text else "Censored entry"
            comments[(i, j)] = f"{censored}; kept as it was (no substitute was written)."
    return comments


def _log_comment(
    entry: Mapping[Any, Any], original: str | None, number: bool, ids: pd.Series | None = None
) -> str:
    method = str(entry["method"])
    value = value_text(entry["value"])
    censored = f'Censored entry "{original}"' if original else "Censored entry"
    if method in SUBSTITUTION_PHRASES:
        return f"{censored}: written as {SUBSTITUTION_PHRASES[method]} ({value})."
    k = value_text(entry["k"])
    if method == "column_mean":
        lines = [f"Filled by Kinfill with the column mean ({value}): no donor was available."]
    elif method == "knn_capped":
        lines = [f"{censored}: filled by kNN from {k} donor(s), capped at its limit ({value})."]
    else:
        lines = [f"Filled by Kinfill: kNN from {k} donor(s) gives {value}."]
    interval = _interval_line(entry)
    if interval:
        lines.append(interval)
    lines += _donor_lines(entry, ids)
    spread = entry["spread"]
    if spread is not None and not (isinstance(spread, float) and math.isnan(spread)):
        label = "Spread (SD of donor values)" if number else "Spread (vote share of the chosen class)"
        lines.append(f"{label}: {value_text(spread)}")
    support, note = value_text(entry["support"]), value_text(entry["note"])
    if support:
        lines.append(f"Support: {support}")
    if note:
        lines.append(note)
    if original and entry["original_state"] == "text_in_number":
        lines.append(f'Original entry: "{original}"')
    return "\n".join(lines)


def _interval_line(entry: Mapping[Any, Any]) -> str:
    """``"Interval: 6.21-6.63"`` for a number with a calibrated interval, else ''."""
    lower, upper = entry.get("lower"), entry.get("upper")
    if not isinstance(lower, float) or not isinstance(upper, float) or math.isnan(lower) or math.isnan(upper):
        return ""
    return f"Interval (see the note for its level): {value_text(lower)} to {value_text(upper)}"


def _donor_lines(entry: Mapping[Any, Any], ids: pd.Series | None = None) -> list[str]:
    donors = tuple(entry["donors"] or ())
    if not donors:
        return []
    shown = slice(0, COMMENT_DONORS)
    more = f" (+{len(donors) - COMMENT_DONORS} more in the Fill log)" if len(donors) > COMMENT_DONORS else ""
    named = f" (samples {', '.join(_ids_of(ids, donors[shown]))})" if ids is not None else ""
    return [
        f"Donor rows: {join_text(donors[shown], str)}{named}{more}",
        f"Distances: {join_text(tuple(entry['distances'])[shown], distance_text)}",
        f"Donor values: {join_text(tuple(entry['donor_values'])[shown])}",
    ]
