"""The preview follows the combining settings: moving k re-previews at once.

Once a preview is on screen, a change of k (or of another combining setting: neighbour
weighting, numeric rule, bounds, decimals, censored rule, no-donor rule, interval
level) drops it, and the session says it wants a new one
(:attr:`~imputer_app.gui.state.Session.wants_preview`). :class:`PreviewFollower` then
starts the preview again; it re-combines the last search's neighbour lists, so it is
ready in a moment. A change made while a job is at work waits for it to end, and only
the latest plan is previewed.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QObject

from imputer_app.gui.state import Session
from imputer_app.gui.workers import TaskRunner


class PreviewFollower(QObject):
    """Starts a preview whenever the session wants one and no job is at work.

    Parameters
    ----------
    session : Session
        Observed for ``"plan"`` events.
    runner : TaskRunner
        The window's runner: a preview starts only when it is idle.
    start_preview : callable
        Starts the window's preview job (the same as Fill > Preview).
    parent : QObject, optional
    """

    def __init__(
        self,
        session: Session,
        runner: TaskRunner,
        start_preview: Callable[[], object],
        parent: QObject | None = None,
    ) -> None:
        super().__init__(parent)
        self._session = session
        self._runner = runner
        self._start = start_preview
        self._waiting = False
        session.subscribe(self._on_session)
        runner.running_changed.connect(self._on_running)

    @property
    def waiting(self) -> bool:
        """True while a wanted preview waits for the job at work to end."""
        return self._waiting

    def _on_session(self, event: str) -> None:
        if event == "plan" and self._session.wants_preview:
            self._request()

    def _on_running(self, running: bool) -> None:
        if not running and self._waiting:
            self._waiting = False
            if self._session.wants_preview:
                self._request()

    def _request(self) -> None:
        if self._runner.is_running():
            self._waiting = True  # the latest plan is previewed once the job ends
            return
        self._start()
