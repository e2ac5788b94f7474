"""The window's job desk: one job at a time, and a job that ends (any way) frees the desk."""

from __future__ import annotations

import threading

from PySide6.QtWidgets import QMainWindow

from imputer_app.errors import Cancelled, KinfillError
from imputer_app.gui.window_jobs import JobDesk


def make_desk(qtbot):
    window = QMainWindow()
    qtbot.addWidget(window)
    errors: list[str] = []
    return window, JobDesk(window, window.statusBar(), errors.append), errors


def stopped(progress, cancel):
    raise Cancelled("stopped")


def broken(progress, cancel):
    raise KinfillError("column 'pH' is missing")


def test_a_second_job_is_refused_while_one_is_at_work(qtbot):
    window, desk, _ = make_desk(qtbot)
    release = threading.Event()
    results: list[int] = []
    with qtbot.waitSignal(desk.runner.finished, timeout=5000):
        assert desk.run("Waiting…", lambda p, c: release.wait(5) and 1, results.append)
        assert not desk.run("Second…", lambda p, c: 2, results.append)
        assert window.statusBar().currentMessage().startswith("Still busy with: Waiting…")
        release.set()
    assert results == [1]
    qtbot.waitUntil(desk.runner.released, timeout=5000)  # no signal left to arrive after the test


def test_a_stopped_or_failed_job_frees_the_desk(qtbot):
    window, desk, errors = make_desk(qtbot)
    results: list[int] = []
    with qtbot.waitSignal(desk.runner.cancelled, timeout=5000):
        assert desk.run("Stopping…", stopped, results.append)
    assert window.statusBar().currentMessage() == "Stopped; nothing was changed."
    with qtbot.waitSignal(desk.runner.failed, timeout=5000):
        assert desk.run("Failing…", broken, results.append)
    assert errors == ["column 'pH' is missing"]
    with qtbot.waitSignal(desk.runner.finished, timeout=5000):
        assert desk.run("Again…", lambda p, c: 42, results.append)
    assert results == [42]
    qtbot.waitUntil(desk.runner.released, timeout=5000)  # no signal left to arrive after the test
