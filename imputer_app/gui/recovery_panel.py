"""The recovery panel: hide known cells, fill them for every k, and choose k from the errors.

The user sets the share of known cells to hide, the number of repeats, the k range and
the hiding style, and runs :func:`imputer_app.validation.recovery_test` in a worker
thread (:class:`~imputer_app.gui.workers.TaskRunner`). The result is shown three ways:
a chart of error against k (drawn by :func:`imputer_app.charts.error_vs_k.plot_error_vs_k`),
the numbers per k in a table, and one summary sentence. Buttons write the chosen k
into the session's plan (every view redraws from there) and then emit
:attr:`RecoveryPanel.use_k`.

Beside the per-k table, tabs show each fill column's own k
(:mod:`~imputer_app.gui.column_k_view`), suggested weights
(:mod:`~imputer_app.gui.weights_view`) and the interval coverage of the latest fill
(:mod:`~imputer_app.gui.coverage_view`); each changes the plan only when the user
presses its button, and :attr:`RecoveryPanel.said` carries the sentence saying what
changed.

Words and numbers come from :mod:`imputer_app.gui.recovery_logic` (Qt-free).
"""

from __future__ import annotations

import itertools
import logging
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QKeyEvent
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QLabel,
    QProgressBar,
    QStyle,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.formatting import format_value
from imputer_app.gui.records_model import RAW_ROLE
from imputer_app.gui.recovery_chart import IDLE_TEXT, MAX_CHART_COLUMNS, ChartWindow
from imputer_app.gui.recovery_choices import ChoiceBar, chart_name, save_chart_dialog
from imputer_app.gui.recovery_logic import (
    RecoveryRequest,
    k_ceiling,
    report_headers,
    report_rows,
    summary_text,
)
from imputer_app.gui.recovery_results import ResultsArea
from imputer_app.gui.recovery_settings import RecoverySettings
from imputer_app.gui.state import Session
from imputer_app.gui.widgets import button, named, text_label
from imputer_app.gui.workers import TaskRunner
from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport

log = logging.getLogger(__name__)

__all__ = ["MAX_CHART_COLUMNS", "RecoveryPanel"]


class RecoveryPanel(QWidget):
    """Run the recovery test and choose k from its evidence.

    Signals
    -------
    use_k(int)
        The user chose a k (best, one-SE or a row of the table); it is already in the
        session's plan.
    report_ready(RecoveryReport)
        A test finished; the report is also in :attr:`report`.
    said(str)
        The plan changed by one of the panel's actions (per-column k, weights); the
        sentence says how.
    """

    use_k = Signal(int)
    report_ready = Signal(object)
    said = Signal(str)

    def __init__(self, parent: QWidget | None = None, session: Session | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryPanel")
        self.setAccessibleName("Recovery test")
        self.session = session if session is not None else Session()
        self._source: Sheet | pd.DataFrame | None = None
        self._report: RecoveryReport | None = None
        # What a report was made from: the data and the plan's settings other than k.
        self._report_source: tuple[object, dict[str, Any] | None] = (None, None)
        self._run_source: tuple[object, dict[str, Any] | None] = (None, None)
        self._summary = IDLE_TEXT
        self._busy = False
        self.chart_window: ChartWindow | None = None
        self.runner = TaskRunner(self)
        self.runner.progressed.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        self._build()
        self._set_running(False)
        self._show_report(None)
        self.session.subscribe(self._on_session)

    # ------------------------------------------------------------------ building
    def _build(self) -> None:
        layout = QVBoxLayout(self)
        self.settings_box = RecoverySettings(self)
        self.hide_fraction, self.repeats = self.settings_box.hide_fraction, self.settings_box.repeats
        self.k_from, self.k_to = self.settings_box.k_from, self.settings_box.k_to
        self.masking, self.seed = self.settings_box.masking, self.settings_box.seed
        self.settings_flow = self.settings_box.flow
        layout.addWidget(self.settings_box)
        layout.addLayout(self._build_run_row())
        self.status = text_label(
            self,
            "recoveryStatus",
            "Recovery test message",
            "Messages about the last run (errors, stops, remarks)",
        )
        self.status_icon = named(QLabel(self), "recoveryStatusIcon", "Problem", "The last run did not finish")
        self.status_icon.setPixmap(
            self.style().standardIcon(QStyle.StandardPixmap.SP_MessageBoxWarning).pixmap(16, 16)
        )
        status_row = QHBoxLayout()
        status_row.addWidget(self.status_icon)
        status_row.addWidget(self.status, 1)
        layout.addLayout(status_row)
        self.summary = text_label(
            self,
            "recoverySummary",
            "Recovery test summary",
            "Best k, the k the one-standard-error rule suggests, and the column-average baseline",
            selectable=True,
        )
        font = self.summary.font()
        font.setBold(True)
        self.summary.setFont(font)
        layout.addWidget(self.summary)
        layout.addWidget(self._build_results(), 1)
        layout.addWidget(self._build_choices())
        self._set_tab_order()

    def _build_run_row(self) -> QHBoxLayout:
        row = QHBoxLayout()
        self.run_button = button(
            self,
            "recoveryRun",
            "Run recovery &test",
            "Hide known cells, fill them for every k and score the error (Ctrl+T; Enter in a setting)",
        )
        self.run_button.clicked.connect(self.run)
        self.cancel_button = button(
            self, "recoveryCancel", "&Cancel", "Stop the running test; a previous result, if any, is kept"
        )
        self.cancel_button.clicked.connect(self.cancel)
        self.progress = named(
            QProgressBar(self), "recoveryProgress", "Recovery test progress", "Progress of the running test"
        )
        self.progress.setRange(0, 1)
        self.progress.setValue(0)
        row.addWidget(self.run_button)
        row.addWidget(self.cancel_button)
        row.addWidget(self.progress, 1)
        return row

    def _build_results(self) -> ResultsArea:
        area = ResultsArea(self.session, lambda: self._data, self)
        self.results = area
        self.chart = self.chart_stack = area.chart
        self.placeholder = area.chart.placeholder
        self.figure, self.canvas = area.chart.figure, area.chart.canvas
        self.chart_help, self.views = area.chart_help, area.views
        self.model, self.table = area.model, area.table
        self.columns_view, self.weights_view = area.columns_view, area.weights_view
        self.coverage_view = area.coverage_view
        self.table.chosen.connect(lambda index: self._use_row(index.row()))
        self.table.selectionModel().currentRowChanged.connect(lambda *_: self._update_choice_buttons())
        for view in (self.columns_view, self.weights_view):
            view.said.connect(self._say)
        return area

    def _build_choices(self) -> ChoiceBar:
        """The "use this k" buttons (the chart's own controls sit under the chart)."""
        bar = ChoiceBar(self)
        self.use_best_button, self.use_one_se_button = bar.use_best_button, bar.use_one_se_button
        self.use_selected_button = bar.use_selected_button
        controls = self.results.chart_controls
        self.save_button, self.enlarge_button = controls.save_button, controls.enlarge_button
        self.chart_columns = controls.chart_columns
        self.use_best_button.clicked.connect(lambda: self._use_report_k(one_se=False))
        self.use_one_se_button.clicked.connect(lambda: self._use_report_k(one_se=True))
        self.use_selected_button.clicked.connect(lambda: self._use_row(self.table.currentIndex().row()))
        self.save_button.clicked.connect(self.save_chart)
        self.enlarge_button.clicked.connect(self.enlarge_chart)
        self.chart_columns.currentIndexChanged.connect(lambda _i: self._set_chart_columns())
        self._choices = bar
        return bar

    def _set_tab_order(self) -> None:
        chain = [
            *self.settings_box.fields(),
            self.run_button,
            self.cancel_button,
            *self.results.focus_chain(),
            *self._choices.focus_chain(),
        ]
        for first, second in itertools.pairwise(chain):
            QWidget.setTabOrder(first, second)

    # ------------------------------------------------------------------ API
    def set_source(self, data: Sheet | pd.DataFrame | None, plan: FillPlan | None = None) -> None:
        """Test ``data`` (Sheet or DataFrame) instead of the session's sheet; ``plan`` goes to the session.

        The last report stays on screen; when it was made for other data or settings
        (other than k), the panel says so. A running test is not interrupted.
        """
        self._source = data
        if plan is not None:
            self.session.set_plan(plan)
        self._follow_source()

    @property
    def _data(self) -> Sheet | pd.DataFrame | None:
        """What is tested: the data given to :meth:`set_source`, else the session's sheet."""
        return self._source if self._source is not None else self.session.sheet

    def _on_session(self, event: str) -> None:
        if event == "sheet":
            self.cancel()  # a test of the previous sheet must not report on the new one
        if event in ("sheet", "plan"):
            self._follow_source()

    def _follow_source(self) -> None:
        data = self._data
        self.settings_box.set_ceiling(k_ceiling(data, self.session.plan) if data is not None else 1)
        self._update_stale_note()
        self._set_running(self._busy)

    @property
    def report(self) -> RecoveryReport | None:
        """The latest :class:`~imputer_app.validation.RecoveryReport`, or None."""
        return self._report

    def request(self) -> RecoveryRequest:
        """The test the settings describe."""
        return self.settings_box.request()

    def run(self) -> None:
        """Start the recovery test in a worker thread (does nothing without a source)."""
        data, plan = self._data, self.session.plan
        if data is None or self._busy:
            return
        self._run_source = (data, _settings_key(plan))
        self._show_status("", problem=False)
        self._set_running(True)
        self.progress.setRange(0, 0)  # busy until the first progress report
        # A run that just ended may still be winding its thread down; start() handles that.
        self.runner.start(self.request().job(data, plan))

    def cancel(self) -> None:
        """Stop a running test; the previous report and everything else stay as they were."""
        self.runner.cancel()

    def shutdown(self, msecs: int = 10_000) -> bool:
        """Cancel a running test or weight search and wait for its thread (call before the window closes)."""
        weights = self.weights_view.shutdown(msecs)
        return self.runner.wait(msecs) and weights

    def save_chart(self) -> Path | None:
        """Ask for a file name and save the chart as PNG or SVG; return the path written."""
        if self._report is None:
            return None
        path, message = save_chart_dialog(self, self.chart, chart_name(self._data))
        if message:
            self._show_status(message, problem=path is None)
        return path

    def enlarge_chart(self) -> ChartWindow | None:
        """Open (or raise) the chart in a resizable window of its own, showing the same lines."""
        if self._report is None:
            return None
        if self.chart_window is None:
            self.chart_window = ChartWindow(self)
        self.chart_window.show_report(self._report, self.chart.columns)
        self.chart_window.show()
        self.chart_window.raise_()
        return self.chart_window

    def _set_chart_columns(self) -> None:
        columns = self.chart_columns.currentData()
        self.chart.set_columns(columns)
        if self.chart_window is not None and self.chart_window.isVisible():
            self.chart_window.show_report(self._report, columns)

    # ------------------------------------------------------------------ runner
    def _on_progress(self, done: int, total: int) -> None:
        self.progress.setRange(0, max(1, total))
        self.progress.setValue(min(done, max(1, total)))

    def _on_finished(self, report: RecoveryReport) -> None:
        self._report = report
        self._report_source = self._run_source
        try:
            self._show_report(report)
        except Exception as exc:  # a drawing fault must not lose the report
            log.exception("could not show the recovery report")
            self._show_status(f"The test finished but could not be shown: {exc}", problem=True)
        self._set_running(False, "finished")
        self.report_ready.emit(report)

    def _on_failed(self, message: str, details: str) -> None:
        self._set_running(False, "failed")
        if details:
            log.error("recovery test failed:\n%s", details)
        first_line = message.strip().splitlines()[0] if message.strip() else "unknown error"
        self._show_status(f"Recovery test failed: {first_line}", problem=True)

    def _on_cancelled(self) -> None:
        self._set_running(False, "stopped")
        kept = "The previous result is kept." if self._report is not None else "No result yet."
        self._show_status(f"Stopped. {kept}", problem=False)

    def _set_running(self, running: bool, outcome: str = "") -> None:
        """Lock the settings while a test runs; ``outcome`` labels the idle progress bar."""
        self._busy = running
        for widget in self.settings_box.fields():
            widget.setEnabled(not running)
        self.run_button.setEnabled(not running and self._data is not None)
        self.cancel_button.setEnabled(running)
        if running:
            self.progress.setFormat("%p%")
        elif outcome or self._report is None:
            self.progress.setRange(0, 1)
            self.progress.setValue(1 if outcome == "finished" else 0)
            self.progress.setFormat(outcome or "not run yet")
        self._update_choice_buttons()

    # ------------------------------------------------------------------ showing
    def _show_status(self, text: str, *, problem: bool) -> None:
        self.status.setText(text)
        self.status.setAccessibleDescription(text)
        self.status.setVisible(bool(text))
        self.status_icon.setVisible(problem and bool(text))

    def _show_report(self, report: RecoveryReport | None) -> None:
        if report is None:
            self.model.set_rows([], headers=["k"])
            self._summary = IDLE_TEXT
            self.chart.show_report(None)
            self._show_status("", problem=False)
        else:
            headers, tips = report_headers(report)
            self.model.set_rows(report_rows(report), headers, tips)
            self._summary = summary_text(report)
            self.results.chart_controls.fill_chart_columns(report)
            self.chart.show_report(report, self.chart_columns.currentData())
            best_row = list(report.overall.index).index(report.best_k)
            self.table.setCurrentIndex(self.model.index(best_row, 0))
            # centred, so the best row stays in sight when the splitter shrinks the table
            self.table.scrollTo(self.model.index(best_row, 0), QAbstractItemView.ScrollHint.PositionAtCenter)
            warnings = getattr(report, "warnings", ())
            self._show_status("Note: " + "; ".join(warnings) if warnings else "", problem=False)
        self.columns_view.show_report(report)
        if self.chart_window is not None and self.chart_window.isVisible():
            self.chart_window.show_report(report, self.chart.columns)
        self.canvas.setAccessibleDescription(self._summary)
        self._update_stale_note()
        self._update_choice_buttons()

    def _update_stale_note(self) -> None:
        data, settings = self._report_source
        stale = self._report is not None and (
            data is not self._data or settings != _settings_key(self.session.plan)
        )
        text = self._summary
        if stale:
            text += "\n(Made with other data or settings; run the test again to update.)"
        self.summary.setText(text)
        self.summary.setAccessibleDescription(text)
        self.summary.setVisible(self._report is not None)

    def _update_choice_buttons(self) -> None:
        report = self._report
        have = report is not None
        if report is not None:
            self.use_best_button.setText(f"Use &best k ({report.best_k})")
            self.use_one_se_button.setText(f"Use &one-SE k ({report.best_k_1se})")
        else:
            self.use_best_button.setText("Use &best k")
            self.use_one_se_button.setText("Use &one-SE k")
        self.use_best_button.setEnabled(have)
        self.use_one_se_button.setEnabled(have)
        self.use_selected_button.setEnabled(have and self._selected_k() is not None)
        self.save_button.setEnabled(have)
        self.enlarge_button.setEnabled(have)
        self.chart_columns.setEnabled(have)

    def _selected_k(self, row: int | None = None) -> int | None:
        row = self.table.currentIndex().row() if row is None else row
        if self._report is None or not 0 <= row < self.model.rowCount():
            return None
        value = self.model.index(row, 0).data(RAW_ROLE)
        return int(value) if isinstance(value, int) else None

    def _use_row(self, row: int) -> None:
        k = self._selected_k(row)
        if k is not None:
            self._emit_k(k)

    def _use_report_k(self, *, one_se: bool) -> None:
        if self._report is not None:
            self._emit_k(self._report.best_k_1se if one_se else self._report.best_k)

    def _emit_k(self, k: int) -> None:
        own = self.session.plan.k_by_column
        kept = f' (columns with their own k keep it: {", ".join(own)}; "Use one k for all" drops them)'
        self._show_status(f"k set to {format_value(k)}{kept if own else ''}.", problem=False)
        self.session.set_k(k)
        self.use_k.emit(int(k))

    def _say(self, text: str) -> None:
        """A view changed the plan: say so in the panel's status line and to the window."""
        self._show_status(text, problem=False)
        self.said.emit(text)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        """Enter in a settings field (spin boxes and combos pass it on) starts the test."""
        if event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and self.run_button.isEnabled():
            self.run()
            return
        super().keyPressEvent(event)


def _settings_key(plan: FillPlan) -> dict[str, Any]:
    """The plan's settings other than k, as plain data (a report stays current when only k changes).

    Per-column k are k as well: using each column's best k leaves the test current.
    """
    return plan.replace(k=1, k_by_column={}).to_dict()
