"""The unfilled panel: every cell a fill left empty, with the reason, one click from the cell.

Rows come from ``FillResult.unfilled`` (``row``, ``column``, ``reason``). The list can be
sorted by any column and narrowed to one reason; a click, or Enter on the current
entry, emits :attr:`UnfilledPanel.jump_requested` so the main window can show the cell.
"""

from __future__ import annotations

from collections import Counter
from typing import TYPE_CHECKING

import pandas as pd
from PySide6.QtCore import QModelIndex, QRegularExpression, QSortFilterProxyModel, Qt, Signal
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QHeaderView, QVBoxLayout, QWidget

from imputer_app.gui.formatting import Cell, format_label
from imputer_app.gui.records_model import RAW_ROLE, RecordsModel
from imputer_app.gui.widgets import RecordTable, buddy, named, text_label

if TYPE_CHECKING:
    from imputer_app.engine import FillResult

HEADERS = ("Row", "Column", "Reason")
HEADER_TIPS = ("Row label in the sheet", "Column of the empty cell", "Why the cell could not be filled")
ROW, COLUMN, REASON = range(3)


def reason_counts(unfilled: pd.DataFrame | None) -> list[tuple[str, int]]:
    """Return ``(reason, number of cells)`` pairs, most common first (ties by name).

    Parameters
    ----------
    unfilled : DataFrame or None
        ``FillResult.unfilled`` with a ``reason`` column.
    """
    if unfilled is None or len(unfilled) == 0:
        return []
    counts = Counter(str(r) for r in unfilled["reason"])
    return sorted(counts.items(), key=lambda item: (-item[1], item[0]))


def count_text(total: int, shown: int, has_result: bool) -> str:
    """Return the panel's headline: how many cells were left empty (and how many are shown)."""
    if not has_result:
        return "No fill preview yet."
    if total == 0:
        return "Every cell to fill was filled."
    cells = "cell" if total == 1 else "cells"
    text = f"{total:,} {cells} left empty"
    if shown != total:
        text += f" ({shown:,} shown)"
    return text + ". Click one, or press Enter, to show it in the sheet."


class UnfilledPanel(QWidget):
    """List the cells a fill left empty, with their reasons.

    Signals
    -------
    jump_requested(row_label, column)
        The user chose an entry: show that cell.
    """

    jump_requested = Signal(object, str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("unfilledPanel")
        self.setAccessibleName("Cells left empty")
        self._result: FillResult | None = None
        self._build()
        self.set_result(None)

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        self.count_label = text_label(
            self, "unfilledCount", "Number of cells left empty", "How many cells the fill could not fill"
        )
        layout.addWidget(self.count_label)

        filter_row = QHBoxLayout()
        self.reason_filter = named(
            QComboBox(self),
            "unfilledReasonFilter",
            "Show cells with this reason",
            "Show every empty cell, or only those with one reason",
        )
        self.reason_filter.currentIndexChanged.connect(self._apply_filter)
        filter_row.addWidget(buddy("Show:", self.reason_filter, self))
        filter_row.addWidget(self.reason_filter, 1)
        layout.addLayout(filter_row)

        self.model = RecordsModel(HEADERS, HEADER_TIPS, self)
        self.proxy = QSortFilterProxyModel(self)
        self.proxy.setSourceModel(self.model)
        self.proxy.setSortRole(RAW_ROLE)
        self.proxy.setFilterKeyColumn(REASON)
        self.proxy.setFilterRole(RAW_ROLE)
        self.table = RecordTable(
            self,
            self.proxy,
            "unfilledTable",
            "Cells left empty and why",
            "Click an entry, or press Enter, to show the cell in the sheet. Click a column title to sort.",
        )
        self.table.setSortingEnabled(True)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(ROW, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(COLUMN, QHeaderView.ResizeMode.ResizeToContents)
        header.setStretchLastSection(True)
        self.table.clicked.connect(self._choose)
        self.table.chosen.connect(self._choose)
        layout.addWidget(self.table, 1)
        QWidget.setTabOrder(self.reason_filter, self.table)

    # ------------------------------------------------------------------ API
    def set_result(self, result: FillResult | None) -> None:
        """Show the cells ``result`` (a FillResult, or None) left empty."""
        self._result = result
        unfilled = getattr(result, "unfilled", None) if result is not None else None
        rows = (
            []
            if unfilled is None
            else [
                [Cell(format_label(r), r), Cell(str(c), str(c)), Cell(str(why), str(why), str(why))]
                for r, c, why in zip(unfilled["row"], unfilled["column"], unfilled["reason"], strict=True)
            ]
        )
        self.model.set_rows(rows)
        self.reason_filter.blockSignals(True)
        self.reason_filter.clear()
        self.reason_filter.addItem(f"All reasons ({len(rows):,})", None)
        for reason, count in reason_counts(unfilled):
            self.reason_filter.addItem(f"{reason} ({count:,})", reason)
        self.reason_filter.setEnabled(len(rows) > 0)
        self.reason_filter.blockSignals(False)
        self.table.sortByColumn(REASON, Qt.SortOrder.AscendingOrder)
        self._apply_filter()

    def entry_count(self) -> int:
        """Number of entries shown (after the reason filter)."""
        return self.proxy.rowCount()

    # ------------------------------------------------------------------ internals
    def _apply_filter(self) -> None:
        reason = self.reason_filter.currentData()
        if reason is None:
            self.proxy.setFilterRegularExpression(QRegularExpression())
        else:
            pattern = "^" + QRegularExpression.escape(reason) + "$"
            self.proxy.setFilterRegularExpression(QRegularExpression(pattern))
        total = self.model.rowCount()
        self.count_label.setText(count_text(total, self.proxy.rowCount(), self._result is not None))
        self.count_label.setAccessibleDescription(self.count_label.text())
        self.table.setEnabled(total > 0)

    def _choose(self, index: QModelIndex) -> None:
        if not index.isValid():
            return
        source = self.proxy.mapToSource(index)
        row_label = self.model.index(source.row(), ROW).data(RAW_ROLE)
        column = self.model.index(source.row(), COLUMN).data(RAW_ROLE)
        self.jump_requested.emit(row_label, str(column))
