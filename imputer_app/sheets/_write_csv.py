"""The csv export: the filled table, ``<name>.fill-log.csv``, ``<name>.run.json``.

A delimited file cannot colour a cell, so the fill log is the record of which
cells were filled; units and everything else of "About this fill" go to the run
record (JSON). Files follow RFC 4180 (quotes where needed), in the input's delimiter,
decimal mark and line ends when the input was a delimited file (else CRLF).

Cells leave as they came: every cell of a delimited input that was not filled (carried,
observed, a marker left empty) is written as its original text from the file, spaces
and digits unchanged (``'  lead'``, ``0,020``, ``157``), and a units row under the
header stays there. Filled numbers are written in the input's decimal mark with the
decimals they were rounded to (``FillResult.decimals``: ``6.40`` in a two-decimal
column), else with 15 significant digits, which drops binary noise such as
``6.732000000000001``; other numbers too are written with 15 significant digits, so a
whole number stays whole (``139``, not ``139.0``).

Formula injection: a text cell that begins with ``=``, ``+``, ``-``, ``@``, tab or
carriage return is written with a leading single quote, as the OWASP "CSV Injection"
guidance recommends, so that a spreadsheet program shows it as text instead of
running it; an original text is guarded the same way unless it was read as a number.
Numbers are written as numbers (a negative number keeps its minus sign).
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app.sheets._content import FILLED, PLAIN, ExportContent
from imputer_app.sheets._run_record import record_json
from imputer_app.sheets._ticker import Ticker

if TYPE_CHECKING:
    from imputer_app.sheets._model import Sheet

#: First characters that make a spreadsheet program read text as a formula (OWASP).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

#: Text a spreadsheet program reads as a number or as plain signs, never as a formula.
_NUMBER_TEXT = re.compile(r"\s*[-+]*\s*(?:\d[\d.,\s]*(?:[eE][-+]?\d+)?)?\s*")

#: Rows written per chunk (progress and cancel are checked between chunks).
CHUNK_ROWS = 5_000


@dataclass(frozen=True)
class Dialect:
    """How the delimited files are written."""

    delimiter: str = ","
    decimal: str = "."
    encoding: str = "utf-8-sig"
    line_end: str = "\r\n"
    #: The input's text of every cell (``Sheet.raw_text``), written back for cells not filled.
    originals: np.ndarray | None = field(default=None, repr=False, compare=False)
    #: The input had a units row under its header: the table keeps one.
    units_row: bool = False


class _Verbatim(str):
    """A cell's original text, already guarded: written exactly as it is."""

    __slots__ = ()


def dialect_for(target: Path, sheet: Sheet | None) -> Dialect:
    """Return the dialect for ``target``: tab for ``.tsv``, else the input's own habits.

    A delimited input keeps its delimiter and decimal mark (a decimal-comma lab gets
    ``;`` and ``,`` back). Text is UTF-8, with a byte-order mark unless the input was
    UTF-8 without one, so that spreadsheet programs detect the encoding.
    """
    source = sheet.source if sheet is not None else None
    delimiter = source.delimiter if source is not None and source.delimiter else ","
    decimal = source.decimal if source is not None and source.decimal else "."
    if target.suffix.lower() == ".tsv":
        delimiter = "\t"
    if delimiter == decimal:
        delimiter = ";"
    plain = source is not None and (source.encoding or "").lower().replace("_", "-") in ("utf-8", "utf8")
    line_end = source.line_end if source is not None and source.line_end else "\r\n"
    originals = getattr(sheet, "raw_text", None)
    units_row = source is not None and source.units_row is not None
    return Dialect(delimiter, decimal, "utf-8" if plain else "utf-8-sig", line_end, originals, units_row)


def side_files(target: Path, with_unfilled: bool) -> dict[str, Path]:
    """Return the csv export's files: table, fill log, run record, cells left empty."""
    stem = target.with_suffix("")
    files = {
        "table": target,
        "log": stem.with_name(stem.name + ".fill-log.csv"),
        "record": stem.with_name(stem.name + ".run.json"),
    }
    if with_unfilled:
        files["unfilled"] = stem.with_name(stem.name + ".not-filled.csv")
    return files


def guard(value: Any) -> Any:
    """Prefix a text value that could run as a formula with ``'`` (OWASP); others unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def write_csv(
    temps: dict[str, Path],
    content: ExportContent,
    record: dict[str, Any],
    dialect: Dialect,
    ticker: Ticker,
) -> None:
    """Write the csv export into the temporary files ``temps`` (keys of :func:`side_files`).

    Parameters
    ----------
    temps : dict of str to Path
        Temporary file per part; the caller renames them into place.
    content : ExportContent
        The filled table (original texts of unfilled censored cells restored), the
        fill log and the cells left empty.
    record : dict
        The run record, written as JSON.
    dialect : Dialect
        Delimiter, decimal mark and encoding.
    ticker : Ticker
        Progress and cancel.
    """
    table = _rounded_numbers(_filled_table(content), content, dialect.decimal)
    table = _with_originals(table, content, dialect)
    _write_table(temps["table"], table, dialect, ticker, content.units if dialect.units_row else None)
    _write_table(temps["log"], content.log_table, dialect, ticker)
    if "unfilled" in temps:
        _write_table(temps["unfilled"], content.unfilled, dialect, ticker)
    temps["record"].write_text(record_json(record), encoding="utf-8")


def _filled_table(content: ExportContent) -> pd.DataFrame:
    """Return the filled table with original texts put back into blank cells."""
    frame = content.frame.reset_index(drop=True)
    columns: dict[int, Any] = {}  # by position: a plain table may repeat a column name
    for j in range(frame.shape[1]):
        series = frame.iloc[:, j]
        texts = content.texts.get(j)
        if texts:
            values = series.to_numpy(dtype=object, copy=True)
            for i, text in texts.items():
                values[i] = text
            columns[j] = values
        else:
            columns[j] = series
    table = pd.DataFrame(columns, index=frame.index)
    table.columns = pd.Index(content.names, dtype=object)
    return table


def _rounded_numbers(table: pd.DataFrame, content: ExportContent, decimal: str) -> pd.DataFrame:
    """Write each filled number of a rounded column with its column's decimals (``6.40``)."""
    decimals = content.decimals or [None] * table.shape[1]
    if all(d is None for d in decimals):
        return table
    out: dict[int, Any] = {}
    for j, places in enumerate(decimals):
        filled = np.flatnonzero(content.marks[:, j] == FILLED)
        if places is None or not filled.size:
            out[j] = table.iloc[:, j]
            continue
        values = table.iloc[:, j].to_numpy(dtype=object, copy=True)
        for i in filled.tolist():
            value = values[i]
            if isinstance(value, float | np.floating) and math.isfinite(value):
                # + 0.0 turns a rounded -0.0 into 0.0
                values[i] = _Verbatim(f"{float(value) + 0.0:.{places}f}".replace(".", decimal))
        out[j] = values
    kept = pd.DataFrame(out, index=table.index)
    kept.columns = table.columns
    return kept


def _with_originals(table: pd.DataFrame, content: ExportContent, dialect: Dialect) -> pd.DataFrame:
    """Put each plain (not filled, not censored) cell's original text back into ``table``."""
    originals = dialect.originals
    if originals is None or originals.shape != table.shape:
        return table
    out: dict[int, Any] = {}
    for j in range(table.shape[1]):
        values = table.iloc[:, j].to_numpy(dtype=object, copy=True)
        keep = np.flatnonzero(content.marks[:, j] == PLAIN)
        values[keep] = [
            _original(text, value) for text, value in zip(originals[keep, j], values[keep], strict=True)
        ]
        out[j] = values
    kept = pd.DataFrame(out, index=table.index)
    kept.columns = table.columns
    return kept


def _original(text: object, value: object) -> object:
    """The cell's file text, guarded unless it reads as a number or signs only ("-5", "-")."""
    if not isinstance(text, str):
        return value
    return _Verbatim(text if _NUMBER_TEXT.fullmatch(text) else guard(text))


def _number_text(value: Any, decimal: str) -> Any:
    """Write a float with 15 significant digits (no binary noise) and the given decimal mark."""
    if isinstance(value, float | np.floating):
        return "" if math.isnan(value) else f"{float(value):.15g}".replace(".", decimal)
    return value


def _csv_ready(table: pd.DataFrame, decimal: str) -> pd.DataFrame:
    """Guard every text cell and give numbers in text columns the decimal mark."""
    out: dict[int, Any] = {}
    for j in range(table.shape[1]):
        series = table.iloc[:, j]
        if pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_datetime64_any_dtype(series.dtype):
            out[j] = series
        else:
            values = series.to_numpy(dtype=object)
            # Guard text first: a number turned into text here is not a formula.
            out[j] = [v if type(v) is _Verbatim else _number_text(guard(v), decimal) for v in values.tolist()]
    ready = pd.DataFrame(out, index=table.index)
    ready.columns = pd.Index([guard(str(c)) for c in table.columns], dtype=object)
    return ready


def _write_table(
    path: Path, table: pd.DataFrame, dialect: Dialect, ticker: Ticker, units: list[str | None] | None = None
) -> None:
    """Write ``table`` in chunks; ``units`` is a units row written under the header."""
    with path.open("w", encoding=dialect.encoding, newline="") as handle:
        if units is not None:
            lines = csv.writer(
                handle,
                delimiter=dialect.delimiter,
                lineterminator=dialect.line_end,
                quoting=csv.QUOTE_MINIMAL,
            )
            lines.writerow([guard(str(c)) for c in table.columns])
            lines.writerow([guard(u or "") for u in units])
        for start in range(0, max(len(table), 1), CHUNK_ROWS):
            part = _csv_ready(table.iloc[start : start + CHUNK_ROWS], dialect.decimal)
            part.to_csv(
                handle,
                sep=dialect.delimiter,
                decimal=dialect.decimal,
                index=False,
                header=start == 0 and units is None,
                lineterminator=dialect.line_end,
                quoting=csv.QUOTE_MINIMAL,
                na_rep="",
                float_format="%.15g",  # 139, not 139.0; no binary noise
            )
            ticker.step(len(part))
