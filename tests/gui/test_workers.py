"""The background runner delivers results, errors and cancellation on the GUI thread."""

from __future__ import annotations

import threading
import time

from imputer_app.errors import KinfillError
from imputer_app.gui.workers import TaskRunner
from imputer_app.work import raise_if_cancelled


def test_result_and_progress_arrive(qtbot):
    runner = TaskRunner()
    seen: list[tuple[int, int]] = []
    runner.progressed.connect(lambda d, t: seen.append((d, t)))

    def job(progress, cancel):
        for i in range(3):
            progress(i + 1, 3)
        return threading.current_thread() is not threading.main_thread()

    with qtbot.waitSignal(runner.finished, timeout=5000) as blocker:
        runner.start(job)
    assert blocker.args == [True]  # ran off the GUI thread
    qtbot.waitUntil(lambda: not runner.is_running(), timeout=5000)
    assert seen[-1] == (3, 3)


def test_user_error_is_one_line_without_traceback(qtbot):
    runner = TaskRunner()

    def job(progress, cancel):
        raise KinfillError("column 'pH' is not in the sheet")

    with qtbot.waitSignal(runner.failed, timeout=5000) as blocker:
        runner.start(job)
    assert blocker.args == ["column 'pH' is not in the sheet", ""]
    assert runner.wait()


def test_cancel_stops_the_job_and_a_newer_job_wins(qtbot):
    runner = TaskRunner()
    results: list[object] = []
    runner.finished.connect(results.append)

    def slow(progress, cancel):
        while True:
            raise_if_cancelled(cancel)
            time.sleep(0.01)

    runner.start(slow)
    with qtbot.waitSignal(runner.finished, timeout=5000):
        runner.start(lambda progress, cancel: "new")
    assert results == ["new"]
    qtbot.waitUntil(lambda: not runner.is_running(), timeout=5000)

    with qtbot.waitSignal(runner.cancelled, timeout=5000):
        runner.start(slow)
        runner.cancel()
    assert runner.wait()
