"""Which rows of the data table are shown: all, only rows with fills, or only weak fills.

:class:`RowFilterModel` sits between the sheet's table model and the view. It keeps the
shown rows as one sorted numpy array of sheet rows, so switching the filter on a
200,000-row sheet costs one vectorised pass over the fill codes and a model reset,
never a Python call per row. Columns are passed through unchanged.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from PySide6.QtCore import QAbstractProxyModel, QModelIndex, QObject, QPersistentModelIndex, Qt

from imputer_app.gui.markers import FILL_WEAK, NO_FILL
from imputer_app.gui.table_model import SheetTableModel

Index = QModelIndex | QPersistentModelIndex

#: The filters, in menu order: key -> label.
ROW_FILTERS: dict[str, str] = {
    "all": "All rows",
    "fills": "Only rows with fills",
    "weak": "Only rows with weak fills",
}
#: What every shown cell allows (made once: asked for every painted cell).
_CELL_FLAGS = Qt.ItemFlag.ItemIsSelectable | Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemNeverHasChildren
#: Said in every column header's tooltip: the header's menu sets the column's role.
HEADER_HINT = "Right-click to make it a similarity, fill or carried column."


def rows_to_show(fill_codes: np.ndarray, mode: str) -> np.ndarray:
    """Sheet rows kept by filter ``mode`` (``"all"``, ``"fills"`` or ``"weak"``), ascending.

    >>> codes = np.array([[0, 0], [1, 0], [0, 2]], dtype=np.int8)
    >>> rows_to_show(codes, "fills").tolist(), rows_to_show(codes, "weak").tolist()
    ([1, 2], [2])
    """
    if mode not in ROW_FILTERS:
        raise ValueError(f"row filter must be one of {', '.join(ROW_FILTERS)}; got {mode!r}")
    n_rows = fill_codes.shape[0]
    if mode == "all":
        return np.arange(n_rows, dtype=np.intp)
    hit = fill_codes == FILL_WEAK if mode == "weak" else fill_codes != NO_FILL
    return np.flatnonzero(hit.any(axis=1)).astype(np.intp)


class RowFilterModel(QAbstractProxyModel):
    """The sheet's table model with only the rows of the chosen filter (see :data:`ROW_FILTERS`)."""

    def __init__(self, source: SheetTableModel, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._mode = "all"
        self._rows = np.zeros(0, dtype=np.intp)
        self._source = source
        self.setSourceModel(source)
        source.modelAboutToBeReset.connect(self.beginResetModel)
        source.modelReset.connect(self._after_source_reset)
        source.dataChanged.connect(self._on_data_changed)
        source.headerDataChanged.connect(self._on_header_changed)
        self._rows = rows_to_show(source.fill_codes, self._mode)

    # ------------------------------------------------------------------ filter
    @property
    def mode(self) -> str:
        """The filter in force: ``"all"``, ``"fills"`` or ``"weak"``."""
        return self._mode

    def set_mode(self, mode: str) -> None:
        """Show the rows of filter ``mode`` (see :data:`ROW_FILTERS`)."""
        rows = rows_to_show(self._source.fill_codes, mode)
        self.beginResetModel()
        self._mode, self._rows = mode, rows
        self.endResetModel()

    def shown_rows(self) -> np.ndarray:
        """Sheet rows shown, in order (a copy)."""
        return self._rows.copy()

    def source_row(self, row: int) -> int:
        """The sheet row shown at position ``row``."""
        return int(self._rows[row])

    def proxy_row(self, source_row: int) -> int:
        """The shown position of a sheet row, or -1 when the filter hides it."""
        pos = int(np.searchsorted(self._rows, source_row))
        return pos if pos < self._rows.size and self._rows[pos] == source_row else -1

    def _after_source_reset(self) -> None:
        self._rows = rows_to_show(self._source.fill_codes, self._mode)
        self.endResetModel()

    def _on_data_changed(self, top_left: QModelIndex, bottom_right: QModelIndex, roles: Any = ()) -> None:
        if self._mode == "all":
            # the rows are the sheet's rows: pass the change on as it is
            first = self.index(top_left.row(), top_left.column())
            self.dataChanged.emit(first, self.index(bottom_right.row(), bottom_right.column()))
            return
        rows = rows_to_show(self._source.fill_codes, self._mode)
        if not np.array_equal(rows, self._rows):
            self.set_mode(self._mode)  # another fill: other rows have fills
        elif rows.size:  # the same rows (a preview applied, colours): keep the current cell
            self.dataChanged.emit(self.index(0, 0), self.index(rows.size - 1, self.columnCount() - 1))

    def _on_header_changed(self, orientation: Qt.Orientation, first: int, last: int) -> None:
        if orientation == Qt.Orientation.Horizontal:
            self.headerDataChanged.emit(orientation, first, last)
        elif self.rowCount():
            self.headerDataChanged.emit(orientation, 0, self.rowCount() - 1)

    # ------------------------------------------------------------ Qt interface
    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008
        """Rows shown."""
        return 0 if parent.isValid() else int(self._rows.size)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008
        """Every column of the sheet."""
        return 0 if parent.isValid() else self._source.columnCount()

    def index(self, row: int, column: int, parent: Index = QModelIndex()) -> QModelIndex:  # noqa: B008
        """A flat table: every index has the root as parent."""
        if parent.isValid() or not (0 <= row < self._rows.size and 0 <= column < self.columnCount()):
            return QModelIndex()
        return self.createIndex(row, column)

    def parent(self, _child: Index = QModelIndex()) -> QModelIndex:  # type: ignore[override]  # noqa: B008
        """No index has a parent."""
        return QModelIndex()

    def mapToSource(self, proxy_index: Index) -> QModelIndex:
        """The sheet model's index of a shown cell."""
        if not proxy_index.isValid() or proxy_index.row() >= self._rows.size:
            return QModelIndex()
        return self._source.index(int(self._rows[proxy_index.row()]), proxy_index.column())

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        """The sheet model's data of a shown cell, asked by position (no index is made per call)."""
        row = index.row()
        if not index.isValid() or row >= self._rows.size:
            return None
        return self._source.cell_data(int(self._rows[row]), index.column(), role)

    def flags(self, index: Index) -> Qt.ItemFlag:
        """Every shown cell can be selected (the sheet model's flags, without asking it per cell)."""
        return _CELL_FLAGS if index.isValid() else Qt.ItemFlag.NoItemFlags

    def mapFromSource(self, source_index: Index) -> QModelIndex:
        """The shown index of a sheet cell (invalid when the filter hides its row)."""
        if not source_index.isValid():
            return QModelIndex()
        row = self.proxy_row(source_index.row())
        return self.index(row, source_index.column()) if row >= 0 else QModelIndex()

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        """Column headers as they are; row headers keep the sheet's row numbers."""
        if orientation == Qt.Orientation.Vertical:
            if not 0 <= section < self._rows.size:
                return None
            return self._source.headerData(int(self._rows[section]), orientation, role)
        value = self._source.headerData(section, orientation, role)
        if role == Qt.ItemDataRole.ToolTipRole and value:
            value = f"{value}\n{HEADER_HINT}"
        return value
