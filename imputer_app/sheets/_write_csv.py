"""The csv export: the filled table, ``<name>.fill-log.csv``, ``<name>.run.json``.

A delimited file cannot colour a cell, so the fill log is the record of which
cells were filled; units and everything else of "About this fill" go to the run
record (JSON). Files follow RFC 4180 (CRLF line ends, quotes where needed), in the
input's delimiter and decimal mark when the input was a delimited file.

Formula injection: a text cell that begins with ``=``, ``+``, ``-``, ``@``, tab or
carriage return is written with a leading single quote, as the OWASP "CSV Injection"
guidance recommends, so that a spreadsheet program shows it as text instead of
running it. Numbers are written as numbers (a negative number keeps its minus sign).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app.sheets._content import ExportContent
from imputer_app.sheets._run_record import record_json
from imputer_app.sheets._ticker import Ticker

if TYPE_CHECKING:
    from imputer_app.sheets._model import Sheet

#: First characters that make a spreadsheet program read text as a formula (OWASP).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

#: Rows written per chunk (progress and cancel are checked between chunks).
CHUNK_ROWS = 5_000


@dataclass(frozen=True)
class Dialect:
    """How the delimited files are written."""

    delimiter: str = ","
    decimal: str = "."
    encoding: str = "utf-8-sig"


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
    return Dialect(delimiter, decimal, "utf-8" if plain else "utf-8-sig")


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
    _write_table(temps["table"], _filled_table(content), dialect, ticker)
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


def _number_text(value: Any, decimal: str) -> Any:
    """Write a float the way pandas would (shortest repr) with the given decimal mark."""
    if isinstance(value, float | np.floating):
        return "" if math.isnan(value) else repr(float(value)).replace(".", decimal)
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
            out[j] = [_number_text(guard(v), decimal) for v in values.tolist()]
    ready = pd.DataFrame(out, index=table.index)
    ready.columns = pd.Index([guard(str(c)) for c in table.columns], dtype=object)
    return ready


def _write_table(path: Path, table: pd.DataFrame, dialect: Dialect, ticker: Ticker) -> None:
    with path.open("w", encoding=dialect.encoding, newline="") as handle:
        for start in range(0, max(len(table), 1), CHUNK_ROWS):
            part = _csv_ready(table.iloc[start : start + CHUNK_ROWS], dialect.decimal)
            part.to_csv(
                handle,
                sep=dialect.delimiter,
                decimal=dialect.decimal,
                index=False,
                header=start == 0,
                lineterminator="\r\n",
                quoting=csv.QUOTE_MINIMAL,
                na_rep="",
            )
            ticker.step(len(part))
