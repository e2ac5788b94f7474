"""The recovery test's chart of error against k, drawn on screen and saved to a file.

The chart follows the panel's palette and width: below :data:`NARROW_CHART` pixels its
legend moves under the axes and long labels are shortened
(:func:`~imputer_app.gui.chart_view.fit_for_screen`).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import QEvent, QObject, Qt, QTimer
from PySide6.QtWidgets import QLabel, QSizePolicy, QStackedWidget, QVBoxLayout, QWidget

from imputer_app.charts.error_vs_k import fit_k_ticks, save_figure
from imputer_app.gui.chart_view import draw_chart, fit_for_screen, palette_style
from imputer_app.gui.widgets import named

if TYPE_CHECKING:
    from imputer_app.validation import RecoveryReport

CHART_MIN_HEIGHT = 150
MAX_CHART_COLUMNS = 10  # more fill columns: the chart starts with the overall error only
NARROW_CHART = 760  # pixels; below this the legend goes under the chart
IDLE_TEXT = "Run the recovery test to see how well each k recovers known values."
#: What the chart's y axis means, in plain words (shown under the chart and on hover).
NRMSE_HELP = (
    "NRMSE: how far filled values fell from the hidden true values, as a share of the "
    "column's spread (RMSE / SD). 0 = exact; about 1 = no better than the column average. "
    "Lower is better."
)
#: The same in one short line, under the chart in the narrow panel.
NRMSE_SHORT = (
    "NRMSE: error as a share of the column's spread; 0 = exact, about 1 = no better than the average."
)


class ErrorChart(QStackedWidget):
    """A placeholder until there is a report, then the chart of its errors against k."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryChartStack")
        self.placeholder = named(QLabel(IDLE_TEXT, self), "recoveryPlaceholder", "No result yet", IDLE_TEXT)
        self.placeholder.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.placeholder.setWordWrap(True)
        self.figure = Figure(figsize=(5, 3), layout="constrained")
        self.canvas = named(
            FigureCanvasQTAgg(self.figure),
            "recoveryChart",
            "Chart of error against k",
            "Error against k: overall and per column, with standard-error bars; "
            "the column average as a line; best k and one-SE k marked. Numbers are "
            "scored by NRMSE (RMSE / column SD), categories by the share of wrong classes. " + NRMSE_HELP,
        )
        self.canvas.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.canvas.installEventFilter(self)
        self.canvas.setMinimumSize(160, CHART_MIN_HEIGHT)
        self.canvas.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        self.addWidget(self.placeholder)
        self.addWidget(self.canvas)
        self._report: RecoveryReport | None = None
        self._columns: tuple[str, ...] | None = None
        self._narrow = False

    def show_report(self, report: RecoveryReport | None, columns: tuple[str, ...] | None = None) -> None:
        """Draw ``report`` with ``columns`` (None: every fill column), or the placeholder for None."""
        self._report, self._columns = report, columns
        self.setCurrentWidget(self.placeholder if report is None else self.canvas)
        self.redraw()

    def set_columns(self, columns: tuple[str, ...] | None) -> None:
        """Draw these columns' own lines beside the overall error (None: all, (): none)."""
        self._columns = columns
        self.redraw()

    def redraw(self) -> None:
        """Draw the chart again at the canvas's width and in the current palette."""
        if self._report is None:
            return
        self._narrow = self.canvas.width() < NARROW_CHART
        drawn = self._report.kinds if self._columns is None else self._columns
        # With many columns the legend names only the overall line, the baseline and the marks.
        unlisted = tuple(drawn) if len(drawn) > MAX_CHART_COLUMNS else ()
        with palette_style(self.palette()):
            figure = draw_chart(self._report, self.figure, self._columns)
            fit_for_screen(figure, narrow=self._narrow, unlisted=unlisted)
            fit_k_ticks(figure, self._report.ks)
        self.canvas.draw_idle()

    @property
    def report(self) -> RecoveryReport | None:
        """The report drawn (None: the placeholder shows)."""
        return self._report

    @property
    def columns(self) -> tuple[str, ...] | None:
        """The columns drawn as their own lines (None: all)."""
        return self._columns

    def _after_resize(self) -> None:
        """Move the legend when the width crossed :data:`NARROW_CHART`, else only re-fit the k ticks."""
        if self._report is None or not self.figure.axes:
            return
        if (self.canvas.width() < NARROW_CHART) != self._narrow:
            self.redraw()
            return
        fit_k_ticks(self.figure, self._report.ks)
        self.canvas.draw_idle()

    def save(self, path: Path) -> None:
        """Save the chart in light, print-ready colours (PNG or SVG by suffix).

        Raises OSError or ValueError when the file cannot be written.
        """
        if self._report is None:
            return
        figure = Figure(figsize=(7, 4.5), layout="constrained")
        save_figure(draw_chart(self._report, figure, self._columns), path)

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        """After the canvas resizes: move the legend or re-fit the k ticks (see :meth:`_after_resize`)."""
        if watched is self.canvas and event.type() == QEvent.Type.Resize and self._report is not None:
            # Deferred: the canvas resizes its figure only after this filter has run.
            QTimer.singleShot(0, self._after_resize)
        return super().eventFilter(watched, event)


class ChartWindow(QWidget):
    """The error chart in a window of its own, to read it large (resizable, not modal)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent, Qt.WindowType.Window)
        self.setObjectName("recoveryChartWindow")
        self.setWindowTitle("Recovery test: error against k")
        self.setAccessibleName("Error against k, large")
        self.chart = ErrorChart(self)
        self.chart.canvas.setObjectName("recoveryChartLarge")
        help_line = named(QLabel(NRMSE_HELP, self), "recoveryChartLargeHelp", "What NRMSE means", NRMSE_HELP)
        help_line.setWordWrap(True)
        layout = QVBoxLayout(self)
        layout.addWidget(self.chart, 1)
        layout.addWidget(help_line)
        self.resize(1000, 640)

    def show_report(self, report: RecoveryReport | None, columns: tuple[str, ...] | None) -> None:
        """Draw the same report and columns as the panel's chart."""
        self.chart.show_report(report, columns)
