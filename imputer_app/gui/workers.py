"""Run long work off the GUI thread, with progress, cancel and results on the GUI thread.

A job is a plain function ``job(progress, cancel) -> result`` built from an immutable
request (a plan, a sheet, settings). :class:`TaskRunner` runs one job at a time in a
``QThread``; a newer :meth:`TaskRunner.start` cancels the older job, whose late result is
dropped (each run carries a serial number). Signals are delivered on the GUI thread.
"""

from __future__ import annotations

import threading
import traceback
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QObject, Qt, QThread, Signal

from imputer_app.errors import Cancelled, KinfillError
from imputer_app.work import Progress

Job = Callable[[Progress, threading.Event], Any]


class _Worker(QObject):
    """Lives in a worker thread; runs one job and reports through signals."""

    progressed = Signal(int, int, int)  # serial, done, total
    succeeded = Signal(int, object)
    failed = Signal(int, str, str)  # serial, one-line message, traceback
    cancelled = Signal(int)

    def __init__(self, serial: int, job: Job, cancel: threading.Event) -> None:
        super().__init__()
        self._serial = serial
        self._job = job
        self._cancel = cancel

    def run(self) -> None:
        """Run the job; exactly one of succeeded/failed/cancelled is emitted."""
        serial = self._serial
        try:
            result = self._job(lambda done, total: self.progressed.emit(serial, done, total), self._cancel)
        except Cancelled:
            self.cancelled.emit(serial)
        except KinfillError as exc:
            self.failed.emit(serial, str(exc), "")
        except MemoryError:
            message = "not enough memory for this job; try fewer columns or a smaller k range"
            self.failed.emit(serial, message, "")
        except Exception as exc:
            self.failed.emit(serial, f"internal fault: {exc}", traceback.format_exc())
        else:
            if self._cancel.is_set():
                self.cancelled.emit(serial)
            else:
                self.succeeded.emit(serial, result)


class TaskRunner(QObject):
    """Run one background job at a time for a panel or window.

    Signals
    -------
    progressed(done, total)
        Progress of the current job.
    finished(result)
        The current job's result (stale results of replaced jobs are dropped).
    failed(message, details)
        A one-line message for the user and a traceback (empty for user errors).
    cancelled()
        The current job stopped at the user's request; nothing was changed.
    running_changed(bool)
        True when a job starts, False when the last one ends.
    """

    progressed = Signal(int, int)
    finished = Signal(object)
    failed = Signal(str, str)
    cancelled = Signal()
    running_changed = Signal(bool)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._serial = 0
        self._cancel: threading.Event | None = None
        self._threads: dict[int, tuple[QThread, _Worker]] = {}

    # ------------------------------------------------------------------ control
    def start(self, job: Job) -> int:
        """Start ``job`` in a worker thread, cancelling any job still running.

        Returns
        -------
        int
            The run's serial number.
        """
        self.cancel()
        self._serial += 1
        serial = self._serial
        cancel = threading.Event()
        self._cancel = cancel
        thread = QThread()
        worker = _Worker(serial, job, cancel)
        worker.moveToThread(thread)
        thread.started.connect(worker.run)
        worker.progressed.connect(self._on_progress)
        worker.succeeded.connect(self._on_success)
        worker.failed.connect(self._on_failure)
        worker.cancelled.connect(self._on_cancel)
        for signal in (worker.succeeded, worker.failed, worker.cancelled):
            # Direct: quit() is thread-safe, and a queued call would wait for the GUI
            # thread's event loop, which wait() blocks (so wait() could never succeed).
            signal.connect(thread.quit, Qt.ConnectionType.DirectConnection)
        thread.finished.connect(lambda s=serial: self._forget(s))
        self._threads[serial] = (thread, worker)
        thread.start()
        self.running_changed.emit(True)
        return serial

    def cancel(self) -> None:
        """Ask the current job to stop (it raises Cancelled at its next check)."""
        if self._cancel is not None:
            self._cancel.set()

    def is_running(self) -> bool:
        """True while any worker thread of this runner is alive."""
        return any(thread.isRunning() for thread, _ in self._threads.values())

    def released(self) -> bool:
        """True once every worker thread has ended and been let go (nothing more will be signalled)."""
        return not self._threads

    def wait(self, msecs: int = 10_000) -> bool:
        """Cancel and wait for every worker thread to end (used on close)."""
        self.cancel()
        ok = True
        for thread, _ in list(self._threads.values()):
            ok = thread.wait(msecs) and ok
        return ok

    # ------------------------------------------------------------------ signals
    def _current(self, serial: int) -> bool:
        return serial == self._serial

    def _on_progress(self, serial: int, done: int, total: int) -> None:
        if self._current(serial):
            self.progressed.emit(done, total)

    def _on_success(self, serial: int, result: object) -> None:
        if self._current(serial):
            self.finished.emit(result)

    def _on_failure(self, serial: int, message: str, details: str) -> None:
        if self._current(serial):
            self.failed.emit(message, details)

    def _on_cancel(self, serial: int) -> None:
        if self._current(serial):
            self.cancelled.emit()

    def _forget(self, serial: int) -> None:
        entry = self._threads.pop(serial, None)
        if entry is not None:
            entry[1].deleteLater()
            entry[0].deleteLater()
        if not self._threads:
            self.running_changed.emit(False)
