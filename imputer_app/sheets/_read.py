"""Read a spreadsheet into a :class:`~imputer_app.sheets.Sheet`: public entry points.

The file is read once (bytes hashed as they arrive); checks refuse encrypted, damaged,
binary or bomb-like files before any parser runs; the cells become a grid; the header,
units row and data rows are located; every column is classified with vectorised string
and number operations; finally the frame, cell states, cell notes and problems are built.
The source file is only ever opened for reading.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field, replace
from os import PathLike
from pathlib import Path

import numpy as np

from imputer_app.errors import SheetError
from imputer_app.plan_checks import MARKER_MEANINGS
from imputer_app.sheets import _guards, _text
from imputer_app.sheets._assemble import Column, assemble, resolve_kinds
from imputer_app.sheets._cell_classes import BLANK
from imputer_app.sheets._cells import ParsedColumn, parse_column
from imputer_app.sheets._facts import COMPUTED_REASON, is_computed, is_group_like
from imputer_app.sheets._grid import Merge
from imputer_app.sheets._header import Layout, find_layout, unique_names
from imputer_app.sheets._limits import markers_found, take_limit_row
from imputer_app.sheets._markers import DEFAULT_MARKERS, Markers, make_markers
from imputer_app.sheets._model import ColumnInfo, Sheet, SourceInfo
from imputer_app.sheets._precision import column_decimals, workbook_formats
from imputer_app.sheets._text_classes import KnownTexts
from imputer_app.sheets._threads import map_columns
from imputer_app.sheets._workbook import list_workbook_sheets, read_workbook
from imputer_app.work import WORKERS, CancelFlag, Progress, raise_if_cancelled, report

#: Progress is reported as (done, PROGRESS_TOTAL); stages end at these marks.
PROGRESS_TOTAL = 1000
_READ_DONE, _GRID_DONE, _COLUMNS_DONE = 150, 400, 900
#: Workbook formats whose number formats are read for each column's measured precision.
_XLSX_FORMATS = ("xlsx", "xlsm")
#: Rows sampled to detect the decimal mark.
_DECIMAL_SAMPLE_ROWS = 2000

__all__ = ["DEFAULT_MARKERS", "list_sheets", "read_sheet"]


@dataclass(frozen=True)
class _Grid:
    """Cells of the chosen table plus the facts of how they were read."""

    cells: np.ndarray
    merges: tuple[Merge, ...]
    sheet: str | None
    delimiter: str | None = None
    encoding: str | None = None
    line_end: str | None = None
    formulas: Mapping[int, np.ndarray] = field(default_factory=dict)
    #: Per column, each cell's bytes (a long csv split from its bytes); else None.
    codes: tuple[np.ndarray | None, ...] | None = None


def list_sheets(path: str | PathLike[str]) -> list[str]:
    """Return the worksheet names of a workbook without loading any sheet.

    Parameters
    ----------
    path : str or path-like
        An ``.xlsx``, ``.xlsm``, ``.xls``, ``.ods``, ``.csv``, ``.tsv`` or ``.txt`` file.

    Returns
    -------
    list of str
        Worksheet names in workbook order (chart sheets left out); the position in this
        list is what ``read_sheet(path, sheet=<int>)`` means. A text file holds one table,
        listed under the file's stem.

    Raises
    ------
    SheetError
        Missing, unsupported, encrypted or damaged file.

    Examples
    --------
    >>> list_sheets("survey.xlsx")  # doctest: +SKIP
    ['Survey', 'Notes']
    """
    source = Path(path)
    fmt = _guards.file_format(source)
    if fmt in _guards.TEXT_FORMATS:
        _guards.check_exists(source)
        return [source.stem]
    _guards.check_workbook_file(source, fmt)
    return list_workbook_sheets(source, fmt)


def read_sheet(
    path: str | PathLike[str],
    sheet: str | int | None = None,
    header_row: int | None = None,
    markers: Iterable[str | float] | Mapping[str, str] | None = None,
    *,
    kinds: Mapping[str, str] | None = None,
    delimiter: str | None = None,
    decimal: str | None = None,
    encoding: str | None = None,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> Sheet:
    r"""Read one table of a spreadsheet file with the state of every cell.

    Parameters
    ----------
    path : str or path-like
        ``.xlsx``, ``.xlsm``, ``.xls``, ``.ods`` (formulas read as their cached values)
        or delimited text ``.csv``, ``.tsv``, ``.txt``. The file is never modified.
    sheet : str or int, optional
        Worksheet name or 0-based position (as in :func:`list_sheets`); default the
        first visible worksheet. Ignored-but-checked for text files (None, 0 or the stem).
    header_row : int, optional
        1-based file row of the header; default detected (title, metadata and blank
        rows above it are skipped). ``0`` means the table has no header row.
    markers : iterable of str or float, or mapping of str to str, optional
        Missing-value markers *added to* :data:`DEFAULT_MARKERS` (NA, N/A, -, --, ?,
        missing, lost, #N/A, NaN; trimmed and case-insensitive). Numeric markers such
        as ``-999`` match by value and apply only when given here. A mapping gives
        each marker its meaning, ``"missing"`` or ``"below-limit"``
        (``{"n.d.": "missing", "-": "below-limit"}``); by default n.d., nd and "not
        detected" are below the limit of detection, like "BDL", "<LOD" and "<LOQ".
    kinds : mapping of str to str, optional
        Force a column's kind: ``{"site": "category"}``; one of number, category, date,
        identifier. Keys are column names (or original header texts).
    delimiter, decimal, encoding : str, optional
        Text-file overrides: separator (``","``, ``";"``, ``"\\t"`` or "tab"), decimal mark
        (``"."`` or ``","``; also applies to numbers stored as text in workbooks) and a
        Python codec name. Default detected.
    progress : callable(done, total), optional
        Called as the work advances; ``total`` is 1000.
    cancel : Event-like or callable, optional
        When set, reading stops with :class:`~imputer_app.errors.Cancelled`.

    Returns
    -------
    Sheet
        ``frame`` of shape (n_data_rows, n_columns) indexed by 1-based file row:
        numbers as float, categories and identifiers as text (object), dates as
        datetime64; every blank, marker, censored or unreadable cell is NaN (NaT).
        ``states`` (same shape) says which: observed, missing, censored,
        text_in_number. ``cell_notes`` lists markers, censored cells (side, limit) and
        unreadable cells; ``problems`` lists them for the user in plain words.

    Raises
    ------
    SheetError
        One line naming the file and the fault: missing, empty, header only, damaged,
        encrypted, binary, unknown type, unknown sheet, decompression bomb, vanished.

    Examples
    --------
    >>> sheet = read_sheet("survey.csv", markers=["-999"])  # doctest: +SKIP
    >>> sheet.frame.loc[5, "nitrate"], sheet.states.loc[5, "nitrate"]  # doctest: +SKIP
    (nan, 'censored')
    """
    source = Path(path)
    fmt = _guards.file_format(source)
    decimal = _check_decimal(decimal, source)
    if header_row is not None and (
        isinstance(header_row, bool) or not isinstance(header_row, int) or header_row < 0
    ):
        raise SheetError(
            f"header_row must be a row number (1 = first row, 0 = no header), not {header_row!r}"
        )
    data, sha256 = _guards.read_source(source, progress, cancel, share=_READ_DONE)
    grid = _load_grid(data, source, fmt, sheet, delimiter, encoding, cancel)
    report(progress, _GRID_DONE, PROGRESS_TOTAL)
    where = f"sheet '{grid.sheet}' of '{source.name}'" if grid.sheet else f"'{source.name}'"
    if header_row is not None and header_row > grid.cells.shape[0]:
        raise SheetError(f"header_row {header_row} is beyond the last row ({grid.cells.shape[0]}) of {where}")
    marker_set = _marker_set(markers)
    layout = find_layout(grid.cells, grid.merges, marker_set, header_row)
    if decimal is None:
        sample = grid.cells[layout.data_start : layout.data_start + _DECIMAL_SAMPLE_ROWS]
        decimal = _text.detect_decimal(sample, grid.delimiter)
    problems = _spread_data_merges(grid, layout.data_start)
    columns, rows, row_problems = _parse_body(grid, layout, marker_set, decimal, where, progress, cancel)
    columns, rows, limits, limit_row = take_limit_row(columns, rows)
    if limit_row is not None:
        row_problems.append(
            f"row {limit_row} gives limits of detection for {len(limits)} column(s); "
            "taken as their limits, not as a sample"
        )
    forced = resolve_kinds(columns, kinds, where)
    workers = WORKERS if grid.codes is not None else 1  # a long csv: columns side by side
    built = assemble(columns, rows, forced, workbook=grid.sheet is not None, cancel=cancel, workers=workers)
    groups = layout.groups or ("",) * grid.cells.shape[1]
    shown = (
        workbook_formats(data, grid.sheet, rows, [c.position for c in columns])
        if fmt in _XLSX_FORMATS and grid.sheet is not None
        else {}
    )
    infos = [
        _info(c, built.kinds[c.name], built.notes[c.name], rows, grid.formulas, groups[c.position])
        for c in columns
    ]
    decimals = map_columns(
        lambda c: column_decimals(c.parsed, grid.sheet is None, decimal, shown.get(c.position)),
        columns,
        workers,
    )
    infos = [replace(info, decimals=d) for info, d in zip(infos, decimals, strict=True)]
    info = SourceInfo(
        path=source.absolute(),
        sheet=grid.sheet,
        header_row=layout.header + 1 if layout.header is not None else 0,
        sha256=sha256,
        file_format=fmt,
        delimiter=grid.delimiter,
        decimal=decimal if fmt in _guards.TEXT_FORMATS else None,
        encoding=grid.encoding,
        units_row=layout.units + 1 if layout.units is not None else None,
        line_end=grid.line_end,
        limit_row=limit_row,
    )
    raw = _cells_as_read(grid.cells, columns, rows)
    report(progress, PROGRESS_TOTAL, PROGRESS_TOTAL)
    return Sheet(
        frame=built.frame,
        states=built.states,
        columns=infos,
        source=info,
        cell_notes=built.cell_notes,
        problems=problems + row_problems + built.problems,
        raw_text=raw,
        markers=markers_found(built.cell_notes, marker_set.below),
    )


def _info(
    column: Column,
    kind: str,
    notes: tuple[str, ...],
    rows: np.ndarray,
    formulas: Mapping[int, np.ndarray],
    group: str,
) -> ColumnInfo:
    """The column's facts, with the reason to carry it when it is computed by formulas."""
    computed = is_computed(column.parsed, column.position, rows, formulas)
    return ColumnInfo(
        column.name,
        kind,
        column.unit,
        notes,
        column.original,
        carry_reason=COMPUTED_REASON if computed else None,
        group_like=kind == "number" and is_group_like(column.parsed),
        group_label=group,
    )


def _cells_as_read(cells: np.ndarray, columns: list[Column], rows: np.ndarray) -> np.ndarray:
    """Every kept cell as read (text untrimmed), so an export writes unfilled text cells unchanged.

    When the table is one block of the grid (every column, no row left out between its
    first and last row), that block itself, not a copy. Else the kept columns are
    stacked column after column (a cheaper copy for a ``StringDType`` grid), seen row by column.
    """
    first, last = int(rows[0]) - 1, int(rows[-1]) - 1
    if [c.position for c in columns] == list(range(cells.shape[1])) and last - first + 1 == rows.size:
        return cells[first : last + 1]
    return np.stack([c.parsed.raw for c in columns], axis=0).T


def _marker_set(markers: Iterable[str | float] | Mapping[str, str] | None) -> Markers:
    """Markers from a list (more missing markers) or a mapping of marker to meaning."""
    if not isinstance(markers, Mapping):
        return make_markers(markers)
    for text, meaning in markers.items():
        if meaning not in MARKER_MEANINGS:
            raise SheetError(
                f"marker {text!r} must mean one of {', '.join(MARKER_MEANINGS)}; got {meaning!r}"
            )
    return make_markers(None, markers)


def _check_decimal(decimal: str | None, path: Path) -> str | None:
    if decimal is None or decimal in (".", ","):
        return decimal
    raise SheetError(f"decimal mark for '{path.name}' must be '.' or ',', not {decimal!r}")


def _load_grid(
    data: bytes,
    path: Path,
    fmt: str,
    sheet: str | int | None,
    delimiter: str | None,
    encoding: str | None,
    cancel: CancelFlag | None,
) -> _Grid:
    if fmt in _guards.WORKBOOK_FORMATS:
        _guards.check_workbook_bytes(data, path, fmt)
        raise_if_cancelled(cancel)
        book = read_workbook(data, path, fmt, sheet)
        return _Grid(book.cells, book.merges, book.sheet, formulas=book.formulas)
    if sheet not in (None, 0, path.stem):
        raise SheetError(f"'{path.name}' is a text file with one table; there is no sheet {sheet!r}")
    utf16 = _text.is_utf16(data) or _text.is_wide_codec(encoding)
    _guards.check_text_bytes(data, path, utf16)
    text, used = _text.decode(data, path, encoding)
    if not text[: _guards.BLANK_HEAD].strip() and not text.strip():  # the start decides a long text
        raise SheetError(f"'{path.name}' is empty")
    separator = _text.normalise_delimiter(delimiter, path) if delimiter else _text.detect_delimiter(text, fmt)
    raise_if_cancelled(cancel)
    cells, codes = _text.parse_grid(text, separator, path, cancel, data if _text.is_utf8(used) else None)
    return _Grid(cells, (), None, separator, used, _text.line_end(text), codes=codes)


def _spread_data_merges(grid: _Grid, data_start: int) -> list[str]:
    """Give every cell of a merged range in the data rows the range's value."""
    spread = [m for m in grid.merges if m[0][0] >= data_start and m[1] != m[0]]
    for (top, left), (bottom, right) in spread:
        grid.cells[top : bottom + 1, left : right + 1] = grid.cells[top, left]
    if not spread:
        return []
    return [
        f"{len(spread)} merged cell range(s) in the data were read as their value in every cell they cover"
    ]


def _parse_body(
    grid: _Grid,
    layout: Layout,
    markers: Markers,
    decimal: str,
    where: str,
    progress: Progress | None,
    cancel: CancelFlag | None,
) -> tuple[list[Column], np.ndarray, list[str]]:
    """Classify every data column, drop blank rows/columns; return columns and file rows."""
    body = grid.cells[layout.data_start :]
    parsed: list[ParsedColumn] = []
    width = body.shape[1]
    known = KnownTexts(decimal, markers)

    def parse(position: int) -> ParsedColumn:
        codes = grid.codes[position] if grid.codes is not None else None
        codes = None if codes is None else codes[:, layout.data_start :]
        return parse_column(body[:, position], decimal, markers, known, codes)

    # a long csv's columns are classified side by side: their numpy work runs outside the GIL
    # (a workbook's cells are Python objects: one thread)
    workers = WORKERS if grid.codes is not None and width > 1 else 1
    with ThreadPoolExecutor(workers, thread_name_prefix="kinfill-columns") as pool:
        found = [pool.submit(parse, position) for position in range(width)]
        try:
            for position, future in enumerate(found):
                raise_if_cancelled(cancel)
                parsed.append(future.result())
                report(
                    progress,
                    _GRID_DONE + (_COLUMNS_DONE - _GRID_DONE) * (position + 1) // max(width, 1),
                    PROGRESS_TOTAL,
                )
        finally:
            for future in found:  # after a cancel (or an error) the columns not yet begun are dropped
                future.cancel()
    classes = np.stack([p.cls for p in parsed], axis=1) if parsed else np.empty((body.shape[0], 0))
    filled = classes != BLANK
    keep_rows, problems = _data_rows(filled, body, layout.data_start)
    keep_columns = [p for p in range(width) if layout.names[p] or filled[keep_rows, p].any()]
    if not keep_rows.size or not keep_columns:
        if layout.header is not None:
            raise SheetError(f"{where} has a header row (row {layout.header + 1}) but no data rows")
        raise SheetError(f"{where} has no cells with values")
    columns, name_problems = _columns(parsed, keep_columns, keep_rows, layout)
    return columns, keep_rows + layout.data_start + 1, name_problems + problems


def _data_rows(filled: np.ndarray, body: np.ndarray, data_start: int) -> tuple[np.ndarray, list[str]]:
    """Row positions to keep: blank rows dropped, and a note below the table after a blank row."""
    counts = filled.sum(axis=1)
    keep = np.flatnonzero(counts > 0)
    problems: list[str] = []
    gaps = np.flatnonzero(np.diff(keep) > 1)
    if gaps.size and filled.shape[1] >= 3:
        tail = keep[gaps[-1] + 1 :]
        if all(_is_note(body[row][filled[row]]) for row in tail):
            keep = keep[: gaps[-1] + 1]
            listed = ", ".join(str(r + data_start + 1) for r in tail)
            problems.append(f"row(s) {listed} below the table look like notes, not data; left out")
    inside = np.ones(keep[-1] + 1 if keep.size else 0, dtype=bool)
    inside[keep] = False  # rows up to the last kept one that are not kept are blank
    blank = np.flatnonzero(inside)
    if blank.size:
        listed = ", ".join(str(r + data_start + 1) for r in blank[:10]) + (" ..." if blank.size > 10 else "")
        problems.append(f"{blank.size} blank row(s) inside the table skipped (row {listed})")
    return keep, problems


def _is_note(cells: np.ndarray) -> bool:
    """One cell of several words ("Values below LOD are shown as <LOD"), not a lone ID."""
    return cells.size == 1 and isinstance(cells[0], str) and len(cells[0].split()) >= 2


def _columns(
    parsed: list[ParsedColumn], keep: list[int], rows: np.ndarray, layout: Layout
) -> tuple[list[Column], list[str]]:
    """Named columns (unique names, units) restricted to the kept data rows."""
    if layout.header is None:
        names = [f"column {p + 1}" for p in keep]
        raw = ["" for _ in keep]
        notes: list[tuple[str, ...]] = [
            ("the sheet has no header row; named after the column's position",)
        ] * len(keep)
        problems = [f"no header row found; the {len(keep)} columns are named 'column 1', 'column 2', ..."]
    else:
        raw = [layout.names[p] for p in keep]
        names, notes, problems = unique_names(raw, keep)
    columns = [
        Column(name, original, position, layout.units_text[position], note, parsed[position].take(rows))
        for name, original, position, note in zip(names, raw, keep, notes, strict=True)
    ]
    return columns, problems
