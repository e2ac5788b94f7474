"""Read and write spreadsheets, keeping every cell's state (no Qt here).

Also reads an export back: :func:`read_export_plan` returns the plan an earlier export
recorded, beside the writer that records it.
"""

from imputer_app.sheets._atomic import same_file
from imputer_app.sheets._export_plan import read_export_plan
from imputer_app.sheets._methods_text import methods_paragraph
from imputer_app.sheets._model import CELL_STATES, ColumnInfo, MarkerFound, Sheet, SourceInfo
from imputer_app.sheets._pictures import fill_pictures, picture_files, scatter_partner, write_picture_files
from imputer_app.sheets._read import list_sheets, read_sheet
from imputer_app.sheets._run_record import RecoveryEvidence
from imputer_app.sheets._write import export_limits, export_side_files, write_result

__all__ = [
    "CELL_STATES",
    "ColumnInfo",
    "MarkerFound",
    "RecoveryEvidence",
    "Sheet",
    "SourceInfo",
    "export_limits",
    "export_side_files",
    "fill_pictures",
    "list_sheets",
    "methods_paragraph",
    "picture_files",
    "read_export_plan",
    "read_sheet",
    "same_file",
    "scatter_partner",
    "write_picture_files",
    "write_result",
]
