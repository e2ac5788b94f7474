"""The donor panel: where one cell's filled value came from and how sure it is.

The words come from :func:`imputer_app.gui.cell_story.describe_cell` (Qt-free); this
widget lays them out: a headline, a short list of facts (value, method, k used,
spread, support, note), a plain-words account of the support and the donors,
nearest first.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from PySide6.QtCore import QModelIndex, Qt, Signal
from PySide6.QtGui import QKeyEvent
from PySide6.QtWidgets import (
    QAbstractItemView,
    QFormLayout,
    QHeaderView,
    QLabel,
    QStyle,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.cell_story import CellStory, describe_cell
from imputer_app.gui.formatting import Cell, format_label, format_value, number_cell
from imputer_app.gui.records_model import RAW_ROLE, RecordsModel

EMPTY_TEXT = "Select a cell in the table to see where its value came from."

DONOR_HEADERS = ("Donor row", "Distance", "Donor value")
DONOR_TIPS = (
    "Row of the sheet that lent its value",
    "Distance to the filled row over the similarity columns (after scaling and weights); smaller is closer",
    "The donor's value in this column",
)


class DonorTable(QTableView):
    """Donor rows, nearest first; Enter or a double-click asks to show that row."""

    row_chosen = Signal(int)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        """Enter or Return on a donor emits :attr:`row_chosen`; other keys as usual."""
        if event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and self.currentIndex().isValid():
            self.row_chosen.emit(self.currentIndex().row())
            return
        super().keyPressEvent(event)


class DonorPanel(QWidget):
    """Show the fill log's account of one cell: value, method, support and donors.

    Signals
    -------
    jump_requested(row_label, column)
        The user chose a donor (Enter or double-click): show that row of the column.
    """

    jump_requested = Signal(object, str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("donorPanel")
        self.setAccessibleName("Donors of the selected cell")
        self._story = CellStory("none", EMPTY_TEXT)
        self._column = ""
        self._build()
        self.clear()

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        layout = QVBoxLayout(self)
        self.headline = self._label("donorHeadline", "Selected cell",
                                    "What happened to the selected cell")
        font = self.headline.font()
        font.setBold(True)
        self.headline.setFont(font)
        layout.addWidget(self.headline)

        self.facts_box = QWidget(self)
        self.facts_box.setObjectName("donorFacts")
        self.facts_box.setAccessibleName("Facts about the filled value")
        self.facts = QFormLayout(self.facts_box)
        self.facts.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.facts_box)

        self.support_icon = QLabel(self)
        self.support_icon.setObjectName("donorSupportIcon")
        self.support_icon.setAccessibleName("Weak support warning")
        warning = self.style().standardIcon(QStyle.StandardPixmap.SP_MessageBoxWarning)
        self.support_icon.setPixmap(warning.pixmap(16, 16))
        self.support_text = self._label("donorSupportText", "Support of the filled value",
                                        "Weak support: the nearest donor is farther than 95% of "
                                        "nearest-donor distances in this sheet")
        support_row = QWidget(self)
        support_layout = QFormLayout(support_row)
        support_layout.setContentsMargins(0, 0, 0, 0)
        support_layout.addRow(self.support_icon, self.support_text)
        layout.addWidget(support_row)

        self.donors_title = self._label("donorTableTitle", "Donors", "The donor rows, nearest first")
        self.donors_title.setText("Donors, nearest first:")
        layout.addWidget(self.donors_title)
        self.model = RecordsModel(DONOR_HEADERS, DONOR_TIPS, self)
        self.table = DonorTable(self)
        self.table.setObjectName("donorTable")
        self.table.setAccessibleName("Donor rows, nearest first")
        self.table.setToolTip("Donor rows, nearest first. Enter or double-click shows the row in the sheet.")
        self.table.setModel(self.model)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setTabKeyNavigation(False)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 8)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.table.doubleClicked.connect(lambda index: self._choose(index.row()))
        self.table.row_chosen.connect(self._choose)
        layout.addWidget(self.table, 1)
        layout.addStretch(0)  # keeps the text at the top when there is no donor table

    def _label(self, name: str, accessible: str, tip: str) -> QLabel:
        label = QLabel(self)
        label.setObjectName(name)
        label.setAccessibleName(accessible)
        label.setToolTip(tip)
        label.setWordWrap(True)
        label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        return label

    # ------------------------------------------------------------------ API
    def show_cell(
        self, result: Any, row_label: Any, column: str, *, notes: pd.DataFrame | None = None
    ) -> None:
        """Show what the fill did to one cell.

        Parameters
        ----------
        result : FillResult or None
            The fill preview (``None`` shows the empty state).
        row_label : object
            The cell's row label (as in ``result.frame.index``).
        column : str
            The cell's column.
        notes : DataFrame, optional
            The sheet's ``cell_notes``; gives a censored cell's original text ("<0.05").
        """
        self._column = column
        self._show(describe_cell(result, row_label, column, notes))

    def clear(self) -> None:
        """Show the empty state (no cell selected)."""
        self._column = ""
        self._show(CellStory("none", EMPTY_TEXT))

    @property
    def story(self) -> CellStory:
        """The account currently shown (Qt-free; for tests and the status bar)."""
        return self._story

    # ------------------------------------------------------------------ internals
    def _show(self, story: CellStory) -> None:
        self._story = story
        self.headline.setText(story.headline)
        self.headline.setAccessibleDescription(story.headline)
        while self.facts.rowCount():
            self.facts.removeRow(0)
        for name, text in story.facts:
            value = self._label("donorFact_" + "".join(ch for ch in name if ch.isalnum()), name, name)
            value.setText(text)
            self.facts.addRow(f"{name}:", value)
        self.facts_box.setVisible(bool(story.facts))
        self.support_text.setText(story.support_text)
        self.support_text.setVisible(bool(story.support_text))
        self.support_icon.setVisible(story.support == "weak")
        has_donors = bool(story.donors)
        self.donors_title.setVisible(has_donors)
        self.table.setVisible(has_donors)
        self.model.set_rows([self._donor_row(d) for d in story.donors])

    @staticmethod
    def _donor_row(donor: Any) -> list[Cell]:
        label = Cell(format_label(donor.label), donor.label, "Row label in the sheet")
        distance = number_cell(donor.distance, digits=4)
        value = donor.value
        shown = Cell(value, value) if isinstance(value, str) else Cell(format_value(value), value)
        return [label, distance, shown]

    def _choose(self, row: int) -> None:
        if 0 <= row < self.model.rowCount() and self._column:
            self.jump_requested.emit(self.model.index(row, 0).data(RAW_ROLE), self._column)

    def donor_index(self, row: int) -> QModelIndex:
        """Return the model index of donor ``row`` (first column), for keyboard tests."""
        return self.model.index(row, 0)
