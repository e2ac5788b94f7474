"""``kinfill-gui``: arguments, the icon, and a screenshot run as a separate (offscreen) process."""

from __future__ import annotations

import pytest

from imputer_app.gui import launch
from tests.gui._screenshot import launch_command, picture_facts, private_env, run


def test_screenshot_needs_a_file(capsys):
    assert launch.main(["--screenshot", "x.png"]) == 2
    assert "needs a FILE" in capsys.readouterr().err


def test_version(capsys):
    with pytest.raises(SystemExit) as stop:
        launch.main(["--version"])
    assert stop.value.code == 0 and "kinfill-gui 0." in capsys.readouterr().out


def test_startup_objects_are_frozen_and_later_cycles_still_collected():
    # run apart: freezing is for the whole process, which the test session must not be
    import subprocess
    import sys

    code = (
        "import gc, weakref\n"
        "from imputer_app.gui.launch import freeze_startup_objects\n"
        "class Node: pass\n"
        "kept = Node(); kept.me = kept\n"
        "freeze_startup_objects()\n"
        "frozen = gc.get_freeze_count()\n"
        "later = Node(); later.me = later; gone = weakref.ref(later); del later\n"
        "gc.collect()\n"
        "print(frozen > 1_000 and len(gc.get_objects()) < frozen, gc.get_count()[2] == 0)\n"
        "print(gone() is None, kept.me is kept)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.split() == ["True", "True", "True", "True"]


def test_icon_comes_from_resources(qapp):
    icon = launch.app_icon()
    assert not icon.isNull() and icon.pixmap(64, 64).width() == 64


@pytest.mark.slow
def test_opens_the_demo_sheet_and_saves_a_picture(tmp_path, samples_dir):
    png = tmp_path / "window.png"
    done = run(
        launch_command(samples_dir / "river_survey.xlsx", png),
        private_env(tmp_path / "home", QT_QPA_PLATFORM="offscreen"),
    )
    assert done.returncode == 0, done.stderr
    width, height, colours = picture_facts(png)
    assert (width, height) >= (900, 600) and colours > 20  # a window full of table, not a blank grab


@pytest.mark.slow
def test_a_missing_file_fails_the_screenshot_run(tmp_path):
    png = tmp_path / "window.png"
    done = run(
        launch_command(tmp_path / "nope.xlsx", png),
        private_env(tmp_path / "home", QT_QPA_PLATFORM="offscreen"),
    )
    assert done.returncode == launch.EXIT_READ_FAILED and not png.exists()


@pytest.mark.slow
def test_a_screenshot_past_its_time_limit_stops_the_work_and_exits_cleanly(tmp_path, samples_dir):
    """The time limit may end while the recovery test still runs (a long sheet): the app
    cancels it and waits, then exits with its own code (a thread left running aborted the
    process as Python shut down). The test stands in a recovery test that runs until it is
    cancelled, and notes that it started."""
    import sys

    png, started = tmp_path / "window.png", tmp_path / "started"
    code = (
        "import sys, time\n"
        "from pathlib import Path\n"
        "from imputer_app import validation\n"
        "from imputer_app.errors import Cancelled\n"
        "from imputer_app.gui import launch\n"
        "from imputer_app.work import is_cancelled\n"
        "def endless(*args, cancel=None, **kw):\n"
        f"    Path({str(started)!r}).touch()\n"
        "    while not is_cancelled(cancel):\n"
        "        time.sleep(0.01)\n"
        "    raise Cancelled('stopped')\n"
        "validation.recovery_test = endless\n"
        "launch.SCREENSHOT_TIMEOUT_MS = 8000\n"
        f"args = [{str(samples_dir / 'river_survey.xlsx')!r}, '--screenshot', {str(png)!r}]\n"
        "sys.exit(launch.main(args + ['--screenshot-state', 'preview']))\n"
    )
    done = run([sys.executable, "-c", code], private_env(tmp_path / "home", QT_QPA_PLATFORM="offscreen"))
    assert started.exists(), done.stderr  # the recovery test was running when time ran out
    assert done.returncode == launch.EXIT_TIMEOUT, done.stderr
    assert "Destroyed while thread" not in done.stderr and not png.exists()


@pytest.mark.slow
@pytest.mark.parametrize("state", launch.SCREENSHOT_STATES)
def test_screenshot_states_bring_the_window_there(qtbot, samples_dir, state):
    """``--screenshot-state``: the sheet as read; the recovery test with its best k in use;
    then a fill preview with the first filled cell selected and its donors shown."""
    import numpy as np

    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.settings import AppSettings

    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.show()
    with qtbot.waitSignal(window.sheet_loaded, timeout=30_000):
        window.open_path(samples_dir / "river_survey.xlsx", {})
    window.recovery_panel.k_to.setValue(6)
    window.recovery_panel.repeats.setValue(2)
    k_before = window.session.plan.k
    reached: list[str] = []
    launch.drive_to(window, state, lambda: reached.append(state))
    qtbot.waitUntil(lambda: reached == [state], timeout=60_000)
    report, preview = window.session.report, window.session.preview
    if state == "sheet":
        assert report is None and preview is None and window.session.plan.k == k_before
        return
    assert window.session.plan.k == report.best_k
    if state == "recovery":
        assert preview is None and not window.session.plan.k_by_column
        return
    if state == "per-column":
        panel = window.recovery_panel
        assert preview is None and window.session.plan.k_by_column == report.k_by_column_1se
        assert panel.views.currentWidget() is panel.columns_view
        return
    if state == "weights":
        panel = window.recovery_panel
        assert preview is None and panel.weights_view.suggestion is not None
        assert window.session.plan.weights == {}  # shown, not applied
        return
    first = np.argwhere(window.table_model.fill_codes > 0)[0]
    current = window.table.currentIndex()
    assert (current.row(), current.column()) == tuple(int(v) for v in first)
    assert preview.plan.k == report.best_k
    assert window.current_panel() is window.donor_panel and window.donor_panel.story.status == "filled"
