"""The whole job with the keyboard alone: every key goes to the widget that has the focus.

Open (Ctrl+O), set a role, a weight and k in the setup (Alt+1, arrows, Tab, typing, Alt+K),
set up and run the recovery test (Alt+P, Alt+M, Ctrl+T), use its best k (Alt+B),
preview (F5), walk the table to a filled cell (Alt+2, Ctrl+Home, arrows) and read its
donors, follow a donor (Alt+D, Tab, Enter), apply (Ctrl+Return), undo (Ctrl+Z), redo
(Ctrl+Shift+Z) and export (Ctrl+E). The export read back equals ``impute`` on the same
plan (one code path fills cells, DEVELOPERS.md "Layers").

Mnemonics avoid the menu bar's letters (F, E, I, V, H) so Alt+F still opens File
(common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication, QFileDialog, QLabel, QMessageBox, QPushButton, QWidget

from imputer_app.engine import impute
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from imputer_app.sheets import read_sheet

pytestmark = pytest.mark.slow

ALT, CTRL, SHIFT = (
    Qt.KeyboardModifier.AltModifier,
    Qt.KeyboardModifier.ControlModifier,
    Qt.KeyboardModifier.ShiftModifier,
)
MENU_LETTERS = {"F", "E", "I", "V", "H"}


@pytest.fixture
def window(qtbot, monkeypatch, samples_dir, tmp_path):
    def no_box(*args, **kwargs):
        raise AssertionError(f"unexpected message box: {args[2] if len(args) > 2 else args}")

    monkeypatch.setattr(QMessageBox, "warning", no_box)
    monkeypatch.setattr(QMessageBox, "question", no_box)
    monkeypatch.setattr(
        QFileDialog, "getOpenFileName", lambda *a, **k: (str(samples_dir / "river_survey.xlsx"), "")
    )
    monkeypatch.setattr(
        QFileDialog, "getSaveFileName", lambda *a, **k: (str(tmp_path / "river_survey.filled.xlsx"), "")
    )
    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    w.activateWindow()
    qtbot.waitExposed(w)
    yield w
    w.session.mark_exported()
    w.close()


def press(qtbot, window: QWidget, key: Qt.Key, modifiers=Qt.KeyboardModifier.NoModifier, times: int = 1):
    """Press ``key`` where a keyboard user's key goes: to the widget with the focus."""
    for _ in range(times):
        qtbot.keyClick(QApplication.focusWidget() or window, key, modifiers)


def idle(qtbot, window: MainWindow) -> None:
    """Wait until the window's and the recovery panel's worker threads have wound down."""
    qtbot.waitUntil(
        lambda: not window.runner.is_running() and not window.recovery_panel.runner.is_running(),
        timeout=10_000,
    )


def type_text(qtbot, window: QWidget, text: str) -> None:
    """Select the field's text (Ctrl+A) and type ``text`` over it."""
    press(qtbot, window, Qt.Key.Key_A, CTRL)
    qtbot.keyClicks(QApplication.focusWidget(), text)


def mnemonic(text: str) -> str | None:
    """The letter Alt opens in a widget's text ("Use &best k" -> "B"), or None."""
    plain = text.replace("&&", "")
    return plain.split("&", 1)[1][:1].upper() if "&" in plain and "<" not in plain else None


def test_every_alt_letter_has_one_meaning(window):
    """Menus, tabs, buttons and field labels never share an Alt+letter, so Alt+F opens
    File and Alt+B presses "Use best k" at once (a shared letter only moves the focus)."""
    owners: dict[str, list[str]] = {}
    texts = [w.text() for w in window.findChildren(QWidget) if isinstance(w, QLabel | QPushButton)]
    texts += [window.tabs.tabText(i) for i in range(window.tabs.count())]
    texts += [action.text() for action in window.menuBar().actions()]
    for text in texts:
        letter = mnemonic(text)
        if letter is not None:
            owners.setdefault(letter, []).append(text)
    shared = {letter: names for letter, names in owners.items() if len(names) > 1}
    assert shared == {}
    assert {mnemonic(a.text()) for a in window.menuBar().actions()} == MENU_LETTERS


def test_the_whole_job_by_keyboard(window, qtbot, tmp_path):
    # open: Ctrl+O (the file dialog is replaced by the demo sheet)
    with qtbot.waitSignal(window.sheet_loaded, timeout=30_000):
        press(qtbot, window, Qt.Key.Key_O, CTRL)
    setup = window.setup
    idle(qtbot, window)

    # setup: Alt+1 to the column list, arrows to Temperature, Tab to its role, "s" picks
    # "similarity only"; two more Tabs reach its weight
    press(qtbot, window, Qt.Key.Key_1, ALT)
    assert QApplication.focusWidget() is setup.table
    names = [c.name for c in setup.choices()]
    start = setup.table.currentIndex().row()
    press(qtbot, window, Qt.Key.Key_Down, times=names.index("Temperature") - start)
    assert [
        c.name for c in setup.choices() if setup.table.selectionModel().isRowSelected(names.index(c.name))
    ] == ["Temperature"]
    press(qtbot, window, Qt.Key.Key_Tab)
    assert QApplication.focusWidget() is setup.role_combo
    press(qtbot, window, Qt.Key.Key_S)
    press(qtbot, window, Qt.Key.Key_Tab, times=2)
    assert QApplication.focusWidget() is setup.weight_spin
    type_text(qtbot, window, "2.5")
    plan = window.session.plan
    assert "Temperature" in plan.similarity_columns and "Temperature" not in plan.fill_columns
    assert plan.weights == {"Temperature": 2.5}

    # k: Alt+K goes to the k field
    press(qtbot, window, Qt.Key.Key_K, ALT)
    assert QApplication.focusWidget() is setup.k_spin
    type_text(qtbot, window, "7")
    assert window.session.plan.k == 7

    # recovery test: Alt+P (repeats), Alt+M (k from) and Tab (k to), then Ctrl+T
    panel = window.recovery_panel
    press(qtbot, window, Qt.Key.Key_P, ALT)
    assert QApplication.focusWidget() is panel.repeats
    type_text(qtbot, window, "2")
    press(qtbot, window, Qt.Key.Key_M, ALT)
    assert QApplication.focusWidget() is panel.k_from
    press(qtbot, window, Qt.Key.Key_Tab)
    type_text(qtbot, window, "8")
    assert (panel.request().repeats, panel.request().k_from, panel.request().k_to) == (2, 1, 8)
    with qtbot.waitSignal(panel.report_ready, timeout=60_000) as ready:
        press(qtbot, window, Qt.Key.Key_T, CTRL)
    report = ready.args[0]
    idle(qtbot, window)

    # Alt+B presses "Use best k" (the panel's note comes from that button alone)
    press(qtbot, window, Qt.Key.Key_B, ALT)
    qtbot.waitUntil(lambda: panel.status.text() == f"k set to {report.best_k}.", timeout=2000)
    assert setup.k_spin.value() == report.best_k == window.session.plan.k

    # F5 previews
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        press(qtbot, window, Qt.Key.Key_F5)
    preview = window.session.preview
    assert preview is not None and window.session.applied is None
    idle(qtbot, window)

    # Alt+2 to the table, Ctrl+Home, then arrows to the first filled cell
    fill = window.table_model.fill_codes
    r, c = (int(v) for v in np.argwhere(fill > 0)[0])
    press(qtbot, window, Qt.Key.Key_2, ALT)
    assert QApplication.focusWidget() is window.table
    press(qtbot, window, Qt.Key.Key_Home, CTRL)
    press(qtbot, window, Qt.Key.Key_Right, times=c)
    press(qtbot, window, Qt.Key.Key_Down, times=r)
    assert (window.table.currentIndex().row(), window.table.currentIndex().column()) == (r, c)
    label, column = window.table_model.row_label(r), window.table_model.column_names()[c]
    entry = preview.log[(preview.log["row"] == label) & (preview.log["column"] == column)].iloc[0]
    story = window.donor_panel.story
    assert window.current_panel() is window.donor_panel and story.status == "filled"
    assert [d.label for d in story.donors] == list(entry["donors"])
    assert [d.distance for d in story.donors] == pytest.approx(list(entry["distances"]))

    # one more arrow to another filled cell of the same column: the panel follows
    below = int(np.argwhere(fill[r + 1 :, c] > 0)[0][0]) + 1
    press(qtbot, window, Qt.Key.Key_Down, times=below)
    moved = window.table_model.row_label(r + below)
    assert window.donor_panel.story.headline.startswith(f"Row {moved}, {column}")

    # Alt+D shows the donors tab, Alt+3 and Tab reach its list; Enter on a donor shows its row
    press(qtbot, window, Qt.Key.Key_D, ALT)
    assert window.current_panel() is window.donor_panel
    press(qtbot, window, Qt.Key.Key_3, ALT)  # to the tab bar; Tab enters the panel shown
    press(qtbot, window, Qt.Key.Key_Tab)
    assert QApplication.focusWidget() is window.donor_panel.table
    press(qtbot, window, Qt.Key.Key_Down, times=2)
    donor = window.donor_panel.story.donors[window.donor_panel.table.currentIndex().row()].label
    press(qtbot, window, Qt.Key.Key_Return)
    assert window.table_model.row_label(window.table.currentIndex().row()) == donor
    assert QApplication.focusWidget() is window.table

    # Ctrl+Return applies, Ctrl+Z takes it back, Ctrl+Shift+Z applies it again
    press(qtbot, window, Qt.Key.Key_Return, CTRL)
    assert window.session.applied is preview and window.table_model.layer_kind == "applied"
    press(qtbot, window, Qt.Key.Key_Z, CTRL)
    assert window.session.applied is None
    press(qtbot, window, Qt.Key.Key_Z, CTRL | SHIFT)
    assert window.session.applied is preview

    # Ctrl+E exports (the save dialog is replaced by a path); read back = impute on the plan
    target = tmp_path / "river_survey.filled.xlsx"
    with qtbot.waitSignal(window.exported, timeout=30_000):
        press(qtbot, window, Qt.Key.Key_E, CTRL)
    assert not window.session.dirty
    back = read_sheet(target)
    expected = impute(read_sheet(window.session.path), window.session.plan).frame
    numbers = [n for n in expected.columns if expected[n].dtype.kind == "f" and n != "Oxygen saturation"]
    np.testing.assert_allclose(back.frame[numbers].to_numpy(float), expected[numbers].to_numpy(float))
    # the formula column stays formulas, without stored results (recomputed when opened)
    assert (back.states["Oxygen saturation"] == "formula_error").all()


@pytest.mark.parametrize(
    ("letter", "menu"),
    [(Qt.Key.Key_F, "menuFile"), (Qt.Key.Key_I, "menuFill"), (Qt.Key.Key_H, "menuHelp")],
    ids=["alt-f", "alt-i", "alt-h"],
)
def test_alt_letter_opens_its_menu(window, qtbot, letter, menu):
    """Alt+F, Alt+I and Alt+H open File, Fill and Help even with the setup focused."""
    window.setup.table.setFocus()
    press(qtbot, window, letter, ALT)
    popup = window.menuBar().findChild(QWidget, menu)
    qtbot.waitUntil(popup.isVisible, timeout=2000)
    press(qtbot, window, Qt.Key.Key_Escape)
    qtbot.waitUntil(lambda: not popup.isVisible(), timeout=2000)
