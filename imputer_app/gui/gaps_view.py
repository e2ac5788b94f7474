"""The Gaps view: why the gaps are there, before trusting a fill.

Shows :func:`imputer_app.validation.gap_check` for the open sheet with the current
plan: Little's test (statistic, df, p-value and what it means), the headline, how
rows with a gap differ from the others, and which combinations of gaps occur. The
check runs in a worker thread (:class:`~imputer_app.gui.workers.TaskRunner`) when the
user asks; a change of sheet or plan marks the shown result as out of date.
"""

from __future__ import annotations

import math
import threading
from typing import TYPE_CHECKING, Any

import pandas as pd
from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from imputer_app.cli.gaps_text import LIMITS, difference_rows, pattern_rows
from imputer_app.gui.widgets import button, named, text_label
from imputer_app.gui.workers import TaskRunner

if TYPE_CHECKING:
    from imputer_app.gui.state import Session
    from imputer_app.validation import GapCheck
    from imputer_app.work import Progress

IDLE_TEXT = (
    "Check the gaps of the open sheet: are they random, or do they come with high or low values elsewhere?"
)
STALE_TEXT = "The sheet or the plan changed since this check; check again."
DIFFERENCE_HEADERS = (
    "Gaps in",
    "Compared column",
    "Difference",
    "Measure",
    "Class",
    "Rows with gap",
    "Rows without",
)


def mcar_line(check: GapCheck) -> str:
    """Return Little's test in one line: statistic, df and p-value (or why there is nothing to test)."""
    mcar = check.mcar
    if not math.isfinite(mcar.p_value):
        return "Little's test: nothing to test."
    return (
        f"Little's test of missing completely at random: statistic {mcar.statistic:.4g}, "
        f"df {mcar.df}, p-value {mcar.p_value:.3g} "
        f"({mcar.n_rows_used:,} rows, {mcar.n_patterns:,} gap patterns)"
    )


class GapsView(QWidget):
    """Show the gap check of the session's sheet and plan.

    Signals
    -------
    check_ready(object)
        A check finished; the :class:`~imputer_app.validation.GapCheck` is shown.
    """

    check_ready = Signal(object)

    def __init__(self, parent: QWidget | None = None, *, session: Session) -> None:
        super().__init__(parent)
        self.setObjectName("gapsView")
        self.setAccessibleName("Gap check")
        self.session = session
        self.check: GapCheck | None = None
        self.runner = TaskRunner(self)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(lambda message, _details: self._set_status(message))
        self.runner.cancelled.connect(lambda: self._set_status("Gap check stopped."))
        self.runner.running_changed.connect(lambda running: self.run_button.setEnabled(not running))
        self._build()
        session.subscribe(self._on_session)
        self._show(None)

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        top = QHBoxLayout()
        self.run_button = button(self, "gapsRun", "Check gaps", "Run Little's test and the gap tables now")
        self.run_button.clicked.connect(self.run)
        top.addWidget(self.run_button)
        top.addStretch(1)
        layout.addLayout(top)
        self.status = text_label(self, "gapsStatus", "Gap check status", "Whether the check is up to date")
        self.mcar_label = text_label(
            self, "gapsMcar", "Little's test", "Statistic, degrees of freedom and p-value", selectable=True
        )
        self.meaning_label = text_label(self, "gapsMeaning", "What the test means", LIMITS, selectable=True)
        self.headline_label = text_label(
            self,
            "gapsHeadline",
            "Strongest difference",
            "The strongest difference, in words",
            selectable=True,
        )
        font = self.headline_label.font()
        font.setBold(True)
        self.headline_label.setFont(font)
        self.differences = self._table("gapsDifferences", "How rows with a gap differ from the others")
        self.patterns = self._table("gapsPatterns", "Which combinations of gaps occur, most frequent first")
        for widget in (self.status, self.mcar_label, self.meaning_label, self.headline_label):
            layout.addWidget(widget)
        layout.addWidget(self._title("gapsDifferencesTitle", "How rows with a gap differ, largest first:"))
        layout.addWidget(self.differences, 2)
        layout.addWidget(self._title("gapsPatternsTitle", "Gap patterns (x = gap), most frequent first:"))
        layout.addWidget(self.patterns, 1)

    def _title(self, name: str, text: str) -> QWidget:
        label = text_label(self, name, text.rstrip(":"), text.rstrip(":"))
        label.setText(text)
        return label

    def _table(self, name: str, tip: str) -> QTableWidget:
        table = named(QTableWidget(self), name, tip, tip)
        table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        table.verticalHeader().setVisible(False)
        table.setMinimumHeight(120)
        return table

    # ---------------------------------------------------------------- running
    def run(self) -> None:
        """Start the gap check of the session's sheet with its plan (does nothing without a sheet)."""
        sheet, plan = self.session.sheet, self.session.plan
        if sheet is None:
            return
        self._set_status("Checking the gaps…")
        from imputer_app.validation import gap_check

        def job(progress: Progress, cancel: threading.Event) -> Any:
            return gap_check(sheet, plan, progress=progress, cancel=cancel)

        self.runner.start(job)

    def shutdown(self, msecs: int = 10_000) -> bool:
        """Cancel a running check and wait for its thread."""
        return self.runner.wait(msecs)

    def _on_finished(self, check: GapCheck) -> None:
        self._show(check)
        self._set_status("")
        self.check_ready.emit(check)

    def _on_session(self, event: str) -> None:
        if event == "sheet":
            self.runner.cancel()
            self._show(None)
        elif event == "plan" and self.check is not None:
            self._set_status(STALE_TEXT)

    def _set_status(self, text: str) -> None:
        self.status.setText(text)
        self.status.setVisible(bool(text))

    # ---------------------------------------------------------------- showing
    def _show(self, check: GapCheck | None) -> None:
        self.check = check
        if check is None:
            self._set_status(IDLE_TEXT)
            for label in (self.mcar_label, self.meaning_label, self.headline_label):
                label.setText("")
            self._fill(self.differences, pd.DataFrame())
            self._fill(self.patterns, pd.DataFrame())
            return
        self.mcar_label.setText(mcar_line(check))
        self.meaning_label.setText(f"{check.mcar.meaning} {LIMITS}")
        self.headline_label.setText(check.headline)
        self._fill(self.differences, difference_rows(check.differences), DIFFERENCE_HEADERS)
        self._fill(self.patterns, pattern_rows(check.patterns, gap="x", value=""))

    @staticmethod
    def _fill(table: QTableWidget, frame: pd.DataFrame, headers: tuple[str, ...] | None = None) -> None:
        table.clear()
        table.setRowCount(len(frame))
        table.setColumnCount(frame.shape[1])
        table.setHorizontalHeaderLabels(list(headers or [str(c) for c in frame.columns]))
        for i, row in enumerate(frame.itertuples(index=False)):
            for j, value in enumerate(row):
                table.setItem(i, j, QTableWidgetItem(str(value)))
        table.resizeColumnsToContents()
