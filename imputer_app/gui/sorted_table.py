"""A records table that sorts by its raw numbers, by mouse (header) or keyboard (a combo box).

A header click is out of reach of the keyboard, so every sortable table here comes with
a "Sort by" combo box that Tab reaches; both sort the same way, by each cell's raw value
(:data:`~imputer_app.gui.records_model.RAW_ROLE`), never by its text, and keep each
other in step.
"""

from __future__ import annotations

from PySide6.QtCore import QSortFilterProxyModel, Qt
from PySide6.QtWidgets import QComboBox, QWidget

from imputer_app.gui.records_model import RAW_ROLE, RecordsModel
from imputer_app.gui.widgets import RecordTable, compact, named


class SortedTable(RecordTable):
    """A :class:`RecordTable` over ``model`` through a proxy that sorts by raw value.

    Attributes
    ----------
    source : RecordsModel
        The rows as built (tests read them there; the view shows them sorted).
    proxy : QSortFilterProxyModel
        The sorted view of ``source``.
    sort_by : QComboBox
        "Sort by" choices: the order as built, then each column title.
    """

    def __init__(self, parent: QWidget, model: RecordsModel, name: str, accessible: str, tip: str) -> None:
        self.source = model
        self.proxy = QSortFilterProxyModel(parent)
        self.proxy.setSourceModel(model)
        self.proxy.setSortRole(RAW_ROLE)
        super().__init__(parent, self.proxy, name, accessible, tip)
        self.sort_by = compact(
            named(
                QComboBox(parent),
                f"{name}SortBy",
                f"Sort {accessible.lower()} by",
                "Order of the rows (a click on a column title sorts as well)",
            )
        )
        self.sort_by.currentIndexChanged.connect(self._sort_from_combo)
        self.horizontalHeader().sortIndicatorChanged.connect(self._combo_from_header)
        self.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)  # as listed
        self.horizontalHeader().setSortIndicatorShown(True)
        self.horizontalHeader().setSectionsClickable(True)
        model.modelReset.connect(self._fill_combo)
        self._fill_combo()

    def _fill_combo(self) -> None:
        current = self.sort_by.currentIndex()
        self.sort_by.blockSignals(True)
        self.sort_by.clear()
        self.sort_by.addItem("as listed", -1)
        for column, title in enumerate(self.source.headers()):
            self.sort_by.addItem(title, column)
        self.sort_by.setCurrentIndex(current if 0 <= current < self.sort_by.count() else 0)
        self.sort_by.blockSignals(False)

    def _sort_from_combo(self, _index: int) -> None:
        column = self.sort_by.currentData()
        if column is None or column < 0:
            self.proxy.sort(-1)  # the order the rows were built in
            self.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
            return
        self.sortByColumn(int(column), Qt.SortOrder.AscendingOrder)

    def _combo_from_header(self, column: int, order: Qt.SortOrder) -> None:
        self.proxy.sort(column, order)
        self.sort_by.blockSignals(True)
        self.sort_by.setCurrentIndex(max(0, self.sort_by.findData(column)))
        self.sort_by.blockSignals(False)

    def source_row(self, view_row: int) -> int:
        """The row of :attr:`source` shown at ``view_row``."""
        return self.proxy.mapToSource(self.proxy.index(view_row, 0)).row()
