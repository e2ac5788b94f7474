"""An empty window shows a start page: open a sheet, open the demo, recent files, three steps."""

from __future__ import annotations

from PySide6.QtWidgets import QFileDialog

from imputer_app.gui import start_view
from tests.gui.conftest import new_window


def test_an_empty_window_shows_the_start_page_and_opens_the_demo(qtbot, samples_dir):
    w = new_window(qtbot)
    assert w.pages.currentWidget() is w.start and not w.start.isHidden()
    assert start_view.demo_sheet() == samples_dir / "river_survey.xlsx"
    assert not w.start.demo_button.isHidden()
    assert w.start.steps.text().count("<li>") == 3
    assert w.start.recent_title.isHidden()  # no recent files yet
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.start.demo_button.click()
    assert w.pages.currentWidget() is w.splitter
    assert w.session.path == samples_dir / "river_survey.xlsx"


def test_recent_files_and_open_from_the_start_page(qtbot, samples_dir, monkeypatch):
    first = new_window(qtbot)
    with qtbot.waitSignal(first.sheet_loaded, timeout=30_000):
        first.open_path(samples_dir / "river_survey.csv", {})
    first.close()
    w = new_window(qtbot)
    assert [b.text().split()[0] for b in w.start.recent_buttons] == ["river_survey.csv"]
    assert not w.start.recent_title.isHidden()
    target = samples_dir / "river_survey.xlsx"
    monkeypatch.setattr(QFileDialog, "getOpenFileName", lambda *a, **k: (str(target), ""))
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.start.open_button.click()
    assert w.session.path == target


def test_the_demo_button_hides_when_the_demo_is_absent(qtbot, monkeypatch):
    monkeypatch.setattr(start_view, "demo_sheet", lambda: None)
    w = new_window(qtbot)
    assert w.start.demo_button.isHidden()
