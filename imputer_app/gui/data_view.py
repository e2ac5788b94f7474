"""The middle of the window: legend, data table, gap map and remarks, with cell navigation.

The table shows the sheet's model through a :class:`~imputer_app.gui.row_filter.RowFilterModel`
(all rows, only rows with fills, only weak fills); every position this view takes or
gives (``select_position``, ``source_index``, the gap map's clicks) is a sheet row and
column, whatever the filter hides.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
from PySide6.QtCore import QItemSelectionModel, QModelIndex, QPoint, Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QMenu,
    QSplitter,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.column_menu import role_menu
from imputer_app.gui.fill_navigation import RowBar, filter_actions, next_position
from imputer_app.gui.gap_map import GapMap
from imputer_app.gui.legend import Legend
from imputer_app.gui.read_bar import ReadBar
from imputer_app.gui.row_filter import RowFilterModel
from imputer_app.gui.table_model import SheetTableModel

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.gui.sheet_facts import SheetFacts
    from imputer_app.gui.state import Session
    from imputer_app.sheets import Sheet


#: Text as wide as the marks in front of a filled value (fill symbol, weak support).
FILL_MARK_ROOM = "\u25c7 ? "
#: Rows whose text sets a column's width; pixels either side of a cell's text; widest column.
WIDTH_SAMPLE, MARGIN, MAX_WIDTH = 50, 6, 400


class DataView(QWidget):
    """The sheet as a table with a fill layer, its legend, and the map of gaps.

    With a ``session``, the gap map draws only the plan's similarity and fill columns,
    and the column headers' menu sets a column's role in the session's plan.

    Signals
    -------
    cell_not_found(str)
        A jump asked for a row and column that the table does not have (the message).
    """

    cell_not_found = Signal(str)

    def __init__(self, parent: QWidget | None = None, session: Session | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("dataArea")
        self.setAccessibleName("Data")
        self.session = session
        self._facts: SheetFacts | None = None
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
        self.row_bar = RowBar(self)
        self.row_bar.mode_chosen.connect(self.set_row_filter)
        self.row_bar.step.connect(lambda back: self.next_weak_fill(backwards=back))
        self.row_bar.hide()
        layout.addWidget(self.row_bar)
        self.model = SheetTableModel(self)
        self.rows = RowFilterModel(self.model, self)
        self.table = QTableView(self)
        self.table.setObjectName("dataTable")
        self.table.setAccessibleName("Data table")
        self.table.setToolTip(
            "The sheet with its gaps; select a filled cell to see its donors. "
            "Right-click a column's name to set its role."
        )
        self.table.setModel(self.rows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setTabKeyNavigation(False)
        self.table.setWordWrap(False)
        # column widths measured on 50 rows: quick on any length of sheet
        self.table.horizontalHeader().setResizeContentsPrecision(WIDTH_SAMPLE)
        # every row as high as the next: the view never measures a million rows
        self.table.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 6)
        self.table.horizontalHeader().setDefaultSectionSize(96)
        self.table.verticalScrollBar().valueChanged.connect(lambda _v: self._update_viewport())
        self.table.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        self.table.customContextMenuRequested.connect(self._table_menu)
        header = self.table.horizontalHeader()
        header.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        header.customContextMenuRequested.connect(self._header_menu)
        self.filter_menu, self.filter_actions = filter_actions(self)
        for action in self.filter_actions.values():
            action.triggered.connect(lambda _c=False, a=action: self.set_row_filter(str(a.data())))
        self._table_actions: list[QAction] = []
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
        if session is not None:
            session.subscribe(self._on_session)

    # ------------------------------------------------------------------ content
    def use_facts(self, facts: SheetFacts | None) -> None:
        """Take the table arrays of the sheet about to be shown, made in the reading worker."""
        self._facts = facts

    def set_sheet(self, sheet: Sheet | None) -> None:
        """Show a new sheet (no fill layer), from arrays made beforehand (:meth:`use_facts`) if any."""
        facts, self._facts = self._facts, None
        self.model.set_sheet(sheet, facts.arrays if facts is not None and facts.sheet is sheet else None)
        self.set_layer(None, "applied")
        self._fit_columns()

    def _fit_columns(self, grow_only: bool = False) -> None:
        """Widths from the header and the first rows' text, with room for a fill's marks ("◇ ?").

        Measured here rather than by the view, which asks the model for every role of
        every cell it measures (a tenth of a second on the window's thread), on the same
        few rows for a sheet and for each fill layer; ``grow_only`` (a fill layer) only
        widens, so that a stand-in shown beside its entry ("▼ 0.012 (<0.02)") is not cut.
        """
        metrics = self.table.fontMetrics()
        header = self.table.horizontalHeader().fontMetrics()
        room = metrics.horizontalAdvance(FILL_MARK_ROOM) + 2 * MARGIN
        rows = range(min(self.model.rowCount(), WIDTH_SAMPLE))
        for column in range(self.model.columnCount()):
            title = str(self.model.headerData(column, Qt.Orientation.Horizontal) or "")
            texts = (self.model.display_text(r, column) for r in rows)
            widest = max((metrics.horizontalAdvance(text) for text in texts), default=0)
            named = max((header.horizontalAdvance(line) for line in title.splitlines()), default=0)
            width = min(MAX_WIDTH, max(widest + room, named + 3 * MARGIN))
            if not grow_only or width > self.table.columnWidth(column):
                self.table.setColumnWidth(column, width)

    def set_layer(self, result: FillResult | None, kind: str) -> None:
        """Draw a fill over the sheet as ``"preview"`` or ``"applied"``; redraw the map."""
        self.model.set_layer(result, kind)
        if result is not None:
            self._fit_columns(grow_only=True)
        if result is None and self.rows.mode != "all":
            self.set_row_filter("all")  # no fill: a filter on fills would hide every row
        self._draw_map()
        self._update_viewport()
        self._show_row_counts()

    def set_layer_note(self, text: str) -> None:
        """Say above the table which fill it shows ('' hides the line)."""
        self.layer_note.setText(text)
        self.layer_note.setVisible(bool(text))

    def _on_session(self, event: str) -> None:
        if event == "plan":
            self._draw_map()

    def map_columns(self) -> list[int]:
        """Table positions of the columns the gap map draws: the plan's similarity and fill columns.

        Without a session, or while the plan leaves its column lists to the defaults,
        every column is drawn.
        """
        names = self.model.column_names()
        plan = self.session.plan if self.session is not None else None
        if plan is None or plan.similarity_columns is None or plan.fill_columns is None:
            return list(range(len(names)))
        used = set(plan.similarity_columns) | set(plan.fill_columns)
        return [j for j, name in enumerate(names) if name in used]

    def _draw_map(self) -> None:
        model = self.model
        self.gap_map.set_cells(
            model.codes,
            model.fill_codes,
            model.layer_kind,
            model.column_names(),
            self.map_columns(),
            marked=model.marked,
        )

    # ------------------------------------------------------------------ rows
    def set_row_filter(self, mode: str) -> None:
        """Show all rows (``"all"``), only rows with fills (``"fills"``) or with weak fills (``"weak"``)."""
        current = self.current_position()
        self.rows.set_mode(mode)
        self.filter_actions[mode].setChecked(True)
        self._show_row_counts()
        if current is not None and self.rows.proxy_row(current[0]) >= 0:
            self.select_position(*current)
        self._update_viewport()

    def _show_row_counts(self) -> None:
        shown = self.model.layer is not None
        self.row_bar.setVisible(shown)
        for key, action in self.filter_actions.items():
            action.setEnabled(shown or key == "all")  # without a fill, no row has one
        model = self.model
        self.row_bar.show_counts(
            self.rows.mode, self.rows.rowCount(), model.rowCount(), int(model.weak_cells.size), model.n_filled
        )

    def source_index(self, index: QModelIndex) -> QModelIndex:
        """The sheet model's index of a table index (the table shows the filtered rows)."""
        return self.rows.mapToSource(index) if index.isValid() else QModelIndex()

    def current_position(self) -> tuple[int, int] | None:
        """Sheet ``(row, column)`` of the table's current cell, or None."""
        index = self.source_index(self.table.currentIndex())
        return (index.row(), index.column()) if index.isValid() else None

    # --------------------------------------------------------------- navigation
    def select_position(self, row: int, column: int) -> None:
        """Make a sheet cell current and scroll to it (showing all rows if the filter hides it)."""
        if not self.model.index(row, column).isValid():
            return
        if self.rows.proxy_row(row) < 0:
            self.set_row_filter("all")
        index = self.rows.mapFromSource(self.model.index(row, column))
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
        self._go_to_next(self.model.gap_cells, self.rows.shown_rows() if self.rows.mode != "all" else None)

    def next_weak_fill(self, backwards: bool = False) -> None:
        """Go to the next (or previous) cell filled with weak support, wrapping around."""
        if not self._go_to_next(self.model.weak_cells, None, backwards):
            self.row_bar.say("No weak fills in the fill shown.")

    def previous_weak_fill(self) -> None:
        """Go to the previous cell filled with weak support."""
        self.next_weak_fill(backwards=True)

    def _go_to_next(self, hits: np.ndarray, shown: np.ndarray | None, backwards: bool = False) -> bool:
        """Go to the next of the cells at flat positions ``hits`` (only in the ``shown`` rows, if given)."""
        shape = self.model.codes.shape
        if shown is not None and hits.size:
            hits = hits[np.isin(hits // max(shape[1], 1), shown)]  # only the rows the filter shows
        found = next_position(hits, shape, self.current_position(), backwards)
        if found is None:
            return False
        self.select_position(*found)
        return True

    def _update_viewport(self) -> None:
        first = self.table.rowAt(0)
        last = self.table.rowAt(self.table.viewport().height() - 1)
        shown = self.rows.rowCount()
        if shown == 0:
            self.gap_map.set_viewport(0, -1)
            return
        first, last = max(first, 0), last if last >= 0 else shown - 1
        self.gap_map.set_viewport(self.rows.source_row(first), self.rows.source_row(last))

    # ------------------------------------------------------------------- menus
    def add_table_actions(self, actions: list[QAction]) -> None:
        """Put the window's navigation actions (next gap, weak fills) into the table's menu."""
        self._table_actions = list(actions)

    def table_menu(self) -> QMenu:
        """The table's context menu: the navigation actions and the row filter."""
        menu = QMenu(self.table)
        menu.setObjectName("tableMenu")
        menu.addActions(self._table_actions)
        if self._table_actions:
            menu.addSeparator()
        menu.addMenu(self.filter_menu)
        return menu

    def _table_menu(self, point: QPoint) -> None:
        self.table_menu().popup(self.table.viewport().mapToGlobal(point))

    def header_menu(self, section: int) -> QMenu | None:
        """The role menu of the column at header ``section`` (None without a session or sheet)."""
        names = self.model.column_names()
        if self.session is None or not self.session.has_sheet or not 0 <= section < len(names):
            return None
        return role_menu(self.table, self.session, names[section], names)

    def _header_menu(self, point: QPoint) -> None:
        header = self.table.horizontalHeader()
        menu = self.header_menu(header.logicalIndexAt(point))
        if menu is not None:
            menu.popup(header.mapToGlobal(point))
