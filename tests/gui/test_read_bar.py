"""A double-clicked workbook opens at once; the read choices sit in a bar above the table."""

from __future__ import annotations

import openpyxl
import pytest
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import QApplication

from imputer_app.gui.open_dialog import OpenDialog
from tests.gui.conftest import new_window


@pytest.fixture
def workbook(tmp_path):
    book = openpyxl.Workbook()
    first = book.active
    first.title = "Spring"
    for row in (
        ["site", "pH", "NO3"],
        ["A", 7.1, 1.5],
        ["B", "n.d.", 2.5],
        ["C", 7.3, "n.d."],
        ["D", 7.0, "<0.5"],
    ):
        first.append(row)
    second = book.create_sheet("Autumn")
    for row in (["Campaign autumn"], ["site", "pH", "NO3"], ["A", 6.9, 0.5], ["B", 7.0, 0.7]):
        second.append(row)
    path = tmp_path / "campaign.xlsx"
    book.save(path)
    return path


def test_a_two_sheet_workbook_opens_at_once_with_its_choices_in_the_bar(qtbot, workbook, monkeypatch):
    monkeypatch.setattr(OpenDialog, "exec", lambda self: pytest.fail("no dialog on a double-click"))
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=10_000):
        w.open_path(workbook)  # as kinfill-gui FILE does
    bar = w.data.read_bar
    assert w.session.sheet.source.sheet == "Spring" and w.table_model.rowCount() == 4
    assert not bar.isHidden() and not bar.sheet_combo.isHidden()
    assert [bar.sheet_combo.itemText(i) for i in range(bar.sheet_combo.count())] == ["Spring", "Autumn"]
    assert bar.header_spin.value() == 1
    # n.d. ("not detected") means below the limit by default, like <0.5 (README "What it does")
    assert bar.found.text() == "Found: n.d. ×2, <0.5 ×1 read as beyond a limit"

    # another worksheet from the bar: read again, its header row found anew
    with qtbot.waitSignal(w.sheet_loaded, timeout=10_000):
        bar.sheet_combo.setCurrentText("Autumn")
        bar.sheet_combo.activated.emit(1)
    assert w.session.sheet.source.sheet == "Autumn" and w.session.sheet.source.header_row == 2
    assert bar.header_spin.value() == 2 and w.table_model.rowCount() == 2

    # an extra marker from the bar
    with qtbot.waitSignal(w.sheet_loaded, timeout=10_000):
        bar.sheet_combo.setCurrentText("Spring")
        bar.sheet_combo.activated.emit(0)
    with qtbot.waitSignal(w.sheet_loaded, timeout=10_000):
        bar.markers_edit.setText("7.1")
        bar.markers_edit.editingFinished.emit()
    assert w.session.sheet.frame["pH"].isna().sum() == 2


def test_a_csv_shows_no_worksheet_choice(qtbot, samples_dir):
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(samples_dir / "river_survey.csv")
    assert not w.data.read_bar.isHidden() and w.data.read_bar.sheet_combo.isHidden()


def test_ctrl_q_closes_the_window_from_the_first_moment(qtbot, workbook):
    w = new_window(qtbot)
    # spelled out: the platform's standard Quit key is empty without a desktop theme
    assert w.actions_["quit"].shortcut() == QKeySequence("Ctrl+Q")
    w.open_path(workbook)  # reading has started; no dialog stands in the way
    assert QApplication.activeModalWidget() is None and w.actions_["quit"].isEnabled()
    w.actions_["quit"].trigger()
    qtbot.waitUntil(lambda: not w.isVisible(), timeout=10_000)


def test_the_demo_workbook_opens_on_its_data_sheet_without_a_dialog(qtbot, demo, monkeypatch):
    """The demo has a second sheet ("Methods", text only); a double-click opens "Survey"."""
    monkeypatch.setattr(OpenDialog, "exec", lambda self: pytest.fail("no dialog on a double-click"))
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(demo)  # as make run and kinfill-gui FILE do
    bar = w.data.read_bar
    sheet = w.session.sheet
    assert sheet.source.sheet == "Survey" and sheet.source.header_row == 2 and len(sheet.frame) == 304
    assert [bar.sheet_combo.itemText(i) for i in range(bar.sheet_combo.count())] == ["Survey", "Methods"]
    assert {"Oxygen saturation", "Notes"} <= set(w.session.plan.carried_columns)  # never filled by default
    assert not {"Oxygen saturation", "Notes"} & set(w.session.plan.fill_columns)
    w.close()
