"""Export a fill: the cleaned sheet with every filled cell marked, its log and its record."""

from __future__ import annotations

from os import PathLike
from pathlib import Path
from typing import TYPE_CHECKING, Any

from imputer_app.errors import ExportError
from imputer_app.sheets import _workbook_copy, _write_xlsx, _xlsx_patch
from imputer_app.sheets._atomic import atomic_outputs
from imputer_app.sheets._content import ExportContent, Layout, build_content
from imputer_app.sheets._run_record import RecoveryEvidence, build_record
from imputer_app.sheets._ticker import Ticker
from imputer_app.sheets._write_csv import dialect_for, side_files, write_csv
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.plan import FillPlan
    from imputer_app.sheets._model import Sheet

#: File endings write_result understands, and the export each gives.
FORMATS = {".xlsx": "xlsx", ".xlsm": "xlsx", ".csv": "csv", ".tsv": "csv"}

#: Export layouts: the input workbook with the fill written in, or the flat table.
LAYOUTS = ("workbook", "table")


def write_result(
    path: str | PathLike[str],
    sheet: Sheet | None,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None = None,
    *,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    layout: str = "workbook",
) -> list[Path]:
    """Write a fill's export and return the files written.

    With ``layout="workbook"`` (the default), a sheet read from an ``.xlsx``/``.xlsm``
    workbook exported to ``.xlsx``/``.xlsm`` gives that workbook back whole: every
    sheet, format, formula, chart and image as it was, only the filled cells written
    in (each in its column's number format with a pale blue fill and a note), formula
    results left for the spreadsheet program to recompute on opening, and the sheets
    "Fill log", "Not filled", "Recovery test" and "About this fill" added (renamed
    " (2)" when the name is taken). Macros stay only in an ``.xlsm`` export. A sheet
    read from an ``.ods`` or ``.xls`` workbook gives an ``.xlsx`` copy of that workbook
    (every sheet in order with its name and values, number formats where the file gives
    them, merged ranges) with the fill written in the same way; formulas become their
    values and the rest is not kept, as the run record's ``not_kept`` line says (see
    :func:`export_limits`). Any other input, or ``layout="table"``, gives the flat
    export below.

    ``.xlsx`` gives one workbook: sheet "Filled" (the table in its original row and
    column order, header and units rows, filled cells in a pale blue fill with
    italics, censored entries in a pale sand fill, each with a comment giving its
    evidence), "Fill log", "Not filled" (when cells stayed empty), "Recovery test"
    (when ``report`` is given, with the error-vs-k chart) and "About this fill" (the
    run record and the cautions). ``.csv``/``.tsv`` give the filled table plus
    ``<name>.fill-log.csv``, ``<name>.run.json`` and, when cells stayed empty,
    ``<name>.not-filled.csv``.

    Every file is written to a temporary file in the target folder and renamed into
    place only when all are complete; on any failure or cancel nothing is left behind.
    The input file is never written.

    Parameters
    ----------
    path : str or path-like
        The export's file name; its ending chooses the format (see :data:`FORMATS`).
    sheet : Sheet or None
        The sheet that was filled (units, original texts, source file); None when a
        DataFrame was filled directly.
    result : FillResult
        The engine's result: ``frame`` of shape (n_rows, n_columns) with NaN where
        cells stayed empty, boolean ``filled`` and ``censored`` of the same shape,
        ``log``, ``unfilled``, ``plan`` and ``warnings``.
    plan : FillPlan
        The plan as the user gave it (recorded beside the resolved ``result.plan``).
    report : RecoveryReport or None, default=None
        The recovery test behind the chosen k, if one was run.
    progress : callable or None, default=None
        Called as ``progress(done, total)`` while writing.
    cancel : Event-like, callable or None, default=None
        Checked between chunks of rows; when set, raises ``Cancelled`` and writes nothing.
    layout : {"workbook", "table"}, default="workbook"
        Keep the input workbook (xlsx/xlsm input and output only) or write the flat table.

    Returns
    -------
    list of Path
        The files written, the main export first.

    Raises
    ------
    ExportError
        Unknown file ending, target is the input file, folder missing or not
        writable, file open elsewhere, disk full, sheet too large for xlsx.
    Cancelled
        When ``cancel`` was set; no file is left behind.

    Examples
    --------
    >>> write_result("river.filled.xlsx", sheet, impute(sheet, plan), plan)  # doctest: +SKIP
    [PosixPath('river.filled.xlsx')]
    """
    raise_if_cancelled(cancel)
    target = Path(path)
    kind = FORMATS.get(target.suffix.lower())
    if kind is None:
        raise ExportError(
            f"cannot export to {target.name}: unknown file ending {target.suffix or '(none)'}; "
            f"use one of {', '.join(FORMATS)}"
        )
    if layout not in LAYOUTS:
        raise ExportError(f"unknown export layout {layout!r}; use one of {', '.join(LAYOUTS)}")
    content = build_content(sheet, result)
    source = sheet.source.path if sheet is not None else None
    work = len(content.frame) + len(content.log_table) + len(content.unfilled) + content.n_marked // 1000 + 2
    ticker = Ticker(progress, cancel, work)
    if kind == "xlsx" and layout == "workbook" and _keeps_workbook(sheet):
        assert sheet is not None
        files = _export_workbook(target, sheet, result, plan, report, content, ticker)
    elif kind == "xlsx":
        files = _export_xlsx(target, source, sheet, result, plan, report, content, ticker)
    else:
        files = _export_csv(target, source, sheet, result, plan, report, content, ticker)
    ticker.finish()
    return files


def export_side_files(path: str | PathLike[str]) -> list[Path]:
    """Return the files an export to ``path`` may write beside ``path`` itself.

    None for xlsx (one workbook); for csv/tsv the fill log, the run record and the
    list of cells left empty (written only when cells stayed empty).

    Examples
    --------
    >>> [p.name for p in export_side_files("june.filled.csv")]
    ['june.filled.fill-log.csv', 'june.filled.run.json', 'june.filled.not-filled.csv']
    """
    target = Path(path)
    if FORMATS.get(target.suffix.lower()) != "csv":
        return []
    return [p for p in side_files(target, with_unfilled=True).values() if p != target]


def _export_xlsx(
    target: Path,
    source: Path | None,
    sheet: Sheet | None,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None,
    content: ExportContent,
    ticker: Ticker,
) -> list[Path]:
    _write_xlsx.check_fits(content)
    with_comments = content.n_marked <= _write_xlsx.MAX_COMMENTS
    chart, chart_note = _write_xlsx.chart_png(report) if report is not None else (None, "")
    output = {
        "file": target.name,
        "format": "xlsx",
        "row_numbers": _rows_note(content.layout, sheet is not None),
        "filled_cells": f"fill colour {_write_xlsx.FILLED_COLOUR}, italic text",
        "censored_cells": f"fill colour {_write_xlsx.CENSORED_COLOUR}",
        "cell_comments": _comments_note(content.n_marked, with_comments),
    }
    if report is not None:
        output["chart"] = chart_note
    record = build_record(sheet, result, plan, report, content, output)
    with atomic_outputs([target], source=source) as temps:
        _write_xlsx.write_xlsx(temps[0], content, record, report, chart, with_comments, ticker)
    return [target]


def _keeps_workbook(sheet: Sheet | None) -> bool:
    formats = _xlsx_patch.PACKAGE_FORMATS + _workbook_copy.COPIED_FORMATS
    return sheet is not None and sheet.source.file_format in formats


def export_limits(sheet: Sheet | None, path: str | PathLike[str], layout: str = "workbook") -> str:
    """Say in one line what an export of ``sheet`` to ``path`` cannot keep ("" when it keeps all).

    An .ods or .xls workbook comes back as an .xlsx copy: formulas become their values,
    and charts, images and styles other than number formats are not kept.

    Examples
    --------
    >>> export_limits(ods_sheet, "june.filled.xlsx")  # doctest: +SKIP
    "from the .ods input: an .xlsx copy with every sheet's values, number formats and ..."
    """
    if sheet is None or layout != "workbook" or FORMATS.get(Path(path).suffix.lower()) != "xlsx":
        return ""
    fmt = sheet.source.file_format
    return _workbook_copy.not_kept(fmt) if fmt in _workbook_copy.COPIED_FORMATS else ""


def _export_workbook(
    target: Path,
    sheet: Sheet,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None,
    content: ExportContent,
    ticker: Ticker,
) -> list[Path]:
    _write_xlsx.check_fits(content)
    with atomic_outputs([target], source=sheet.source.path) as temps:  # refuses the input file first
        copied = sheet.source.file_format in _workbook_copy.COPIED_FORMATS
        package = _workbook_copy.copy_to_xlsx(sheet) if copied else None
        ticker.step()
        where = _xlsx_patch.plan_export(sheet, target, content, report is not None, package)
        chart, chart_note = _write_xlsx.chart_png(report) if report is not None else (None, "")
        record = _workbook_record(target, sheet, result, plan, report, content, where, chart_note)
        with_comments = content.n_marked <= _write_xlsx.MAX_COMMENTS
        _xlsx_patch.write_workbook(
            temps[0], sheet, result, content, record, where, (report, chart, with_comments), ticker
        )
    return [target]


def _workbook_record(
    target: Path,
    sheet: Sheet,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None,
    content: ExportContent,
    where: _xlsx_patch.Plan,
    chart_note: str,
) -> dict[str, Any]:
    with_comments = content.n_marked <= _write_xlsx.MAX_COMMENTS
    output: dict[str, Any] = {
        "file": target.name,
        "format": target.suffix.lower().lstrip("."),
        "layout": f"the input workbook with the filled cells written into sheet {sheet.source.sheet}",
        "row_numbers": "every row and column keeps its place in the input workbook; " + _label_note(True),
        "filled_cells": f"fill colour {_write_xlsx.FILLED_COLOUR} on the column's number format and font",
        "censored_cells": (
            f"fill colour {_write_xlsx.CENSORED_COLOUR} where the plan wrote a value, on the column's "
            "number format (General where the value has more decimals than that format shows); "
            "otherwise left as they were"
        ),
        "formulas": "kept as formulas; stored results removed, recalculated when the file is opened",
        "added_sheets": list(where.names.values()),
        "cell_comments": _comments_note(content.n_marked, with_comments),
    }
    limits = export_limits(sheet, target)
    if limits:
        output["layout"] = (
            "an .xlsx copy of the input workbook with the filled cells written into sheet "
            f"{sheet.source.sheet}"
        )
        output["formulas"] = (
            "kept as formulas where written in the common forms, stored results removed and "
            "recalculated when the file is opened; others kept as their values"
            if sheet.source.file_format == "ods"
            else "kept as their values (an .xlsx copy of an .xls workbook holds no formulas)"
        )
        output["not_kept"] = limits
    if where.drop_macros:
        output["macros"] = "left out: an .xlsx file cannot hold macros; export to .xlsm to keep them"
    if report is not None:
        output["chart"] = chart_note
    return build_record(sheet, result, plan, report, content, output)


def _export_csv(
    target: Path,
    source: Path | None,
    sheet: Sheet | None,
    result: FillResult,
    plan: FillPlan,
    report: RecoveryEvidence | None,
    content: ExportContent,
    ticker: Ticker,
) -> list[Path]:
    files = side_files(target, with_unfilled=len(content.unfilled) > 0)
    dialect = dialect_for(target, sheet)
    output = {
        "file": target.name,
        "format": "tsv" if dialect.delimiter == "\t" else "csv",
        "delimiter": dialect.delimiter,
        "decimal": dialect.decimal,
        "encoding": dialect.encoding,
        "files": [p.name for p in files.values()],
        "row_numbers": _label_note(sheet is not None),
        "formula_guard": "text beginning with = + - @ tab or CR gets a leading ' (OWASP CSV Injection)",
        "marks": f"a delimited file cannot mark cells; {files['log'].name} lists every written cell",
    }
    record = build_record(sheet, result, plan, report, content, output)
    with atomic_outputs(list(files.values()), source=source) as temps:
        write_csv(dict(zip(files, temps, strict=True)), content, record, dialect, ticker)
    return list(files.values())


def _label_note(from_file: bool) -> str:
    if from_file:
        return "row labels in the fill log are row numbers in the input file"
    return "row labels in the fill log are the index labels of the table that was filled"


def _rows_note(layout: Layout, from_file: bool) -> str:
    if layout.aligned:
        return "every data row keeps its row number from the input file; " + _label_note(True)
    first = int(layout.data_rows[0]) if len(layout.data_rows) else layout.header_row + 1
    return f"data rows start at row {first} of sheet Filled; " + _label_note(from_file)


def _comments_note(n_marked: int, written: bool) -> str:
    if written:
        return f"{n_marked:,} marked cell(s) carry a comment with their evidence"
    return (
        f"left out: {n_marked:,} marked cells are more than {_write_xlsx.MAX_COMMENTS:,}; "
        "each cell's donors, distances and spread are on the Fill log sheet"
    )
