"""Workbooks (xlsx, xlsm, xls, ods) through python-calamine: sheet names and a cell grid.

calamine returns cached formula values (never recomputes), numbers as float, dates as
``datetime``/``date``/``time`` objects and empty or error cells as ``""``. Before calamine
builds its grid, :mod:`~imputer_app.sheets._extent` (``.xlsx``, ``.ods``) or
:mod:`~imputer_app.sheets._xls_extent` (``.xls``) measures the sheet (and refuses one too
large to hold); the cells it finds holding a formula error or a formula without a stored
value are put back into the grid as :class:`FormulaError` and :data:`NO_VALUE`, so that
they are not taken for blank cells.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import python_calamine as calamine

from imputer_app.errors import SheetError
from imputer_app.sheets._extent import MAX_CELLS, Extent, check_extent, ods_extents
from imputer_app.sheets._grid import NO_VALUE, FormulaError, Merge, rows_to_grid
from imputer_app.sheets._xls_extent import xls_extents


@dataclass(frozen=True)
class WorkbookGrid:
    """The cells of one worksheet, from row 1 / column A (0-based array positions)."""

    cells: np.ndarray
    sheet: str
    merges: tuple[Merge, ...]
    formulas: dict[int, np.ndarray] = field(default_factory=dict)


def _open(source: Path | bytes, path: Path, fmt: str) -> calamine.CalamineWorkbook:
    try:
        if isinstance(source, bytes):
            return calamine.CalamineWorkbook.from_filelike(io.BytesIO(source))
        return calamine.CalamineWorkbook.from_path(str(source))
    except FileNotFoundError:
        raise SheetError(
            f"'{path.name}' vanished while it was being read (file not found: '{path}')"
        ) from None
    except BaseException as error:  # calamine may raise a Rust panic (a BaseException)
        raise _calamine_error(error, path, fmt) from None


def _calamine_error(error: BaseException, path: Path, fmt: str) -> BaseException:
    if isinstance(error, KeyboardInterrupt | SystemExit | GeneratorExit | MemoryError):
        return error
    if isinstance(error, calamine.PasswordError):
        return SheetError(
            f"'{path.name}' is password-protected (encrypted); open it in your spreadsheet program, "
            "remove the password and save a copy"
        )
    detail = (str(error).strip().splitlines() or [type(error).__name__])[0][:160]
    return SheetError(f"'{path.name}' is damaged or not a real .{fmt} workbook and cannot be read ({detail})")


def worksheet_names(workbook: calamine.CalamineWorkbook) -> list[str]:
    """Names of the worksheets (chart and macro sheets left out), in workbook order."""
    worksheet = calamine.SheetTypeEnum.WorkSheet
    return [meta.name for meta in workbook.sheets_metadata if meta.typ == worksheet]


def list_workbook_sheets(path: Path, fmt: str) -> list[str]:
    """Worksheet names of the workbook at ``path`` without loading any sheet."""
    _every_sheet(path, path, fmt)  # the parser loads every sheet of an .ods or .xls on opening
    workbook = _open(path, path, fmt)
    try:
        return worksheet_names(workbook)
    finally:
        workbook.close()


def choose_sheet(workbook: calamine.CalamineWorkbook, sheet: str | int | None, path: Path) -> str:
    """Resolve a sheet name, 0-based position or None (first visible worksheet) to a name.

    Names match exactly, then trimmed and case-insensitively; a text of digits that is
    no sheet's name is taken as a position.
    """
    names = worksheet_names(workbook)
    listing = ", ".join(repr(name) for name in names)
    if not names:
        raise SheetError(f"'{path.name}' has no worksheets")
    if sheet is None:
        visible = calamine.SheetVisibleEnum.Visible
        shown = [m.name for m in workbook.sheets_metadata if m.visible == visible and m.name in names]
        return (shown or names)[0]
    if isinstance(sheet, bool) or not isinstance(sheet, int | str):
        raise SheetError(f"sheet must be a name or a 0-based position, not {sheet!r}")
    if isinstance(sheet, str) and sheet.strip().isdigit() and sheet not in names:
        sheet = int(sheet)  # "--sheet 1" on a command line: a position, unless a sheet is named so
    if isinstance(sheet, int):
        if 0 <= sheet < len(names):
            return names[sheet]
        raise SheetError(
            f"sheet position {sheet} does not exist in '{path.name}' (positions start at 0); "
            f"it has {len(names)} sheet(s): {listing}"
        )
    if sheet in names:
        return sheet
    folded = [name for name in names if name.strip().casefold() == sheet.strip().casefold()]
    if len(folded) == 1:
        return folded[0]
    raise SheetError(f"sheet '{sheet}' not found in '{path.name}'; available sheets: {listing}")


def read_workbook(data: bytes, path: Path, fmt: str, sheet: str | int | None) -> WorkbookGrid:
    """Return the chosen worksheet's cells as a 2-D object array starting at cell A1."""
    extents = _every_sheet(data, path, fmt)
    workbook = _open(data, path, fmt)
    try:
        name = choose_sheet(workbook, sheet, path)
        extent = extents.get(name, Extent()) if fmt in _EVERY_SHEET else check_extent(data, path, fmt, name)
        try:
            worksheet = workbook.get_sheet_by_name(name)
            if worksheet.height * worksheet.width > MAX_CELLS:
                raise SheetError(
                    f"sheet '{name}' of '{path.name}' spans {worksheet.height} x {worksheet.width} cells, "
                    f"more than Kinfill reads ({MAX_CELLS:,}); delete unused rows and columns"
                )
            rows = worksheet.to_python(skip_empty_area=False)
            merges = tuple(worksheet.merged_cell_ranges or ())
        except SheetError:
            raise
        except BaseException as error:
            raise _calamine_error(error, path, fmt) from None
    finally:
        workbook.close()
    cells = rows_to_grid(rows)
    _mark_formula_cells(cells, extent)
    return WorkbookGrid(cells=cells, sheet=name, merges=merges, formulas=extent.formulas)


#: Formats whose parser loads every sheet when it opens the file: all are measured first.
_EVERY_SHEET = ("ods", "xls")


def _every_sheet(data: bytes | Path, path: Path, fmt: str) -> dict[str, Extent]:
    """Measure every sheet of an .ods or .xls file before the parser opens it ({} for others)."""
    if fmt == "ods":
        return ods_extents(data, path)
    if fmt == "xls":
        return xls_extents(data if isinstance(data, bytes) else data.read_bytes(), path)
    return {}


def _mark_formula_cells(cells: np.ndarray, extent: Extent) -> None:
    """Put formula errors and formulas without a stored value into the cells calamine left empty."""
    height, width = cells.shape
    for (row, column), text in extent.errors.items():
        if row < height and column < width and cells[row, column] == "":
            cells[row, column] = FormulaError(text)
    for row, column in extent.no_value:
        if row < height and column < width and cells[row, column] == "":
            cells[row, column] = NO_VALUE
