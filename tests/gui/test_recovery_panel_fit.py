"""The recovery panel fits its column at 1400 x 900 and 1280 x 800 after "Use each column's best k".

The panel sits in a scroll area (one per side panel); at these common window sizes it
must need no scrolling: its minimum size, and the height its layout asks for at the
width it is given (word-wrapped text has a height for each width), fit the visible area.
"""

from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path

import pytest

from imputer_app.gui.launch import drive_to
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from tests.gui._screenshot import private_env, run


@pytest.mark.parametrize("width, height", [(1400, 900), (1280, 800)])
def test_recovery_panel_fits_after_using_each_column_s_best_k(qtbot, boxes, samples_dir, width, height):
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.interactive = False
    window.resize(width, height)
    window.show()
    with qtbot.waitSignal(window.sheet_loaded, timeout=30_000):
        window.open_path(samples_dir / "river_survey.xlsx", {})
    arrived: list[bool] = []
    drive_to(window, "per-column", lambda: arrived.append(True))  # as the README screenshot does
    qtbot.waitUntil(lambda: bool(arrived), timeout=60_000)
    panel = window.recovery_panel
    assert panel.session.plan.k_by_column  # each column's own k is in the plan
    assert panel.views.currentWidget() is panel.columns_view
    page = window.tabs.currentWidget()
    qtbot.waitUntil(lambda: page.viewport().width() >= panel.minimumSizeHint().width(), timeout=3000)
    viewport = page.viewport().size()
    minimum = panel.minimumSizeHint()
    assert minimum.width() <= viewport.width() and minimum.height() <= viewport.height()
    assert panel.heightForWidth(viewport.width()) <= viewport.height()
    assert page.verticalScrollBar().maximum() == 0 and page.horizontalScrollBar().maximum() == 0
    assert panel.height() <= viewport.height() and panel.width() <= viewport.width()
    if width >= 1400:  # every result tab on screen; narrower, the tab bar's arrows reach the last
        bar = panel.views.tabBar()
        assert all(bar.tabRect(i).right() <= bar.width() for i in range(bar.count()))
    window.session.mark_exported()
    assert panel.shutdown(10_000)
    window.close()


def test_the_results_area_asks_for_its_minimum_height_only(qtbot) -> None:
    """The cause of the overflow: a wrapping tab made the area ask for its table's full height."""
    from imputer_app.gui.recovery_panel import RecoveryPanel

    panel = RecoveryPanel()
    qtbot.addWidget(panel)
    panel.views.setCurrentWidget(panel.columns_view)
    area = panel.results
    assert panel.columns_view.hasHeightForWidth()  # its note wraps
    assert not area.hasHeightForWidth()
    assert area.sizeHint().height() == area.minimumSizeHint().height()
    assert panel.shutdown(10_000)


@pytest.mark.xvfb
@pytest.mark.slow
@pytest.mark.skipif(shutil.which("xvfb-run") is None, reason="xvfb-run is not installed")
@pytest.mark.parametrize("width, height", [(1400, 900), (1280, 800)])
def test_in_a_real_window_the_panel_needs_no_scrolling(tmp_path, samples_dir, width, height) -> None:
    env = private_env(tmp_path / "home")
    env.pop("QT_QPA_PLATFORM", None)  # the real xcb platform, with its fonts
    driver = Path(__file__).with_name("_panel_fit.py")
    screen = f"-screen 0 {width}x{height}x24"
    command = [
        "xvfb-run",
        "-a",
        "-s",
        screen,
        sys.executable,
        str(driver),
        str(samples_dir / "river_survey.xlsx"),
    ]
    done = run([*command, str(width), str(height)], env, timeout=150)
    assert done.returncode == 0, done.stderr[-2000:]
    facts = json.loads(done.stdout.strip().splitlines()[-1])
    (view_w, view_h), (min_w, min_h) = facts["viewport"], facts["minimum"]
    assert facts["per_column_k"]
    assert min_w <= view_w and min_h <= view_h
    assert facts["height_for_width"] <= view_h
    assert facts["scroll"] == [0, 0]
