"""The middle of the window: legend, data table, gap map and remarks, with cell navigation."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QItemSelectionModel, Qt, Signal
from PySide6.QtWidgets import QAbstractItemView, QLabel, QSplitter, QTableView, QVBoxLayout, QWidget

from imputer_app.gui.gap_map import GapMap
from imputer_app.gui.legend import Legend
from imputer_app.gui.markers import CENSORED, MISSING, TEXT
from imputer_app.gui.read_bar import ReadBar
from imputer_app.gui.table_model import SheetTableModel

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet


class DataView(QWidget):
    """The sheet as a table with a fill layer, its legend, and the map of gaps.

    Signals
    -------
    cell_not_found(str)
        A jump asked for a row and column that the table does not have (the message).
    """

    cell_not_found = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("dataArea")
        self.setAccessibleName("Data")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        self.read_bar = ReadBar(self)
        layout.addWidget(self.read_bar)
        self.legend = Legend(self)
        layout.addWidget(self.legend)
        self.layer_note = QLabel(self)
        self.layer_note.setObjectName("layerNote")
        self.layer_note.setAccessibleName("Which fill the table shows")
        self.layer_note.setWordWrap(True)
        self.layer_note.setStyleSheet(
            "QLabel { background: palette(highlight); color: palette(highlighted-text); padding: 3px; }"
        )
        self.layer_note.hide()
        layout.addWidget(self.layer_note)
        self.model = SheetTableModel(self)
        self.table = QTableView(self)
        self.table.setObjectName("dataTable")
        self.table.setAccessibleName("Data table")
        self.table.setToolTip("The sheet with its gaps; select a filled cell to see its donors.")
        self.table.setModel(self.model)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setTabKeyNavigation(False)
        self.table.setWordWrap(False)
        # column widths measured on 50 rows: quick on any length of sheet
        self.table.horizontalHeader().setResizeContentsPrecision(50)
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 6)
        self.table.horizontalHeader().setDefaultSectionSize(96)
        self.table.verticalScrollBar().valueChanged.connect(lambda _v: self._update_viewport())
        self.gap_map = GapMap(self)
        self.gap_map.cell_activated.connect(self.select_position)
        self.splitter = QSplitter(Qt.Orientation.Horizontal, self)
        self.splitter.setObjectName("tableSplitter")
        self.splitter.setAccessibleName("Table and gap map")
        self.splitter.addWidget(self.table)
        self.splitter.addWidget(self.gap_map)
        self.splitter.setStretchFactor(0, 1)
        layout.addWidget(self.splitter, 1)
        self.notice = QLabel(self)
        self.notice.setObjectName("dataNotice")
        self.notice.setAccessibleName("Remarks about the sheet or the fill")
        self.notice.setWordWrap(True)
        layout.addWidget(self.notice)
        QWidget.setTabOrder(self.table, self.gap_map)

    # ------------------------------------------------------------------ content
    def set_sheet(self, sheet: Sheet | None) -> None:
        """Show a new sheet (no fill layer)."""
        self.model.set_sheet(sheet)
        self.set_layer(None, "applied")
        # widths from the sheet's own cells, once: measuring on every fill layer cost
        # a quarter second a time on a long sheet, on the window's thread
        self.table.resizeColumnsToContents()

    def set_layer(self, result: FillResult | None, kind: str) -> None:
        """Draw a fill over the sheet as ``"preview"`` or ``"applied"``; redraw the map."""
        self.model.set_layer(result, kind)
        self.gap_map.set_cells(
            self.model.codes, self.model.fill_codes, self.model.layer_kind, self.model.column_names()
        )
        self._update_viewport()

    def set_layer_note(self, text: str) -> None:
        """Say above the table which fill it shows ('' hides the line)."""
        self.layer_note.setText(text)
        self.layer_note.setVisible(bool(text))

    # --------------------------------------------------------------- navigation
    def select_position(self, row: int, column: int) -> None:
        """Make a table cell current and scroll to it."""
        index = self.model.index(row, column)
        if not index.isValid():
            return
        self.table.selectionModel().setCurrentIndex(index, QItemSelectionModel.SelectionFlag.ClearAndSelect)
        self.table.scrollTo(index, QAbstractItemView.ScrollHint.PositionAtCenter)
        self.table.setFocus(Qt.FocusReason.OtherFocusReason)

    def select_cell(self, row_label: Any, column: str) -> None:
        """Select the cell of a row label and column (the panels' jump requests)."""
        found = self.model.find(row_label, column)
        if found is None:
            self.cell_not_found.emit(f"Row {row_label}, {column} is not in the table.")
            return
        self.select_position(*found)

    def next_gap(self) -> None:
        """Go to the next gap, unreadable or censored cell after the current one (wraps around)."""
        codes = self.model.codes
        if codes.size == 0:
            return
        current = self.table.currentIndex()
        start = current.row() * codes.shape[1] + current.column() + 1 if current.isValid() else 0
        flat = ((codes == MISSING) | (codes == TEXT) | (codes == CENSORED)).ravel()
        hits = flat[start:].nonzero()[0]
        hit = start + int(hits[0]) if hits.size else (int(flat.nonzero()[0][0]) if flat.any() else None)
        if hit is not None:
            self.select_position(*divmod(hit, codes.shape[1]))

    def _update_viewport(self) -> None:
        first = self.table.rowAt(0)
        last = self.table.rowAt(self.table.viewport().height() - 1)
        rows = self.model.rowCount()
        self.gap_map.set_viewport(max(first, 0), last if last >= 0 else rows - 1)
