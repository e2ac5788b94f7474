"""The window around the flow: cancel, errors, export safety, closing, plans, settings, keyboard."""

from __future__ import annotations

import threading
import time

import numpy as np
import pytest
from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
from PySide6.QtGui import QDropEvent
from PySide6.QtWidgets import (
    QAbstractButton,
    QAbstractItemView,
    QAbstractSpinBox,
    QComboBox,
    QFileDialog,
    QLineEdit,
    QMessageBox,
    QTabBar,
    QTabWidget,
    QWidget,
)

import imputer_app.engine
from imputer_app.plan import FillPlan
from imputer_app.work import raise_if_cancelled
from tests.gui.conftest import new_window  # the fixtures boxes, demo and window live there too


def preview_and_apply(w, qtbot):
    with qtbot.waitSignal(w.preview_ready, timeout=30_000):
        w.preview_fill()
    w.apply_fill()


def test_cancel_during_a_recovery_test_changes_nothing(window, qtbot):
    panel = window.recovery_panel
    plan, k = window.session.plan, window.setup.k_spin.value()
    panel.k_to.setValue(60)
    panel.repeats.setValue(40)
    with qtbot.waitSignal(panel.runner.progressed, timeout=30_000):
        panel.run_button.click()
    with qtbot.waitSignal(panel.runner.cancelled, timeout=30_000):
        panel.cancel_button.click()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=10_000)
    assert panel.report is None and window.session.report is None
    assert window.session.plan == plan and window.setup.k_spin.value() == k
    assert window.session.preview is None and window.table_model.layer is None


def test_cancel_during_a_preview_changes_nothing_and_one_job_runs_at_a_time(window, qtbot, monkeypatch):
    started = threading.Event()

    def slow_impute(self, data, plan, progress=None, cancel=None):
        started.set()
        while True:
            raise_if_cancelled(cancel)
            time.sleep(0.01)

    # the preview fills through the session's neighbour cache
    monkeypatch.setattr(imputer_app.engine.NeighbourCache, "impute", slow_impute)
    window.preview_fill()
    qtbot.waitUntil(started.is_set, timeout=5000)
    assert window.busy.isVisible() and not window.actions_["export"].isEnabled()
    sheet = window.session.sheet
    window.open_path(window.session.path, {})  # e.g. a file dropped meanwhile: refused, not queued
    assert "Still busy" in window.statusBar().currentMessage() and window.session.sheet is sheet
    with qtbot.waitSignal(window.runner.cancelled, timeout=5000):
        window.busy.cancel_button.click()
    assert window.session.preview is None and window.table_model.layer is None
    qtbot.waitUntil(lambda: not window.busy.isVisible(), timeout=5000)


def test_a_bad_file_shows_one_line_and_keeps_the_data(window, qtbot, boxes, tmp_path):
    bad = tmp_path / "broken.xlsx"
    bad.write_bytes(b"this is not a workbook")
    sheet = window.session.sheet
    with qtbot.waitSignal(window.runner.failed, timeout=10_000):
        window.open_path(bad, {})
    assert len(boxes.warnings) == 1 and "\n" not in boxes.warnings[0] and "broken.xlsx" in boxes.warnings[0]
    assert window.session.sheet is sheet and window.table_model.rowCount() == len(sheet.frame)


def test_export_never_writes_over_the_source(window, qtbot, boxes):
    preview_and_apply(window, qtbot)
    before = window.session.path.read_bytes()
    window.export(window.session.path)
    assert "never writes over" in boxes.warnings[-1]
    assert window.session.path.read_bytes() == before and not window.runner.is_running()


def test_export_asks_before_replacing(window, qtbot, boxes, tmp_path, monkeypatch):
    preview_and_apply(window, qtbot)
    target = tmp_path / "out.xlsx"
    target.write_bytes(b"keep me")
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(target), ""))
    boxes.answer = QMessageBox.StandardButton.No
    window.export()
    assert "already exists" in boxes.questions[-1] and target.read_bytes() == b"keep me"
    boxes.answer = QMessageBox.StandardButton.Yes
    with qtbot.waitSignal(window.exported, timeout=30_000):
        window.export()
    assert target.read_bytes()[:2] == b"PK"  # now an xlsx (a zip)


def test_export_offers_stem_filled_xlsx(window, qtbot, monkeypatch):
    preview_and_apply(window, qtbot)
    offered = []
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: offered.append(a[2]) or ("", ""))
    window.export()
    assert offered[0].endswith("river_survey.filled.xlsx")


@pytest.mark.parametrize(("answer", "closes"), [("cancel", False), ("discard", True)])
def test_closing_with_an_unexported_fill_asks_first(qtbot, questions, demo, answer, closes):
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(demo, {})
    preview_and_apply(w, qtbot)
    questions.answers = [answer]
    assert w.close() == closes
    text, offered = questions.asked[-1]
    assert "not been exported" in text and offered == ["export", "discard", "cancel"]
    if not closes:
        w.session.mark_exported()
        assert w.close()


def test_plan_saves_and_loads(window, tmp_path):
    window.setup.set_k(3)
    window.setup.select_columns(["Turbidity"])
    window.setup.weight_spin.setValue(0.5)
    path = window.save_plan(tmp_path / "river.plan.toml")
    assert FillPlan.load(path) == window.session.plan
    window.setup.set_k(9)
    window.open_plan(path)
    assert window.session.plan.k == 3 and window.session.plan.weights == {"Turbidity": 0.5}


def test_a_plan_naming_unknown_columns_is_refused_in_one_line(window, boxes, tmp_path):
    path = FillPlan(carried_columns=("no such column",)).save(tmp_path / "other.plan.toml")
    plan = window.session.plan
    window.open_plan(path)
    assert "no such column" in boxes.warnings[-1] and window.session.plan == plan


def test_dropping_a_file_opens_it(qtbot, boxes, demo):
    w = new_window(qtbot)
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(demo))])
    event = QDropEvent(
        QPointF(10, 10),
        Qt.DropAction.CopyAction,
        mime,
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.NoModifier,
    )
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.dropEvent(event)
    assert w.session.path == demo


def test_settings_persist_between_windows(qtbot, boxes, demo, private_settings):
    first = new_window(qtbot)
    with qtbot.waitSignal(first.sheet_loaded, timeout=30_000):
        first.open_path(demo, {})
    first.setup.set_k(7)
    first.resize(760, 560)  # inside the offscreen screen (800 x 600), so restoring keeps it
    first.splitter.setSizes([200, 300, 260])
    sizes = first.splitter.sizes()
    assert first.close()
    second = new_window(qtbot)
    assert second.settings.recent_files() == [demo.resolve()]
    assert [a.toolTip() for a in second.recent_menu.actions()[:1]] == [str(demo.resolve())]
    assert (second.width(), second.height()) == (760, 560)
    with qtbot.waitSignal(second.sheet_loaded, timeout=30_000):
        second.recent_menu.actions()[0].trigger()
    assert second.splitter.sizes() == sizes  # shown once a sheet is open (the start page before)
    assert second.session.plan.k == FillPlan().k  # settings belong to a sheet's fills, not the app
    assert list(private_settings.rglob("*.conf")) or list(private_settings.rglob("*.ini"))


def test_keyboard_runs_the_main_steps(window, qtbot):
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        qtbot.keyClick(window, Qt.Key.Key_F5)
    qtbot.keyClick(window, Qt.Key.Key_Return, Qt.KeyboardModifier.ControlModifier)
    assert window.session.applied is not None
    qtbot.keyClick(window, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)
    assert window.session.applied is None
    qtbot.keyClick(
        window, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.ShiftModifier
    )
    assert window.session.applied is not None
    window.table.setFocus()
    qtbot.keyClick(window, Qt.Key.Key_F3)
    index = window.table.currentIndex()
    assert window.table_model.codes[index.row(), index.column()] in (1, 2, 3)


def _inside(widget: QWidget, kinds) -> bool:
    """True for the parts Qt builds inside a compound control (a combo's list, a spin box's editor)."""
    parent = widget.parent()
    while parent is not None:
        if isinstance(parent, kinds):
            return True
        parent = parent.parent()
    return False


def test_every_control_is_named_and_explained(window):
    controls = (QAbstractButton, QComboBox, QAbstractSpinBox, QLineEdit, QAbstractItemView, QTabWidget)
    unnamed = []
    for widget in window.findChildren(QWidget):
        if not isinstance(widget, controls) or _inside(
            widget, (QAbstractSpinBox, QComboBox, QTabBar, QLineEdit)
        ):
            continue
        if widget.objectName().startswith("qt_"):  # Qt's own parts (corner and overflow buttons)
            continue
        if type(widget).__name__ in ("QTabBar", "QScrollBar", "QToolBarExtension", "QHeaderView"):
            continue
        if not widget.objectName() or not widget.accessibleName() or not widget.toolTip():
            unnamed.append(f"{type(widget).__name__} {widget.objectName()!r} {widget.accessibleName()!r}")
    assert unnamed == [], "\n".join(unnamed)
    assert all(a.objectName() for a in window.actions_.values())
    assert all(a.toolTip() for a in window.actions_.values())


def test_next_gap_wraps_around(window, qtbot):
    codes = window.table_model.codes
    last = np.argwhere(np.isin(codes, (1, 2, 3)))[-1]
    window.select_position(int(last[0]), int(last[1]))
    window.next_gap()
    first = np.argwhere(np.isin(codes, (1, 2, 3)))[0]
    index = window.table.currentIndex()
    assert (index.row(), index.column()) == (int(first[0]), int(first[1]))


def test_tab_order_runs_setup_then_table_then_panels(window):
    stops = []
    widget = window.setup.table
    for _ in range(400):
        tabbable = widget.focusPolicy() & Qt.FocusPolicy.TabFocus
        if tabbable and widget.isVisibleTo(window) and widget.isEnabled():
            stops.append(widget)
        widget = widget.nextInFocusChain()
        if widget is window.setup.table:
            break
    wanted = [*window.setup.focus_chain(), window.table, window.gap_map, window.tabs]
    positions = [stops.index(w) for w in wanted if w in stops]
    assert len(positions) == len(wanted) and positions == sorted(positions)


def test_apply_undo_and_redo_draw_the_table_once_each(window, qtbot, monkeypatch):
    # Apply says both that the preview went and that a fill was applied: one drawing of
    # the table serves both, and the coverage of the fill shown stays as it is (a drawing
    # costs the window time on a long sheet); each step shows the fill it leaves in force
    from imputer_app.gui import coverage_view

    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    drawn: list[tuple[object, str]] = []
    draw = window.data.set_layer
    monkeypatch.setattr(window.data, "set_layer", lambda r, kind: (drawn.append((r, kind)), draw(r, kind)))
    covered: list[object] = []
    cover = coverage_view.sheet_coverage
    monkeypatch.setattr(coverage_view, "sheet_coverage", lambda r: (covered.append(r), cover(r))[1])
    result = window.session.preview
    window.apply_fill()
    assert drawn == [(result, "applied")] and covered == []  # the preview's own coverage
    assert window.table_model.layer is result and window.table_model.layer_kind == "applied"
    window.undo()
    assert drawn[1:] == [(None, "applied")] and covered == [None]
    assert window.table_model.layer is None
    window.redo()
    assert drawn[2:] == [(result, "applied")] and covered == [None, result]
    assert window.table_model.layer is result
