"""The xlsx export: "Filled", "Fill log", "Not filled", "Recovery test", "Pictures", "About this fill".

xlsxwriter writes the workbook with placeholder data sheets (styles, comments,
image, widths, frozen panes); the long sheets' rows are then streamed into that
package by :mod:`imputer_app.sheets._xlsx_package` from
:mod:`imputer_app.sheets._sheetxml`, column by column and chunk by chunk.

Marks: a filled cell has a pale glacier-blue fill and italic text; a censored entry a
pale sand fill (both our own choice, readable in grey print thanks to the italics);
each marked cell carries a comment with its evidence when there are at most
:data:`MAX_COMMENTS` of them.
"""

from __future__ import annotations

import io
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import xlsxwriter
from xlsxwriter.format import Format
from xlsxwriter.worksheet import Worksheet

from imputer_app.errors import ExportError
from imputer_app.sheets._content import CENSORED, FILLED, ExportContent, cell_comments
from imputer_app.sheets._pictures import PICTURES_SHEET, FilledTable, add_pictures_sheet, record_coverage
from imputer_app.sheets._run_record import ABOUT_SHEET, RecoveryEvidence, about_rows, recovery_table
from imputer_app.sheets._sheetxml import ColumnCells, column_letter, excel_serial, render_line, render_rows
from imputer_app.sheets._ticker import Ticker
from imputer_app.sheets._xlsx_package import splice_sheets

#: Fill colours of marked cells (our own palette: calm, and apart for colour-blind eyes).
FILLED_COLOUR = "#D2E7EF"
CENSORED_COLOUR = "#F4E3C9"

#: Cell comments are written only up to this many marked cells; xlsxwriter's comments
#: cost about 0.1 ms each and bloat the file, and the fill log holds the same facts.
MAX_COMMENTS = 20_000

#: Largest sheet a spreadsheet program opens (Excel specifications, quoted from memory).
MAX_ROWS, MAX_COLUMNS = 1_048_576, 16_384

#: About this many characters of wrapped text fit one line of "About this fill" column B.
WRAP_CHARS = 110

#: Data rows rendered per chunk (progress and cancel are checked between chunks).
CHUNK_ROWS = 2_000

_EXACT_INT = 2**53
_OPTIONS = {
    "in_memory": True,
    "strings_to_formulas": False,
    "strings_to_numbers": False,
    "strings_to_urls": False,
}


@dataclass(frozen=True)
class Styles:
    """`` s="N"`` attribute text of each cell style, read from xlsxwriter after closing."""

    header: str
    units: str
    filled: str
    censored: str
    date: str
    datetime: str


def check_fits(content: ExportContent) -> None:
    """Raise :class:`ExportError` when a sheet would exceed the xlsx size limits."""
    rows = content.layout.data_rows
    last = int(rows[-1]) if len(rows) else content.layout.header_row
    longest = max(last, len(content.log_table) + 1, len(content.unfilled) + 1)
    if longest > MAX_ROWS or len(content.names) > MAX_COLUMNS:
        raise ExportError(
            f"the export needs {longest:,} rows and {len(content.names):,} columns, more than an xlsx "
            f"sheet holds ({MAX_ROWS:,} x {MAX_COLUMNS:,}); export as .csv instead"
        )


def chart_png(report: RecoveryEvidence) -> tuple[bytes | None, str]:
    """Return the error-vs-k chart of ``report`` as PNG bytes, and a note for the record."""
    try:
        from imputer_app.charts.error_vs_k import plot_error_vs_k
    except ImportError as exc:
        return None, f"chart not included: the chart module is not available ({exc})"
    try:
        figure = plot_error_vs_k(report)
        buffer = io.BytesIO()
        figure.savefig(buffer, format="png", dpi=110)
    except Exception as exc:  # a broken chart must not cost the user the export
        return None, f"chart not included: it could not be drawn ({type(exc).__name__}: {exc})"
    return buffer.getvalue(), "the error-vs-k chart is on the Recovery test sheet"


def write_xlsx(
    target: Path,
    content: ExportContent,
    record: dict[str, Any],
    report: RecoveryEvidence | None,
    chart: bytes | None,
    with_comments: bool,
    ticker: Ticker,
) -> None:
    """Write the xlsx export to ``target`` (a temporary file the caller renames).

    The caller has checked the size with :func:`check_fits`.

    Parameters
    ----------
    target : Path
        File to write.
    content : ExportContent
        Table, marks, log and layout.
    record : dict
        The run record (sheet "About this fill").
    report : RecoveryReport or None
        Adds the "Recovery test" sheet.
    chart : bytes or None
        PNG of the error-vs-k chart.
    with_comments : bool
        Write a comment on every marked cell.
    ticker : Ticker
        Progress and cancel.
    """
    comments = cell_comments(content) if with_comments else {}
    ticker.step()
    skeleton, formats = _skeleton(content, record, report, chart, comments, ticker)
    styles = Styles(**{name: f' s="{fmt.xf_index}"' for name, fmt in formats.items() if name in _STYLE_NAMES})
    bodies = {
        "Filled": _filled_rows(content, styles, ticker),
        "Fill log": _table_rows(content.log_table, styles, ticker),
    }
    if len(content.unfilled):
        bodies["Not filled"] = _table_rows(content.unfilled, styles, ticker)
    splice_sheets(skeleton, target, bodies, size_hint=48 * max(content.frame.size, content.log_table.size))


# ------------------------------------------------------------------ skeleton
_STYLE_NAMES = ("header", "units", "filled", "censored", "date", "datetime")


def _formats(book: xlsxwriter.Workbook) -> dict[str, Format]:
    return {
        "header": book.add_format({"bold": True, "bottom": 1}),
        "units": book.add_format({"italic": True, "font_color": "#555555"}),
        "filled": book.add_format({"bg_color": FILLED_COLOUR, "pattern": 1, "italic": True}),
        "censored": book.add_format({"bg_color": CENSORED_COLOUR, "pattern": 1}),
        "date": book.add_format({"num_format": "yyyy-mm-dd"}),
        "datetime": book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"}),
        "section": book.add_format({"bold": True, "font_size": 12}),
        "caution": book.add_format({"bold": True, "text_wrap": True, "valign": "top"}),
        "wrap": book.add_format({"text_wrap": True, "valign": "top"}),
    }


def _skeleton(
    content: ExportContent,
    record: dict[str, Any],
    report: RecoveryEvidence | None,
    chart: bytes | None,
    comments: dict[tuple[int, int], str],
    ticker: Ticker,
) -> tuple[bytes, dict[str, Format]]:
    buffer = io.BytesIO()
    book = xlsxwriter.Workbook(buffer, _OPTIONS)
    book.set_properties({"title": "Filled by Kinfill", "author": "Kinfill", "comments": record["cautions"]})
    formats = _formats(book)
    filled = book.add_worksheet("Filled")
    _filled_skeleton(filled, content, comments, ticker)
    log = book.add_worksheet("Fill log")
    _table_skeleton(log, content.log_table)
    # xlsxwriter numbers a format only when a cell uses it; these placeholder cells
    # (replaced by the streamed rows) make every style of the streamed rows exist.
    for j, name in enumerate(_STYLE_NAMES):
        log.write_blank(0, j, None, formats[name])
    if len(content.unfilled):
        _table_skeleton(book.add_worksheet("Not filled"), content.unfilled)
    if report is not None:
        _recovery_sheet(book.add_worksheet("Recovery test"), report, record, chart, formats)
    _add_pictures(book, content, record, ticker)
    _about_sheet(book.add_worksheet(ABOUT_SHEET), record, formats)
    filled.activate()
    book.close()  # assigns every format its xf_index
    return buffer.getvalue(), formats


def _add_pictures(
    book: xlsxwriter.Workbook,
    content: ExportContent,
    record: dict[str, Any],
    ticker: Ticker,
    name: str = PICTURES_SHEET,
) -> bool:
    """The "Pictures" sheet, drawn from the export's own marks (see :mod:`._pictures`)."""
    frame = content.frame
    table = FilledTable(
        frame=frame,
        filled=pd.DataFrame(content.marks == FILLED, index=frame.index, columns=frame.columns),
        censored=pd.DataFrame(content.marks == CENSORED, index=frame.index, columns=frame.columns),
        coverage=record_coverage(record),
    )
    similarity = (record.get("plan_resolved") or {}).get("similarity_columns")
    sheets_before = len(book.worksheets())
    record["output"]["pictures"] = add_pictures_sheet(book, table, similarity, ticker.step, name)
    return len(book.worksheets()) > sheets_before


def _placeholders(sheet: Worksheet, first: int, last: int, n_columns: int) -> None:
    # Two cells give xlsxwriter the sheet's extent (<dimension>); the rows themselves
    # are streamed in later.
    if n_columns:
        sheet.write_number(first - 1, 0, 0)
        sheet.write_number(last - 1, n_columns - 1, 0)


def _filled_skeleton(
    sheet: Worksheet, content: ExportContent, comments: dict[tuple[int, int], str], ticker: Ticker
) -> None:
    layout = content.layout
    top = layout.units_row or layout.header_row
    last = int(layout.data_rows[-1]) if len(layout.data_rows) else top
    _placeholders(sheet, layout.header_row, last, len(content.names))
    sheet.freeze_panes(top, 0)
    for j, (name, unit) in enumerate(zip(content.names, content.units, strict=True)):
        sheet.set_column(j, j, _width([name, unit or ""]))
    for count, ((i, j), text) in enumerate(comments.items(), start=1):
        lines = text.count("\n") + 1
        sheet.write_comment(
            int(layout.data_rows[i]) - 1,
            j,
            text,
            {"author": "Kinfill", "x_scale": 2.6, "y_scale": max(1.0, lines / 3.5)},
        )
        if count % 1000 == 0:
            ticker.step(1)


def _table_skeleton(sheet: Worksheet, table: pd.DataFrame) -> None:
    n_rows, n_columns = table.shape
    _placeholders(sheet, 1, n_rows + 1, n_columns)
    sheet.freeze_panes(1, 0)
    for j, name in enumerate(table.columns):
        sample = table[name].head(50).map(lambda v: "" if v is None else str(v)).tolist()
        sheet.set_column(j, j, _width([str(name), *sample]))
    if n_rows:
        sheet.autofilter(0, 0, n_rows, n_columns - 1)


def _width(texts: list[str]) -> float:
    return float(min(max([len(t) for t in texts] + [6]) + 2, 48))


def _put(sheet: Worksheet, row: int, col: int, value: Any, fmt: Format | None = None) -> None:
    """Write one value with its own type (text is always text, never a formula)."""
    if isinstance(value, np.generic):
        value = value.item()
    if (
        value is None
        or value is pd.NA
        or value == ""
        or (isinstance(value, float) and not np.isfinite(value))
    ):
        if fmt is not None:
            sheet.write_blank(row, col, None, fmt)
    elif isinstance(value, bool):
        sheet.write_boolean(row, col, value, fmt)
    elif isinstance(value, int | float):
        sheet.write_number(row, col, value, fmt)
    else:
        sheet.write_string(row, col, str(value), fmt)


def _recovery_sheet(
    sheet: Worksheet,
    report: RecoveryEvidence,
    record: dict[str, Any],
    chart: bytes | None,
    formats: dict[str, Format],
) -> None:
    table = recovery_table(report)
    for j, name in enumerate(table.columns):
        _put(sheet, 0, j, str(name), formats["header"])
        sheet.set_column(j, j, _width([str(name), "0.000000"]))
    for i, values in enumerate(table.itertuples(index=False), start=1):
        for j, value in enumerate(values):
            _put(sheet, i, j, value)
    summary = record.get("recovery_test") or {}
    lines = [
        ("Chosen k (used for this fill)", summary.get("chosen_k")),
        ("Best k (lowest mean error)", summary.get("best_k")),
        ("k by the one-standard-error rule", summary.get("best_k_1se")),
        ("Baseline (column average), overall score", summary.get("baseline_score")),
    ]
    row = len(table) + 2
    for offset, (label, value) in enumerate(lines):
        _put(sheet, row + offset, 0, label, formats["header"] if offset == 0 else None)
        _put(sheet, row + offset, 1, value, formats["header"] if offset == 0 else None)
    where = len(table.columns) + 1
    if chart is not None:
        sheet.insert_image(0, where, "error_vs_k.png", {"image_data": io.BytesIO(chart)})
    else:
        _put(sheet, 0, where, record["output"].get("chart", "chart not included"))


def _about_sheet(sheet: Worksheet, record: dict[str, Any], formats: dict[str, Format]) -> None:
    sheet.set_column(0, 0, 44)
    sheet.set_column(1, 1, 100, formats["wrap"])
    marks = {"filled cells": formats["filled"], "censored cells": formats["censored"]}
    for row, (key, value, style) in enumerate(about_rows(record)):
        if style == "section":
            _put(sheet, row, 0, key, formats["section"])
        elif style == "caution":
            _put(sheet, row, 0, key, formats["caution"])
            _put(sheet, row, 1, value, formats["caution"])
            sheet.set_row(row, 48)
        else:
            _put(sheet, row, 0, key or None)
            _put(sheet, row, 1, value if value != "" else None, marks.get(key, formats["wrap"]))
            if isinstance(value, str) and len(value) > WRAP_CHARS:  # the methods text: room to read it
                sheet.set_row(row, min(409, 15 * (len(value) // WRAP_CHARS + 1)))


# ------------------------------------------------------------------ streamed rows
def _filled_rows(content: ExportContent, styles: Styles, ticker: Ticker) -> Iterator[str]:
    layout = content.layout
    yield render_line(layout.header_row, content.names, styles.header)
    if layout.units_row is not None:
        yield render_line(layout.units_row, [u or None for u in content.units], styles.units)
    columns = [
        column_cells(content.frame.iloc[:, j], j, styles, content.marks[:, j], content.texts.get(j, {}))
        for j in range(len(content.names))
    ]
    yield from _chunks(columns, layout.data_rows, ticker)


def _table_rows(table: pd.DataFrame, styles: Styles, ticker: Ticker) -> Iterator[str]:
    yield render_line(1, [str(c) for c in table.columns], styles.header)
    columns = [column_cells(table.iloc[:, j], j, styles) for j in range(table.shape[1])]
    yield from _chunks(columns, np.arange(2, len(table) + 2, dtype=np.int64), ticker)


def _chunks(columns: list[ColumnCells], rows: np.ndarray, ticker: Ticker) -> Iterator[str]:
    for start in range(0, len(rows), CHUNK_ROWS):
        stop = min(start + CHUNK_ROWS, len(rows))
        yield render_rows(columns, rows, start, stop)
        ticker.step(stop - start)


def column_cells(
    series: pd.Series,
    position: int,
    styles: Styles,
    marks: np.ndarray | None = None,
    texts: dict[int, str] | None = None,
) -> ColumnCells:
    """Return the renderer of one column, choosing the fast numeric path when possible.

    Parameters
    ----------
    series : Series of shape (n,)
        The column's values.
    position : int
        0-based column position (gives the letters).
    styles : Styles
        Cell style attributes.
    marks : ndarray of int8 of shape (n,) or None
        :data:`FILLED` / :data:`CENSORED` marks per cell.
    texts : dict of int to str or None
        Rows written as this text instead of their (blank) value.
    """
    codes = marks if marks is not None and marks.any() else None
    letter = column_letter(position)
    dtype = series.dtype
    base = ""
    if pd.api.types.is_datetime64_any_dtype(dtype):
        stamps = series.dt.tz_localize(None) if getattr(series.dt, "tz", None) is not None else series
        raw = stamps.to_numpy(dtype="datetime64[ns]")
        values, mode = excel_serial(raw), "number"
        base = styles.datetime if _has_time(raw) else styles.date
    elif pd.api.types.is_numeric_dtype(dtype) and not pd.api.types.is_bool_dtype(dtype):
        values, mode = series.to_numpy(dtype=float, na_value=np.nan), "number"
        if pd.api.types.is_integer_dtype(dtype) and not np.nanmax(np.abs(values), initial=0) < _EXACT_INT:
            values, mode = _objects(series), "any"  # beyond 2**53 a float would change the number
    else:
        values = _objects(series)
        mode = "text" if pd.api.types.infer_dtype(values, skipna=True) in ("string", "empty") else "any"
    all_styles = [base, "", ""]
    all_styles[FILLED], all_styles[CENSORED] = styles.filled, styles.censored
    return ColumnCells(letter, values, mode, codes, tuple(all_styles), dict(texts or {}), styles.date)


def _objects(series: pd.Series) -> np.ndarray:
    values = series.to_numpy(dtype=object, copy=True)
    values[pd.isna(series).to_numpy()] = None
    return values


def _has_time(stamps: np.ndarray) -> bool:
    valid = stamps[~np.isnat(stamps)]
    return bool(len(valid)) and bool(np.any(valid != valid.astype("datetime64[D]")))
