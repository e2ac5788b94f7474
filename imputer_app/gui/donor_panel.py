"""The donor panel: where one cell's filled value came from and how sure it is.

The words come from :func:`imputer_app.gui.cell_story.describe_cell` (Qt-free); this
widget lays them out: a headline, a short list of facts (value, method, k used,
spread, support, note), a plain-words account of the support and the donors,
nearest first, each named by its sheet row and, where the sheet has an identifier
column, by the sample ID the lab uses. A double-click (or Enter) on a donor shows
its row in the table.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import pandas as pd
from PySide6.QtCore import QModelIndex, Qt, Signal
from PySide6.QtWidgets import QFormLayout, QGridLayout, QHeaderView, QLabel, QStyle, QVBoxLayout, QWidget

from imputer_app.gui.cell_story import CellStory, describe_cell
from imputer_app.gui.formatting import Cell, common_decimals, fixed_cell, format_label
from imputer_app.gui.records_model import RAW_ROLE, RecordsModel
from imputer_app.gui.widgets import RecordTable, named, text_label

if TYPE_CHECKING:
    from imputer_app.engine import FillResult

EMPTY_TEXT = "Select a cell in the table to see where its value came from."

DONOR_HEADERS = ("Donor row", "Sample ID", "Distance", "Donor value")
DONOR_TIPS = (
    "Row of the sheet that lent its value",
    "The donor's name in the sheet's identifier column",
    "Distance to the filled row over the similarity columns (after scaling and weights); smaller is closer",
    "The donor's value in this column",
)
#: Position of the sample ID in the donor table (hidden when the sheet names no rows).
SAMPLE_COLUMN = DONOR_HEADERS.index("Sample ID")


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
        self.headline = self._label("donorHeadline", "Selected cell", "What happened to the selected cell")
        font = self.headline.font()
        font.setBold(True)
        self.headline.setFont(font)
        layout.addWidget(self.headline)

        self.facts_box = QWidget(self)
        self.facts_box.setObjectName("donorFacts")
        self.facts_box.setAccessibleName("Facts about the filled value")
        # a grid, not a form: a form gave a wrapped value the height of one line and a half
        # and spread the rest over one-line rows (Qt 6, 300-400 pixels wide)
        self.facts = QGridLayout(self.facts_box)
        self.facts.setContentsMargins(0, 0, 0, 0)
        self.facts.setColumnStretch(1, 1)
        layout.addWidget(self.facts_box)

        self.support_icon = named(
            QLabel(self),
            "donorSupportIcon",
            "Weak support warning",
            "Weak support: the donors are far from this row",
        )
        warning = self.style().standardIcon(QStyle.StandardPixmap.SP_MessageBoxWarning)
        self.support_icon.setPixmap(warning.pixmap(16, 16))
        self.support_text = self._label(
            "donorSupportText",
            "Support of the filled value",
            "Weak support: the nearest donor is farther than 95% of nearest-donor distances in this sheet",
        )
        support_row = QWidget(self)
        support_layout = QFormLayout(support_row)
        support_layout.setContentsMargins(0, 0, 0, 0)
        support_layout.addRow(self.support_icon, self.support_text)
        layout.addWidget(support_row)

        self.donors_title = self._label("donorTableTitle", "Donors", "The donor rows, nearest first")
        self.donors_title.setText("Donors, nearest first:")
        layout.addWidget(self.donors_title)
        self.model = RecordsModel(DONOR_HEADERS, DONOR_TIPS, self)
        self.table = RecordTable(
            self,
            self.model,
            "donorTable",
            "Donor rows, nearest first",
            "Donor rows, nearest first. Enter or double-click shows the row in the sheet.",
        )
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.table.chosen.connect(lambda index: self._choose(index.row()))
        layout.addWidget(self.table, 1)
        layout.addStretch(0)  # keeps the text at the top when there is no donor table

    def _label(self, name: str, accessible: str, tip: str) -> QLabel:
        return text_label(self, name, accessible, tip, selectable=True)

    # ------------------------------------------------------------------ API
    def show_cell(
        self, result: FillResult, row_label: Any, column: str, *, notes: pd.DataFrame | None = None
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
        while (item := self.facts.takeAt(0)) is not None:
            if (old := item.widget()) is not None:
                old.hide()  # at once; deleted when the event loop next runs
                old.deleteLater()
        top = Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop
        for row, (name, text) in enumerate(story.facts):
            value = self._label("donorFact_" + "".join(ch for ch in name if ch.isalnum()), name, name)
            value.setText(text)
            self.facts.addWidget(QLabel(f"{name}:", self.facts_box), row, 0, top)
            self.facts.addWidget(value, row, 1)
        self.facts_box.setVisible(bool(story.facts))
        self.support_text.setText(story.support_text)
        self.support_text.setVisible(bool(story.support_text))
        self.support_icon.setVisible(story.support == "weak")
        has_donors = bool(story.donors)
        self.donors_title.setVisible(has_donors)
        self.table.setVisible(has_donors)
        self.model.set_rows(donor_rows(story.donors))
        # the sample ID column only where the sheet names its rows
        self.table.setColumnHidden(SAMPLE_COLUMN, not any(d.sample_id for d in story.donors))

    def _choose(self, row: int) -> None:
        if 0 <= row < self.model.rowCount() and self._column:
            self.jump_requested.emit(self.model.index(row, 0).data(RAW_ROLE), self._column)

    def donor_index(self, row: int) -> QModelIndex:
        """Return the model index of donor ``row`` (first column), for keyboard tests."""
        return self.model.index(row, 0)


def donor_rows(donors: Sequence[Any]) -> list[list[Cell]]:
    """The donor table's rows: label, sample ID, distance and value.

    Distances get 4 significant digits of the largest; numeric donor values the decimals
    the most precise of them needs, so ``7.10`` and ``7.17`` line up. The raw numbers
    stay exact (for sorting and tests).
    """
    distance_decimals = common_decimals([d.distance for d in donors], digits=4)
    value_decimals = common_decimals([d.value for d in donors])
    return [
        [
            Cell(format_label(d.label), d.label, "Row label in the sheet"),
            Cell(d.sample_id, d.sample_id, "Sample ID in the sheet's identifier column"),
            fixed_cell(d.distance, distance_decimals),
            fixed_cell(d.value, value_decimals),
        ]
        for d in donors
    ]
