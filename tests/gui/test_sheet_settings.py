"""Settings belong to a sheet: a new sheet starts from the defaults, or takes its own last plan."""

from __future__ import annotations

import shutil

from imputer_app.plan import FillPlan
from tests.gui.conftest import new_window
from tests.gui.test_main_window import preview_and_apply


def open_in(w, qtbot, path):
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(path, {})


def test_k_chosen_on_one_sheet_never_slips_into_another(qtbot, questions, samples_dir, tmp_path):
    river = tmp_path / "river_survey.xlsx"
    other = tmp_path / "other.csv"
    shutil.copyfile(samples_dir / "river_survey.xlsx", river)
    shutil.copyfile(samples_dir / "river_survey.csv", other)
    w = new_window(qtbot)
    open_in(w, qtbot, river)
    bar = w.data.read_bar
    assert bar.plan_note.text() == "Settings: Kinfill's defaults (k = 5)." and bar.plan_button.isHidden()
    w.setup.set_k(8)
    assert bar.plan_note.text() == "Settings: chosen for this sheet (k = 8)."
    preview_and_apply(w, qtbot)  # the plan of this file's last fill: k = 8
    w.session.mark_exported()

    open_in(w, qtbot, other)
    assert w.session.plan.k == FillPlan().k and w.setup.k_spin.value() == 5
    assert bar.plan_note.text() == "Settings: Kinfill's defaults (k = 5)." and bar.plan_button.isHidden()

    # the river sheet again: defaults, with its own last plan offered
    open_in(w, qtbot, river)
    assert w.session.plan.k == 5
    assert (
        not bar.plan_button.isHidden() and bar.plan_button.text() == "Use the plan of its last fill (k = 8)"
    )
    bar.plan_button.click()
    assert w.session.plan.k == 8 and w.setup.k_spin.value() == 8
    assert bar.plan_note.text() == "Settings: the plan of this file's last fill (k = 8)."
    assert bar.plan_button.isHidden()


def test_the_app_settings_keep_no_fill_options(qtbot, questions, samples_dir, tmp_path):
    w = new_window(qtbot)
    open_in(w, qtbot, samples_dir / "river_survey.csv")
    w.setup.set_k(9)
    keys = w.settings.qt.allKeys()
    assert not [k for k in keys if k.startswith("fill")]
    w.close()
    again = new_window(qtbot)
    assert again.session.plan == FillPlan()
