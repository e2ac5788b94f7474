"""The recovery panel's per-column view: each fill column's own k, its error and the baseline.

After a recovery test the table lists, per fill column, the k chosen from that column's
own curve (:attr:`~imputer_app.validation.RecoveryReport.k_by_column_1se`), its error
there and at the sheet's single best k, the column-average baseline and the k the plan
uses now. "Use each column's best k" writes those k into the session's plan (as
``kinfill fill --k best-per-column`` does); "Use one k for all" takes them out again.
Nothing changes the plan until the user presses one of them.
"""

from __future__ import annotations

import itertools
from typing import TYPE_CHECKING

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QHBoxLayout, QHeaderView, QVBoxLayout, QWidget

from imputer_app.gui.evidence_rows import (
    column_headers,
    column_rows,
    one_k_text,
    per_column_plan,
    per_column_text,
)
from imputer_app.gui.records_model import RecordsModel
from imputer_app.gui.sorted_table import SortedTable
from imputer_app.gui.state import Session
from imputer_app.gui.widgets import Reflow, buddy, button, text_label

if TYPE_CHECKING:
    from imputer_app.validation import RecoveryReport

IDLE_TEXT = "Run the recovery test to see each fill column's own best k."


class ColumnKView(QWidget):
    """Per fill column: its own k and errors; buttons that put them in the plan or take them out.

    Signals
    -------
    said(str)
        What changed in the plan, in one sentence (for the status line).
    """

    said = Signal(str)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryColumnView")
        self.session = session
        self._report: RecoveryReport | None = None
        self.note = text_label(
            self,
            "recoveryColumnNote",
            "Per-column note",
            "Errors are NRMSE for number columns and the share of wrong classes for category columns",
            selectable=True,
        )
        self.note.setText(IDLE_TEXT)
        self.model = RecordsModel(parent=self)
        self.table = SortedTable(
            self,
            self.model,
            "recoveryColumnTable",
            "Errors per column",
            "Each fill column's own k, its error there and at the sheet's best k, and the column average",
        )
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.use_each_button = button(
            self,
            "recoveryUseEachK",
            "Use each column's best k",
            "Give every fill column its own k from this test (the sheet's best k for the others); "
            "the export records the test",
        )
        self.use_each_button.clicked.connect(self.use_each)
        self.one_k_button = button(
            self,
            "recoveryOneK",
            "Use one k for all",
            "Drop the per-column k: every column uses the plan's k",
        )
        self.one_k_button.clicked.connect(self.use_one)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.note)
        sort_row = QHBoxLayout()
        sort_row.addWidget(buddy("Sort by:", self.table.sort_by, self))
        sort_row.addWidget(self.table.sort_by, 1)
        layout.addLayout(sort_row)
        layout.addWidget(self.table, 1)
        layout.addWidget(
            Reflow(
                [(None, self.use_each_button), (None, self.one_k_button)], self, max_columns=2, stretch=False
            )
        )
        session.subscribe(self._on_session)
        self.show_report(None)

    def focus_chain(self) -> list[QWidget]:
        """The view's controls in tab order."""
        return [self.table.sort_by, self.table, self.use_each_button, self.one_k_button]

    def set_tab_order(self) -> None:
        """Chain the view's own controls (the panel links the chain to its neighbours)."""
        for first, second in itertools.pairwise(self.focus_chain()):
            QWidget.setTabOrder(first, second)

    def show_report(self, report: RecoveryReport | None) -> None:
        """Show ``report``'s per-column numbers (None: the idle note and no rows)."""
        self._report = report
        self._redraw()

    def _on_session(self, event: str) -> None:
        if event in ("plan", "sheet"):
            self._redraw()  # the "k in plan" column and the buttons follow the plan

    def _redraw(self) -> None:
        report, plan = self._report, self.session.plan
        if report is None:
            self.model.set_rows([], headers=["Column"])
            self.note.setText(IDLE_TEXT)
        else:
            headers, tips = column_headers(report)
            self.model.set_rows(column_rows(report, plan), headers, tips)
            note = (
                f"Own k: nearest {report.best_k} within one SE of the column's lowest error. "
                "Bold: beats the average."
            )
            if plan.k_by_column and dict(plan.k_by_column) != report.k_by_column_1se:
                note += " The plan's own k came from elsewhere (another test or a plan file)."
            self.note.setText(note)
        target = per_column_plan(plan, report) if report is not None else None
        self.use_each_button.setEnabled(target is not None and target != plan)
        self.one_k_button.setEnabled(bool(plan.k_by_column))

    def use_each(self) -> None:
        """Put each fill column's own k into the session's plan (with the sheet's best k as default)."""
        if self._report is None:
            return
        plan = per_column_plan(self.session.plan, self._report)
        self.session.set_plan(plan)
        self.said.emit(per_column_text(plan, self._report))

    def use_one(self) -> None:
        """Take the per-column k out of the plan; its single k stays."""
        dropped = dict(self.session.plan.k_by_column)
        plan = self.session.plan.replace(k_by_column={})
        self.session.set_plan(plan)
        self.said.emit(one_k_text(plan, dropped))
