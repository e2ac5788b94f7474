"""Open with options: worksheet, header row and markers, with a live preview."""

from __future__ import annotations

import openpyxl
import pytest
from PySide6.QtWidgets import QDialog

from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.markers import MARKERS
from imputer_app.gui.open_dialog import OpenDialog, parse_markers
from imputer_app.gui.settings import AppSettings


@pytest.fixture
def workbook(tmp_path):
    book = openpyxl.Workbook()
    first = book.active
    first.title = "Spring"
    for row in (["site", "pH", "NO3"], ["A", 7.1, 1.5], ["B", -999, 2.5], ["C", 7.3, "n.d."]):
        first.append(row)
    second = book.create_sheet("Autumn")
    for row in (["Campaign autumn"], ["site", "pH", "NO3"], ["A", 6.9, 0.5], ["B", 7.0, 0.7]):
        second.append(row)
    path = tmp_path / "campaign.xlsx"
    book.save(path)
    return path


def read(dialog, qtbot):
    qtbot.waitUntil(lambda: dialog.sheet() is not None, timeout=10_000)
    return dialog.sheet()


@pytest.fixture
def dialog(qtbot, workbook):
    d = OpenDialog(workbook, ["Spring", "Autumn"])
    qtbot.addWidget(d)
    yield d
    d.reject()


def test_preview_shows_the_first_rows_with_markers(dialog, qtbot):
    sheet = read(dialog, qtbot)
    assert sheet.source.sheet == "Spring" and list(sheet.frame.columns) == ["site", "pH", "NO3"]
    model = dialog.model
    assert model.rowCount() == 3
    assert model.data(model.index(2, 2)).startswith(MARKERS["censored"].symbol)  # n.d.: below the limit
    assert "3 rows × 3 columns" in dialog.status.text()


def test_extra_markers_and_another_sheet(dialog, qtbot):
    read(dialog, qtbot)
    dialog.markers_edit.setText("-999")
    qtbot.waitUntil(lambda: dialog.sheet() is not None and dialog.options()["markers"] == [-999.0])
    assert dialog.model.data(dialog.model.index(1, 1)) == f"{MARKERS['missing'].symbol} -999"
    dialog.sheet_combo.setCurrentText("Autumn")
    sheet = read(dialog, qtbot)
    assert sheet.source.sheet == "Autumn" and sheet.source.header_row == 2


def test_header_row_can_be_set(dialog, qtbot):
    read(dialog, qtbot)
    dialog.header_spin.setValue(2)
    qtbot.waitUntil(lambda: dialog.sheet() is not None and dialog.options()["header_row"] == 2)
    assert dialog.sheet().frame.columns[0] == "A"


@pytest.mark.parametrize(
    ("text", "expected"), [("", None), ("n.d., lost ,", ["n.d.", "lost"]), ("-999, nan", [-999.0, "nan"])]
)
def test_parse_markers(text, expected):
    assert parse_markers(text) == expected


def test_a_workbook_is_asked_about_only_when_no_guess_can_be_read(qtbot, tmp_path, monkeypatch):
    book = openpyxl.Workbook()
    book.active.title = "Notes"  # the first worksheet is empty: nothing to guess from
    second = book.create_sheet("Autumn")
    for row in (["site", "pH", "NO3"], ["A", 6.9, 0.5], ["B", 7.0, None]):
        second.append(row)
    path = tmp_path / "notes_first.xlsx"
    book.save(path)
    asked = []

    def choose_autumn(self):
        asked.append([self.sheet_combo.itemText(i) for i in range(self.sheet_combo.count())])
        self.sheet_combo.setCurrentText("Autumn")
        qtbot.waitUntil(
            lambda: self.sheet() is not None and self.sheet().source.sheet == "Autumn", timeout=10_000
        )
        return QDialog.DialogCode.Accepted

    monkeypatch.setattr(OpenDialog, "exec", choose_autumn)
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    with qtbot.waitSignal(window.sheet_loaded, timeout=10_000):
        window.open_path(path)
    assert asked == [["Notes", "Autumn"]]
    assert window.session.sheet.source.sheet == "Autumn" and window.table_model.rowCount() == 2
