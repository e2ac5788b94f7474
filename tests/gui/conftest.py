"""GUI test set-up: settings in a temporary folder, and no worker thread left behind."""

from __future__ import annotations

import time
import weakref

import pytest


@pytest.fixture(autouse=True)
def private_settings(tmp_path, request):
    """Every test writes its QSettings under tmp_path, never into the user's real settings."""
    if "qtbot" not in request.fixturenames and "qapp" not in request.fixturenames:
        yield None
        return
    from PySide6.QtCore import QSettings

    folder = tmp_path / "settings"
    folder.mkdir()
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    for fmt in (QSettings.Format.IniFormat, QSettings.Format.NativeFormat):
        for scope in (QSettings.Scope.UserScope, QSettings.Scope.SystemScope):
            QSettings.setPath(fmt, scope, str(folder))
    yield folder


@pytest.fixture(autouse=True)
def no_thread_left(request, monkeypatch):
    """Fail a test that leaves a TaskRunner's worker thread running after it ends."""
    if "qtbot" not in request.fixturenames:
        yield
        return
    from PySide6.QtWidgets import QApplication

    from imputer_app.gui.workers import TaskRunner

    runners: weakref.WeakSet[TaskRunner] = weakref.WeakSet()
    original = TaskRunner.__init__

    def recording_init(self, *args, **kwargs):
        original(self, *args, **kwargs)
        runners.add(self)

    monkeypatch.setattr(TaskRunner, "__init__", recording_init)
    yield

    def running() -> list[TaskRunner]:
        alive = []
        for runner in list(runners):
            try:
                if runner.is_running():
                    alive.append(runner)
            except RuntimeError:  # the C++ object is gone, and with it its threads
                continue
        return alive

    deadline = time.monotonic() + 2.0
    while running() and time.monotonic() < deadline:
        QApplication.processEvents()
        time.sleep(0.01)
    left = running()
    for runner in left:
        runner.wait(10_000)
    if left:
        pytest.fail(f"{len(left)} background job(s) still running when the test ended", pytrace=False)
