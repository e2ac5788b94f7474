"""The column setup: bounds and decimals only for number columns."""

from __future__ import annotations

from tests.gui.conftest import new_window


def test_bounds_are_disabled_for_category_columns(qtbot, samples_dir):
    w = new_window(qtbot)
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(samples_dir / "river_survey.xlsx", {})
    setup = w.setup
    setup.select_columns(["Station"])  # a category column
    assert not setup.lower_edit.isEnabled() and not setup.upper_edit.isEnabled()
    assert not setup.decimals_spin.isEnabled() and setup.role_combo.isEnabled()
    setup.select_columns(["pH"])
    assert setup.lower_edit.isEnabled() and setup.upper_edit.isEnabled() and setup.decimals_spin.isEnabled()
    setup.select_columns(["pH", "Station"])  # a mix: not for both
    assert not setup.lower_edit.isEnabled()
