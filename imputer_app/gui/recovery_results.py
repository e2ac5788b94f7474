"""The recovery panel's results area: the chart and the result views, one tab each.

A side panel is narrow and short: shown one above the other, a chart with its legend and
a table leave each other too little height to read. :class:`ResultsArea` therefore
holds them as tabs, each with the panel's full height: the error-against-k chart with a
short help on NRMSE, the errors per k, each fill column's own k
(:class:`~imputer_app.gui.column_k_view.ColumnKView`), suggested weights
(:class:`~imputer_app.gui.weights_view.WeightsView`) and interval coverage
(:class:`~imputer_app.gui.coverage_view.CoverageView`). The panel connects them.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6.QtCore import QSize, Qt
from PySide6.QtWidgets import QHeaderView, QTabWidget, QToolButton, QVBoxLayout, QWidget

from imputer_app.gui.column_k_view import ColumnKView
from imputer_app.gui.coverage_view import CoverageView
from imputer_app.gui.records_model import RecordsModel
from imputer_app.gui.recovery_chart import NRMSE_HELP, NRMSE_SHORT, ErrorChart
from imputer_app.gui.recovery_choices import ChartControls
from imputer_app.gui.state import Session
from imputer_app.gui.weights_view import WeightsView
from imputer_app.gui.widgets import RecordTable, named, text_label

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.sheets import Sheet

#: The result tabs: attribute, title, tooltip. No Alt letters: the window already uses
#: nearly every one; Tab reaches the tab bar and the arrow keys change tabs.
TABS = (
    ("chart_box", "Chart", "Error against k: overall, per column, the column average and the chosen k"),
    ("table", "Per k", "Error of every k tested, overall and per column"),
    ("columns_view", "Columns", "Each fill column's own best k, its error and the baseline"),
    ("weights_view", "Weights", "Suggested weights for the similarity columns, applied on request"),
    ("coverage_view", "Coverage", "How often hidden known values fell inside their interval"),
)


class ResultsArea(QWidget):
    """The chart with its help line, and the result views, as tabs."""

    def __init__(
        self, session: Session, data: Callable[[], Sheet | pd.DataFrame | None], parent: QWidget
    ) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryResults")
        self.views = named(
            QTabWidget(self),
            "recoveryViews",
            "Recovery test results",
            "The chart, the errors per k and per fill column, suggested weights and interval coverage",
        )
        self.views.setDocumentMode(True)  # flatter tabs: all five fit a narrow panel
        self.chart_box = QWidget(self.views)
        chart_layout = QVBoxLayout(self.chart_box)
        chart_layout.setContentsMargins(0, 0, 0, 0)
        self.chart = ErrorChart(self.chart_box)
        self.chart_help = text_label(self.chart_box, "recoveryChartHelp", "What NRMSE means", NRMSE_HELP)
        self.chart_help.setText(NRMSE_SHORT)
        self.chart_controls = ChartControls(self.chart_box)
        chart_layout.addWidget(self.chart, 1)
        chart_layout.addWidget(self.chart_help)
        chart_layout.addWidget(self.chart_controls)
        self.model = RecordsModel(parent=self)
        self.table = RecordTable(
            self.views,
            self.model,
            "recoveryTable",
            "Errors per k",
            "Error for every k and the column-average baseline; Enter or double-click uses that k",
        )
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.columns_view = ColumnKView(session, self.views)
        self.weights_view = WeightsView(session, data, self.views)
        self.coverage_view = CoverageView(session, self.views)
        for attribute, title, tip in TABS:
            self.views.addTab(getattr(self, attribute), title)
            self.views.setTabToolTip(self.views.count() - 1, tip)
        # The tab bar's scroll arrows (shown when narrow): Tab skips them, the arrow keys change tabs.
        for arrow in self.views.tabBar().findChildren(QToolButton):
            named(
                arrow, arrow.objectName() or "recoveryViewsArrow", "More tabs", "Show the hidden result tabs"
            )
            arrow.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.views)

    def sizeHint(self) -> QSize:
        """The usual width, the minimum height: the panel's scroll area then gives what is left.

        Tables and charts would ask for far more height than a side panel has, and the
        panel would scroll although everything fits.
        """
        return QSize(super().sizeHint().width(), self.minimumSizeHint().height())

    def hasHeightForWidth(self) -> bool:
        """False: the panel's layout then asks :meth:`sizeHint` (the minimum), not the tab's wish.

        A tab whose page wraps text (the per-column note) has a height for each width,
        and a box layout asks such an item for its *preferred* height at the panel's
        width: the page's table would claim its full preferred height and push the
        panel past its scroll area (a scroll bar at 1400 x 900 after "Use each
        column's best k"). The area keeps its stretch and takes the height left over.
        """
        return False

    def focus_chain(self) -> list[QWidget]:
        """The tabs and every view's controls, in tab order."""
        return [
            self.views,
            *self.chart_controls.focus_chain(),
            self.table,
            *self.columns_view.focus_chain(),
            *self.weights_view.focus_chain(),
        ]
