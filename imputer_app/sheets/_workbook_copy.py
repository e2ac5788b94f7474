"""An .ods or .xls workbook copied into a new .xlsx package, for the workbook export.

Kinfill cannot write into an .ods or .xls file in place (the .xls format is not
writable here, and an .ods package has no cell-by-cell counterpart of the xlsx patch).
So its export is an .xlsx that holds the workbook's content: every worksheet in order
with its name and its cells' values (python-calamine reads them all), number formats
where the file gives them (an .ods names them in its styles; calamine gives none for
.xls), merged ranges, and hidden sheets kept hidden. That package is then handed to the
same writer as an .xlsx input (:mod:`imputer_app.sheets._xlsx_patch`), which writes
the filled cells in with their marks and notes and adds our sheets.

What is not kept is said in one line (:func:`not_kept`), shown by the command line, the
app and the "About this fill" sheet.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
from typing import TYPE_CHECKING, Any

import python_calamine as calamine
import xlsxwriter
from xlsxwriter.format import Format
from xlsxwriter.worksheet import Worksheet

from imputer_app.errors import ExportError, KinfillError
from imputer_app.sheets._ods_look import SheetLook, ods_look
from imputer_app.sheets._workbook import worksheet_names

if TYPE_CHECKING:
    from imputer_app.sheets._model import Sheet

#: Input formats whose workbook export is a copy into a new .xlsx.
COPIED_FORMATS = ("ods", "xls")

#: Number formats of dates and times calamine returns without their own format.
_DATE_CODES = {
    "date": "yyyy-mm-dd",
    "datetime": "yyyy-mm-dd hh:mm:ss",
    "time": "hh:mm:ss",
    "duration": "[h]:mm:ss",
}

_OPTIONS = {
    "in_memory": True,
    "strings_to_formulas": False,
    "strings_to_numbers": False,
    "strings_to_urls": False,
}


def not_kept(file_format: str) -> str:
    """One line saying what the .xlsx copy of an .ods/.xls workbook could not keep.

    Examples
    --------
    >>> not_kept("xls")[:39]
    'from the .xls input: an .xlsx copy with'
    """
    if file_format == "ods":
        kept, lost = "every sheet's values, number formats and merged cells", ""
        formulas = (
            "formulas in the common forms (cell and range references, ';' between arguments) are "
            "kept as formulas, others as their values"
        )
    else:
        kept, lost = "every sheet's values and merged cells", "number formats (dates show as yyyy-mm-dd), "
        formulas = "formulas are kept as their values (they no longer recompute)"
    return (
        f"from the .{file_format} input: an .xlsx copy with {kept}; {formulas}; {lost}charts, images, "
        "comments, fonts, colours and column widths are not kept"
    )


def copy_to_xlsx(sheet: Sheet) -> bytes:
    """Return an .xlsx package holding every worksheet of ``sheet``'s .ods/.xls workbook.

    The data sheet's cells stand where the reader found them (same rows and columns),
    so the fill can be written into the copy as into an .xlsx input.

    Raises
    ------
    ExportError
        The file changed since it was read, or cannot be read any more.
    """
    source = sheet.source
    try:
        data = source.path.read_bytes()
    except OSError as error:
        raise ExportError(f"{source.path.name} cannot be read any more ({error}); read it again") from None
    if hashlib.sha256(data).hexdigest() != source.sha256:
        raise ExportError(f"{source.path.name} changed since it was read; read it again before exporting")
    looks = ods_look(data) if source.file_format == "ods" else {}
    buffer = io.BytesIO()
    book = xlsxwriter.Workbook(buffer, _OPTIONS)
    formats: dict[str, Format] = {}
    try:
        workbook = calamine.CalamineWorkbook.from_filelike(io.BytesIO(data))
    except BaseException as error:  # calamine may raise a Rust panic (a BaseException)
        if isinstance(error, KeyboardInterrupt | SystemExit | MemoryError):
            raise
        raise ExportError(f"{source.path.name} cannot be read any more ({error}); read it again") from None
    try:
        hidden = {m.name for m in workbook.sheets_metadata if m.visible != calamine.SheetVisibleEnum.Visible}
        for name in worksheet_names(workbook):
            rows, merges = _sheet_cells(workbook, name, source.path.name)
            look = looks.get(name, SheetLook())
            target = book.add_worksheet(name)
            _merge(target, merges or look.merges)  # first: a merge blanks its cells
            _write_cells(book, target, rows, look, formats)
            if name == source.sheet:
                target.activate()
            elif name in hidden:
                target.hide()
    finally:
        workbook.close()
    book.close()
    return buffer.getvalue()


def _sheet_cells(
    workbook: calamine.CalamineWorkbook, name: str, file_name: str
) -> tuple[list[list[Any]], list[tuple[int, int, int, int]]]:
    try:
        worksheet = workbook.get_sheet_by_name(name)
        rows = worksheet.to_python(skip_empty_area=False)
        ranges = worksheet.merged_cell_ranges or ()
    except KinfillError:
        raise
    except Exception as error:
        raise ExportError(f"sheet '{name}' of {file_name} cannot be copied ({error})") from None
    merges = [(int(a[0]), int(a[1]), int(b[0]), int(b[1])) for a, b in ranges]
    return rows, merges


def _style(book: xlsxwriter.Workbook, formats: dict[str, Format], code: str) -> Format:
    if code not in formats:
        formats[code] = book.add_format({"num_format": code})
    return formats[code]


def _write_cells(
    book: xlsxwriter.Workbook,
    sheet: Worksheet,
    rows: list[list[Any]],
    look: SheetLook,
    formats: dict[str, Format],
) -> None:
    """Write each cell with its own type; text is always text, never a formula.

    A formula of an .ods that translates to .xlsx syntax is written as a formula with
    its stored value (the export drops stored results, so it recomputes on opening).
    """
    codes, formulas = look.formats, look.formulas
    for i, row in enumerate(rows):
        for j, value in enumerate(row):
            code = codes.get((i, j))
            formula = formulas.get((i, j))
            if formula is not None:
                style = _style(book, formats, code) if code else None
                sheet.write_formula(i, j, formula, style, value if value is not None else "")
                continue
            if value is None or value == "":
                continue
            if isinstance(value, bool):
                sheet.write_boolean(i, j, value)
            elif isinstance(value, int | float):
                sheet.write_number(i, j, value, _style(book, formats, code) if code else None)
            elif isinstance(value, dt.datetime | dt.date | dt.time | dt.timedelta):
                _write_moment(sheet, (i, j), value, _style(book, formats, code or _date_code(value)))
            else:
                sheet.write_string(i, j, str(value))


def _date_code(value: dt.datetime | dt.date | dt.time | dt.timedelta) -> str:
    if isinstance(value, dt.datetime):
        return _DATE_CODES["datetime" if value.time() != dt.time() else "date"]
    if isinstance(value, dt.date):
        return _DATE_CODES["date"]
    return _DATE_CODES["time" if isinstance(value, dt.time) else "duration"]


def _write_moment(
    sheet: Worksheet,
    cell: tuple[int, int],
    value: dt.datetime | dt.date | dt.time | dt.timedelta,
    fmt: Format,
) -> None:
    if isinstance(value, dt.timedelta):
        sheet.write_number(*cell, value.total_seconds() / 86400, fmt)
    elif isinstance(value, dt.datetime):
        sheet.write_datetime(*cell, value.replace(tzinfo=None), fmt)
    elif isinstance(value, dt.date):
        sheet.write_datetime(*cell, dt.datetime.combine(value, dt.time()), fmt)
    else:
        sheet.write_datetime(*cell, value, fmt)


def _merge(sheet: Worksheet, merges: list[tuple[int, int, int, int]]) -> None:
    """Merge the ranges (their first cell's value is written afterwards)."""
    for first_row, first_col, last_row, last_col in merges:
        if (first_row, first_col) != (last_row, last_col):
            sheet.merge_range(first_row, first_col, last_row, last_col, None)
