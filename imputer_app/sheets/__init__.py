"""Read and write spreadsheets, keeping every cell's state (no Qt here)."""

from imputer_app.sheets._model import CELL_STATES, ColumnInfo, Sheet, SourceInfo
from imputer_app.sheets._read import list_sheets, read_sheet
from imputer_app.sheets._write import write_result

__all__ = ["CELL_STATES", "ColumnInfo", "Sheet", "SourceInfo", "list_sheets", "read_sheet", "write_result"]
