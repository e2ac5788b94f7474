"""The recovery panel's suggested-weights view: learn weights in a worker, show them, apply on request.

"Suggest weights" runs :func:`imputer_app.validation.suggest_weights` on the sheet and
the session's plan in a worker thread (:class:`~imputer_app.gui.workers.TaskRunner`),
with progress and a Cancel button. The result is shown before it is used: every
column's weight now and suggested, its error with each, and the overall error on
hidden cells the search never used. Only "Apply suggested weights" changes the plan,
through the session.
"""

from __future__ import annotations

import itertools
import logging
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QHBoxLayout, QHeaderView, QProgressBar, QVBoxLayout, QWidget

from imputer_app import validation
from imputer_app.gui.evidence_rows import (
    WEIGHT_HEADERS,
    WEIGHT_TIPS,
    weight_rows,
    weights_summary,
    weights_text,
)
from imputer_app.gui.records_model import RecordsModel
from imputer_app.gui.sorted_table import SortedTable
from imputer_app.gui.state import Session
from imputer_app.gui.widgets import Reflow, buddy, button, named, text_label
from imputer_app.gui.workers import TaskRunner
from imputer_app.plan import FillPlan
from imputer_app.work import CancelFlag, Progress

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.sheets import Sheet
    from imputer_app.validation import WeightSuggestion

log = logging.getLogger(__name__)

IDLE_TEXT = "Learns each similarity column's weight from known values; nothing changes until Apply."


def _without_weights(plan: FillPlan) -> dict[str, Any]:
    """The plan's settings other than the weights (a suggestion stays valid while they hold)."""
    return plan.replace(weights={}).to_dict()


class WeightsView(QWidget):
    """Run the weight search, show before and after, apply on request.

    Parameters
    ----------
    session : Session
        Owner of the plan; only :meth:`apply` changes it.
    data : callable
        Returns the sheet (or DataFrame) to learn from, or None.

    Signals
    -------
    said(str)
        What changed in the plan, in one sentence (for the status line).
    """

    said = Signal(str)

    def __init__(
        self,
        session: Session,
        data: Callable[[], Sheet | pd.DataFrame | None],
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryWeightsView")
        self.session = session
        self._data = data
        self._suggestion: WeightSuggestion | None = None
        self._made_for: dict[str, Any] | None = None
        self._pending: dict[str, Any] | None = None
        self._busy = False  # from start until the runner reports the end (its thread may linger)
        self.runner = TaskRunner(self)
        self.runner.progressed.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(lambda: self._done("stopped", "Stopped; the plan is unchanged."))
        self._build()
        session.subscribe(self._on_session)
        self._show(None)

    def _build(self) -> None:
        self.suggest_button = button(
            self,
            "recoverySuggestWeights",
            "Suggest weights",
            "Learn a weight for every similarity column from hidden known cells (may take a while)",
        )
        self.suggest_button.clicked.connect(self.run)
        self.cancel_button = button(self, "recoveryWeightsCancel", "Cancel", "Stop the weight search")
        self.cancel_button.clicked.connect(self.runner.cancel)
        self.progress = named(
            QProgressBar(self),
            "recoveryWeightsProgress",
            "Weight search progress",
            "Progress of the weight search",
        )
        self.note = text_label(
            self,
            "recoveryWeightsNote",
            "Suggested weights note",
            "What the weight search found",
            selectable=True,
        )
        self.model = RecordsModel(WEIGHT_HEADERS, WEIGHT_TIPS, parent=self)
        self.table = SortedTable(
            self,
            self.model,
            "recoveryWeightsTable",
            "Suggested weights",
            "Each column's weight now and suggested, and its error on judging cells with each",
        )
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.apply_button = button(
            self,
            "recoveryApplyWeights",
            "Apply suggested weights",
            "Put the suggested weights into the plan (the recovery test then needs a new run)",
        )
        self.apply_button.clicked.connect(self.apply)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        run_row = QHBoxLayout()
        run_row.addWidget(self.suggest_button)
        run_row.addWidget(self.cancel_button)
        run_row.addWidget(self.progress, 1)
        layout.addLayout(run_row)
        layout.addWidget(self.note)
        sort_row = QHBoxLayout()
        sort_row.addWidget(buddy("Sort by:", self.table.sort_by, self))
        sort_row.addWidget(self.table.sort_by, 1)
        layout.addLayout(sort_row)
        layout.addWidget(self.table, 1)
        layout.addWidget(Reflow([(None, self.apply_button)], self, max_columns=1, stretch=False))

    def focus_chain(self) -> list[QWidget]:
        """The view's controls in tab order."""
        return [self.suggest_button, self.cancel_button, self.table.sort_by, self.table, self.apply_button]

    def set_tab_order(self) -> None:
        """Chain the view's own controls."""
        for first, second in itertools.pairwise(self.focus_chain()):
            QWidget.setTabOrder(first, second)

    @property
    def suggestion(self) -> WeightSuggestion | None:
        """The latest suggestion shown (applied or not), or None."""
        return self._suggestion

    # ------------------------------------------------------------------ running
    def run(self) -> None:
        """Start the weight search on the current sheet and plan (nothing when busy or no sheet)."""
        data, plan = self._data(), self.session.plan
        if data is None or self._busy:
            return
        self._pending = _without_weights(plan)
        self._set_running(True)

        def job(progress: Progress, cancel: CancelFlag) -> WeightSuggestion:
            # Looked up at call time so that tests can stand in a slow or failing search.
            return validation.suggest_weights(data, plan, progress=progress, cancel=cancel)

        self.runner.start(job)

    def cancel(self) -> None:
        """Stop a running search; what was shown stays."""
        self.runner.cancel()

    def shutdown(self, msecs: int = 10_000) -> bool:
        """Cancel and wait for the worker thread."""
        return self.runner.wait(msecs)

    def _on_progress(self, done: int, total: int) -> None:
        self.progress.setRange(0, max(1, total))
        self.progress.setValue(min(done, max(1, total)))

    def _on_finished(self, suggestion: WeightSuggestion) -> None:
        self._made_for = self._pending
        self._show(suggestion)
        self._done("finished", "")

    def _on_failed(self, message: str, details: str) -> None:
        if details:
            log.error("weight search failed:\n%s", details)
        first = message.strip().splitlines()[0] if message.strip() else "unknown error"
        self._done("failed", f"Weight search failed: {first}")

    def _done(self, outcome: str, message: str) -> None:
        self._set_running(False)
        self.progress.setRange(0, 1)
        self.progress.setValue(1 if outcome == "finished" else 0)
        self.progress.setFormat(outcome)
        if message:
            self.note.setText(
                message + ("\n" + weights_summary(self._suggestion) if self._suggestion else "")
            )

    def _set_running(self, running: bool) -> None:
        self._busy = running
        if running:
            self.progress.setRange(0, 0)
            self.progress.setFormat("%p%")
        self.suggest_button.setEnabled(not running and self._data() is not None)
        self.cancel_button.setEnabled(running)
        self._update_apply()

    # ------------------------------------------------------------------ showing
    def _show(self, suggestion: WeightSuggestion | None) -> None:
        self._suggestion = suggestion
        if suggestion is None:
            self.model.set_rows([])
            self.note.setText(IDLE_TEXT)
            self.progress.setRange(0, 1)
            self.progress.setValue(0)
            self.progress.setFormat("not run yet")
        else:
            self.model.set_rows(weight_rows(suggestion))
            self.note.setText(weights_summary(suggestion))
        self._set_running(self._busy)

    def _stale(self) -> bool:
        return self._made_for is not None and self._made_for != _without_weights(self.session.plan)

    def _update_apply(self) -> None:
        s = self._suggestion
        usable = s is not None and not self._busy and not self._stale()
        self.apply_button.setEnabled(bool(usable) and s is not None and _weights_differ(self.session.plan, s))
        # A suggestion that did no better on the judging cells can still be applied, but not by mistake.
        gain = s is not None and s.score_after < s.score_before
        self.apply_button.setText(
            "Apply suggested weights" if gain or s is None else "Apply anyway (no gain)"
        )

    def _on_session(self, event: str) -> None:
        if event == "sheet":
            self.cancel()
            self._made_for = None
            self._show(None)
        elif event == "plan":
            if self._stale() and self._suggestion is not None:
                self.note.setText(
                    weights_summary(self._suggestion)
                    + "\n(Made with other settings; suggest again before applying.)"
                )
            self._set_running(self._busy)

    def apply(self) -> None:
        """Put the suggested weights into the session's plan (only on the user's request)."""
        s = self._suggestion
        if s is None or self._stale():
            return
        plan = self.session.plan
        self.session.set_plan(plan.replace(weights={**dict(plan.weights), **s.weights}))
        self.said.emit(weights_text(s.weights, s.score_before, s.score_after))


def _weights_differ(plan: FillPlan, suggestion: WeightSuggestion) -> bool:
    return any(plan.weight(column) != value for column, value in suggestion.weights.items())
