"""A small read-only table model for the side panels (recovery numbers, donors, unfilled cells).

The panels build their rows as plain :class:`~imputer_app.gui.formatting.Cell` records
(Qt-free) and hand them to :class:`RecordsModel`, which only displays them. Each cell
keeps its raw value under :data:`RAW_ROLE`, so sorting is by number rather than by text
and tests can compare the shown numbers with the report or fill log exactly.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QFont

from imputer_app.gui.flat_model import FlatTableModel, Index
from imputer_app.gui.formatting import Cell

#: Role holding a cell's raw value (float, int or str), used for sorting and by tests.
RAW_ROLE = int(Qt.ItemDataRole.UserRole) + 1


class RecordsModel(FlatTableModel):
    """Read-only rows of :class:`Cell` under fixed headers.

    Parameters
    ----------
    headers : sequence of str
        Column titles.
    header_tips : sequence of str, optional
        Tooltip per column title.
    """

    def __init__(
        self, headers: Sequence[str] = (), header_tips: Sequence[str] = (), parent: QObject | None = None
    ) -> None:
        super().__init__(parent)
        self._headers = list(headers)
        self._tips = list(header_tips)
        self._rows: list[list[Cell]] = []
        self._bold = QFont()
        self._bold.setBold(True)

    # ------------------------------------------------------------------ content
    def set_rows(
        self,
        rows: Sequence[Sequence[Cell]],
        headers: Sequence[str] | None = None,
        header_tips: Sequence[str] | None = None,
    ) -> None:
        """Replace every row (and optionally the headers) at once."""
        self.beginResetModel()
        if headers is not None:
            self._headers = list(headers)
            self._tips = list(header_tips or ())
        self._rows = [list(row) for row in rows]
        self.endResetModel()

    def cell(self, row: int, column: int) -> Cell:
        """Return the :class:`Cell` at ``(row, column)``."""
        return self._rows[row][column]

    def headers(self) -> list[str]:
        """Return the column titles."""
        return list(self._headers)

    # ------------------------------------------------------------------ Qt model
    def table_shape(self) -> tuple[int, int]:
        """Number of rows and of columns."""
        return len(self._rows), len(self._headers)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        """Text, raw value (:data:`RAW_ROLE`), tooltip, bold font or alignment of a cell."""
        if not index.isValid():
            return None
        cell = self._rows[index.row()][index.column()]
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.AccessibleTextRole):
            return cell.text
        if role == RAW_ROLE:
            return cell.value
        if role == Qt.ItemDataRole.ToolTipRole:
            return cell.tooltip or None
        if role == Qt.ItemDataRole.FontRole and cell.strong:
            return self._bold
        if role == Qt.ItemDataRole.TextAlignmentRole and isinstance(cell.value, float | int):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        """Column titles and their tooltips (rows have no titles)."""
        if orientation != Qt.Orientation.Horizontal or not 0 <= section < len(self._headers):
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return self._headers[section]
        if role == Qt.ItemDataRole.ToolTipRole and section < len(self._tips):
            return self._tips[section] or None
        return None
