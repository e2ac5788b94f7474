"""Every message describes the present state; Export writes what the screen shows.

Covers: the status bar after Apply, Undo and Redo; the recovery panel after cancelling
a first test; remarks that follow the fill on screen; a preview over an applied fill
(said above the table, settled before an export); a k larger than the donors; the
quit prompt that offers Export.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from imputer_app.gui.status_text import fill_remarks, state_line
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from tests.gui.conftest import new_window
from tests.gui.test_column_setup import choose
from tests.gui.test_main_window import preview_and_apply


def status(w) -> str:
    return w.statusBar().currentMessage()


def test_after_undo_the_status_bar_no_longer_speaks_of_an_applied_fill(window, qtbot):
    preview_and_apply(window, qtbot)
    assert status(window).startswith("Fill at k = ") and "Export (Ctrl+E)" in status(window)
    assert window.actions_["export"].isEnabled()
    window.undo()
    assert not window.actions_["export"].isEnabled()
    assert "applied" not in status(window) and "Export" not in status(window)
    assert status(window).startswith("The sheet as read: nothing filled. Redo")
    window.redo()
    assert status(window).startswith("Fill at k = ") and window.actions_["export"].isEnabled()


def test_cancelling_the_first_recovery_test_does_not_promise_a_previous_result(window, qtbot):
    panel = window.recovery_panel
    panel.repeats.setValue(40)
    with qtbot.waitSignal(panel.runner.progressed, timeout=30_000):
        panel.run_button.click()
    with qtbot.waitSignal(panel.runner.cancelled, timeout=30_000):
        panel.cancel_button.click()
    assert panel.report is None
    assert panel.status.text() == "Stopped. No result yet."


class _Result:
    """Just what the status words read from a fill result."""

    def __init__(self, k: int, filled: int, warnings=()):
        self.plan = FillPlan(k=k)
        self.filled = pd.DataFrame({"a": [True] * filled + [False]})
        self.warnings = tuple(warnings)


def test_remarks_follow_the_fill_on_screen(demo):
    from imputer_app.gui.state import Session

    session = Session()
    session.load(read_sheet(demo))
    session.set_preview(_Result(5, 3, ["column 'pH': few donors"]))  # type: ignore[arg-type]
    assert fill_remarks(session, "") == "Remarks on the preview: column 'pH': few donors"
    # pH set to carried: the plan changes, the preview and its remark go.
    session.set_plan(session.plan.replace(carried_columns=("pH",)))
    assert (
        session.preview is None and fill_remarks(session, "Remarks on reading: x") == "Remarks on reading: x"
    )
    assert state_line(session).startswith("The sheet as read: nothing filled.")


def test_a_remark_disappears_from_the_window_when_its_preview_is_dropped(window, qtbot):
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    remarked = dataclasses.replace(window.session.preview, warnings=("column 'pH' has few donors",))
    window.session.set_preview(remarked)
    assert "Remarks on the preview: column 'pH'" in window.notice.text()
    window.setup.select_columns(["pH"])
    choose(window.setup.role_combo, "carried")
    assert "pH" in window.session.plan.carried_columns
    assert "pH" not in window.notice.text()


def test_a_preview_over_an_applied_fill_is_said_and_export_asks_first(window, qtbot, questions, tmp_path):
    window.setup.set_k(11)
    preview_and_apply(window, qtbot)
    applied = window.session.applied
    window.setup.set_k(5)
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    note = window.data.layer_note
    assert not note.isHidden() and "preview at k = 5 over the fill applied at k = 11" in note.text()
    assert "over the fill applied at k = 11" in status(window)

    # Cancel: nothing written, the preview stays.
    questions.answers = ["cancel"]
    assert window.export(tmp_path / "out.xlsx") is False
    assert questions.asked[-1][1] == ["apply", "applied", "cancel"]
    assert window.session.preview is not None and not (tmp_path / "out.xlsx").exists()

    # Apply and export: the file holds the k = 5 values the table showed.
    shown = window.session.preview
    questions.answers = ["apply"]
    with qtbot.waitSignal(window.exported, timeout=30_000):
        assert window.export(tmp_path / "out.xlsx") is True
    assert window.session.applied is shown and window.session.applied is not applied
    assert window.session.applied.plan.k == 5 and note.isHidden()
    written = read_sheet(tmp_path / "out.xlsx").frame
    numbers = [
        c for c in shown.frame.columns if shown.frame[c].dtype.kind == "f" and c != "Oxygen saturation"
    ]
    np.testing.assert_allclose(written[numbers].to_numpy(float), shown.frame[numbers].to_numpy(float))
    assert (
        written["Oxygen saturation"].isna().all()
    )  # a formula without a stored result: recomputed on opening
    assert not np.allclose(
        written[numbers].to_numpy(float), applied.frame[numbers].to_numpy(float), equal_nan=True
    )


def test_undo_with_a_preview_on_screen_shows_what_is_applied(window, qtbot):
    preview_and_apply(window, qtbot)
    window.setup.set_k(3)
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    window.undo()
    assert window.session.preview is None and window.session.applied is None
    assert window.table_model.layer is None and window.data.layer_note.isHidden()


def test_a_k_above_the_donors_warns_before_the_fill_and_says_the_k_used(window, qtbot, questions):
    rows = len(window.session.sheet.frame)
    window.session.set_k(1000)
    asked = window.session.plan.k  # the k field stops at the rows less one
    assert asked == rows - 1
    questions.answers = ["cancel"]
    window.preview_fill()
    text, offered = questions.asked[-1]
    assert text.startswith(f"k = {asked} is more than the 292 donors") and offered == ["use", "cancel"]
    assert window.session.preview is None and not window.runner.is_running()

    questions.answers = ["use"]
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    used = window.session.plan.k
    assert used == 292 and window.session.preview.plan.k == used  # the best-filled column's known cells
    assert status(window).startswith(f"Preview at k = {used}:")


def test_quitting_with_an_unexported_fill_can_export_then_quits(
    qtbot, questions, demo, tmp_path, monkeypatch
):
    from PySide6.QtWidgets import QFileDialog

    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(demo, {})
    preview_and_apply(w, qtbot)
    target = tmp_path / "river.filled.xlsx"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(target), ""))
    questions.answers = ["export"]
    with qtbot.waitSignal(w.exported, timeout=30_000):
        assert w.close() is False  # waits for the export
    qtbot.waitUntil(lambda: not w.isVisible(), timeout=10_000)
    assert target.exists() and not w.session.dirty
