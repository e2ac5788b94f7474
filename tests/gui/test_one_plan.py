"""The window holds one plan, in its session; every panel edits it there and redraws from it."""

from __future__ import annotations

import pytest
from PySide6.QtCore import QObject
from PySide6.QtWidgets import QMessageBox

from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from imputer_app.plan import FillPlan


@pytest.fixture
def window(qtbot, monkeypatch, samples_dir):
    monkeypatch.setattr(QMessageBox, "warning", lambda *a, **k: QMessageBox.StandardButton.Ok)
    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(samples_dir / "river_survey.xlsx", {})
    yield w
    w.session.mark_exported()
    w.close()


def plans_held(root: QObject) -> list[tuple[str, str]]:
    """Every Python attribute of ``root`` and its children that holds a FillPlan (directly or in a tuple)."""
    found = []
    for obj in [root, *root.findChildren(QObject)]:
        for name, value in vars(obj).items():
            values = value if isinstance(value, tuple) else (value,)
            if any(isinstance(v, FillPlan) for v in values):
                found.append((type(obj).__name__, name))
    return found


def test_the_session_is_the_only_holder_of_a_plan(window):
    assert window.setup.session is window.session
    assert window.recovery_panel.session is window.session
    assert plans_held(window) == []  # the session is not a QObject: no widget keeps a copy
    assert [name for name, value in vars(window.session).items() if isinstance(value, FillPlan)] == ["plan"]


def test_use_best_k_reaches_the_setup_and_the_saved_plan(window, qtbot, tmp_path):
    panel = window.recovery_panel
    panel.k_from.setValue(1)
    panel.k_to.setValue(4)
    panel.repeats.setValue(1)
    with qtbot.waitSignal(panel.report_ready, timeout=60_000) as done:
        window.run_recovery_test()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=10_000)
    best = done.args[0].best_k
    other = 5 if best != 5 else 6
    window.setup.k_spin.setValue(other)
    assert window.session.plan.k == other  # the setup's edit is in the session

    with qtbot.waitSignal(panel.use_k, timeout=1000):
        panel.use_best_button.click()

    assert window.session.plan.k == best
    assert window.setup.k_spin.value() == best  # redrawn from the session, not set by the window
    saved = FillPlan.load(window.save_plan(tmp_path / "best.plan.toml"))
    assert saved == window.session.plan and saved.k == best


def test_a_role_edited_in_the_setup_is_the_sessions_plan(window):
    setup = window.setup
    assert "Turbidity" in window.session.plan.fill_columns
    setup.select_columns(["Turbidity"])
    index = setup.role_combo.findData("carried")
    setup.role_combo.setCurrentIndex(index)
    setup.role_combo.activated.emit(index)
    plan = window.session.plan
    assert "Turbidity" in plan.carried_columns
    assert "Turbidity" not in plan.fill_columns and "Turbidity" not in plan.similarity_columns
    assert setup.plan() is plan


def test_a_loaded_plan_is_the_sessions_plan_and_the_setup_shows_it(window, tmp_path):
    path = window.session.plan.replace(k=2, scaling="robust").save(tmp_path / "robust.plan.toml")
    window.open_plan(path)
    assert window.setup.k_spin.value() == 2
    assert window.setup.choice_combos["scaling"].currentData() == "robust"
    assert window.session.plan == FillPlan.load(path)


def test_settings_that_make_no_plan_block_saving_and_keep_the_last_plan(window, tmp_path):
    setup = window.setup
    setup.select_columns(["Turbidity"])
    setup.upper_edit.setText("1")
    setup.upper_edit.editingFinished.emit()
    before = window.session.plan
    assert before.bounds["Turbidity"] == (None, 1.0)
    setup.lower_edit.setText("5")
    setup.lower_edit.editingFinished.emit()  # lower above upper: not a plan
    assert "lower 5 is above upper 1" in window.session.plan_problem and setup.plan() is None
    assert window.session.plan == before
    assert window.save_plan(tmp_path / "none.plan.toml") is None
    assert not (tmp_path / "none.plan.toml").exists()
    assert not window.actions_["preview"].isEnabled()
    setup.lower_edit.setText("")
    setup.lower_edit.editingFinished.emit()
    assert window.session.plan_problem is None and window.session.plan.bounds["Turbidity"] == (None, 1.0)
    assert window.actions_["preview"].isEnabled()
