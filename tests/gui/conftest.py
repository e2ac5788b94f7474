"""GUI test set-up: settings in a temporary folder, and no worker thread left behind."""

from __future__ import annotations

import time
import weakref

import pytest
from PySide6.QtWidgets import QMessageBox


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


class Questions:
    """Stands in for :func:`imputer_app.gui.fill_questions.choose`: records each question.

    ``answers`` is consumed first to last; without one, the safe answer (the last button)
    is given, as Escape would.
    """

    def __init__(self) -> None:
        self.asked: list[tuple[str, list[str]]] = []
        self.answers: list[str] = []

    def __call__(self, _parent, text, buttons):
        self.asked.append((text, [answer for answer, _label, _role in buttons]))
        return self.answers.pop(0) if self.answers else buttons[-1][0]


@pytest.fixture(autouse=True)
def questions(request, monkeypatch):
    """No fill question ever opens a modal box in a test; the test may script the answers."""
    if "qtbot" not in request.fixturenames:
        yield None
        return
    from imputer_app.gui import fill_questions

    stand_in = Questions()
    monkeypatch.setattr(fill_questions, "choose", stand_in)
    yield stand_in


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


# ------------------------------------------------ a window with the demo sheet open
class Boxes:
    """Records message boxes instead of showing them; answers questions with ``answer``."""

    def __init__(self, answer=QMessageBox.StandardButton.Cancel):
        self.warnings: list[str] = []
        self.questions: list[str] = []
        self.answer = answer

    def warning(self, parent, title, text, *a, **k):
        self.warnings.append(text)
        return QMessageBox.StandardButton.Ok

    def question(self, parent, title, text, *a, **k):
        self.questions.append(text)
        return self.answer


@pytest.fixture
def boxes(monkeypatch):
    b = Boxes()
    monkeypatch.setattr(QMessageBox, "warning", b.warning)
    monkeypatch.setattr(QMessageBox, "question", b.question)
    return b


@pytest.fixture
def demo(samples_dir):
    return samples_dir / "river_survey.xlsx"


def new_window(qtbot):
    """A shown main window with private settings, closed at the end of the test."""
    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.settings import AppSettings

    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    return w


@pytest.fixture
def window(qtbot, boxes, demo):
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(demo, {})
    yield w
    w.session.mark_exported()
    w.close()
