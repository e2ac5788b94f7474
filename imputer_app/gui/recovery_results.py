"""The recovery panel's results area: the chart above, the result views as tabs below.

:class:`ResultsArea` is a vertical splitter: the error-against-k chart with a one-line
help on NRMSE, then tabs holding the errors per k, each fill column's own k
(:class:`~imputer_app.gui.column_k_view.ColumnKView`), suggested weights
(:class:`~imputer_app.gui.weights_view.WeightsView`) and interval coverage
(:class:`~imputer_app.gui.coverage_view.CoverageView`). The panel connects them.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QHeaderView, QTabWidget, QToolButton, QVBoxLayout, QWidget

from imputer_app.gui.column_k_view import ColumnKView
from imputer_app.gui.coverage_view import CoverageView
from imputer_app.gui.records_model import RecordsModel
from imputer_app.gui.recovery_chart import NRMSE_HELP, ErrorChart
from imputer_app.gui.state import Session
from imputer_app.gui.weights_view import WeightsView
from imputer_app.gui.widgets import CompactSplitter, RecordTable, named, text_label

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.sheets import Sheet

#: The result tabs: attribute, title, tooltip.
TABS = (
    ("table", "Per &k", "Error of every k tested, overall and per column"),
    ("columns_view", "Per col&umn", "Each fill column's own best k, its error and the baseline"),
    ("weights_view", "&Weights", "Suggested weights for the similarity columns, applied on request"),
    ("coverage_view", "Co&verage", "How often hidden known values fell inside their interval"),
)


class ResultsArea(CompactSplitter):
    """The chart with its help line, then the result tabs."""

    def __init__(
        self, session: Session, data: Callable[[], Sheet | pd.DataFrame | None], parent: QWidget
    ) -> None:
        super().__init__(Qt.Orientation.Vertical, parent)
        self.setObjectName("recoverySplitter")
        chart_box = QWidget(self)
        chart_layout = QVBoxLayout(chart_box)
        chart_layout.setContentsMargins(0, 0, 0, 0)
        self.chart = ErrorChart(chart_box)
        self.chart_help = text_label(chart_box, "recoveryChartHelp", "What NRMSE means", NRMSE_HELP)
        self.chart_help.setText(NRMSE_HELP)
        chart_layout.addWidget(self.chart, 1)
        chart_layout.addWidget(self.chart_help)
        self.views = named(
            QTabWidget(self),
            "recoveryViews",
            "Recovery test results",
            "The errors per k, per fill column, suggested weights and interval coverage",
        )
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
            named(arrow, arrow.objectName() or "recoveryViewsArrow", "More tabs", "Show the hidden result tabs")
            arrow.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.addWidget(chart_box)
        self.addWidget(self.views)
        self.setStretchFactor(0, 2)  # the chart, with its legend, needs the height more
        self.setStretchFactor(1, 1)
        self.setChildrenCollapsible(False)

    def focus_chain(self) -> list[QWidget]:
        """The tabs and every view's controls, in tab order."""
        return [self.views, self.table, *self.columns_view.focus_chain(), *self.weights_view.focus_chain()]
