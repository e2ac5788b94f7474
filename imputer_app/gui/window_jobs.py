"""The main window's background work: one job at a time, with a busy bar, status messages and errors.

Reading, filling and exporting run off the GUI thread in a
:class:`~imputer_app.gui.workers.TaskRunner`; this desk starts them, refuses a second
job while one is at work, and hands the result to the caller's ``on_done``.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from typing import TYPE_CHECKING, Any, TypeVar

from PySide6.QtCore import QObject
from PySide6.QtWidgets import QStatusBar, QWidget

from imputer_app.gui.busy import BusyBar
from imputer_app.gui.workers import TaskRunner

if TYPE_CHECKING:
    from imputer_app.work import CancelFlag, Progress

log = logging.getLogger(__name__)

_T = TypeVar("_T")


class JobDesk(QObject):
    """Runs the window's jobs one at a time and tells the user how they went.

    Parameters
    ----------
    parent : QWidget
        The window (owner of the runner and of the busy bar).
    status : QStatusBar
        Where progress titles and outcomes are shown; the busy bar is added to it.
    show_error : callable
        Shows a one-line problem to the user.
    """

    def __init__(self, parent: QWidget, status: QStatusBar, show_error: Callable[[str], None]) -> None:
        super().__init__(parent)
        self.runner = TaskRunner(parent)
        self.busy = BusyBar(self.runner, parent)
        status.addPermanentWidget(self.busy)
        self._status = status
        self._show_error = show_error
        self._on_done: Callable[[Any], None] | None = None
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)

    def run(
        self, title: str, job: Callable[[Progress, CancelFlag], _T], on_done: Callable[[_T], None]
    ) -> bool:
        """Run ``job(progress, cancel)`` off the GUI thread; ``on_done(result)`` on success.

        Returns False (and starts nothing) while another job is still at work: one job at
        a time, so that, say, a dropped file never cancels an export half-way.
        """
        if self._on_done is not None:
            busy = self.busy.label.text()
            self._status.showMessage(f"Still busy with: {busy} Wait, or press Cancel.", 6000)
            return False
        self._on_done = on_done
        self.busy.start(title)
        self._status.showMessage(title)
        self.runner.start(job)
        return True

    def _on_finished(self, result: object) -> None:
        handler, self._on_done = self._on_done, None
        self._status.clearMessage()
        if handler is not None:
            try:
                handler(result)
            except Exception as exc:
                log.exception("could not show a result")
                self._show_error(f"internal fault: {exc}")

    def _on_cancelled(self) -> None:
        self._on_done = None
        self._status.showMessage("Stopped; nothing was changed.", 8000)

    def _on_failed(self, message: str, details: str) -> None:
        self._on_done = None
        if details:
            log.error("background work failed:\n%s", details)
        self._status.showMessage("Failed; nothing was changed.", 8000)
        self._show_error(message)
