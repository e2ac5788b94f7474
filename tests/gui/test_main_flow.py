"""The whole job through the real window, on the demo sheet.

Open, set roles and weights, run the recovery test, use its best k, preview, inspect a
filled cell's donors, apply, undo, redo, export; the exported sheet read back equals
``impute`` on the same plan (one code path fills cells, as DEVELOPERS.md "Layers" says).
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtWidgets import QFileDialog, QMessageBox

from imputer_app.engine import impute
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.markers import MARKERS
from imputer_app.gui.settings import AppSettings
from imputer_app.sheets import read_sheet

pytestmark = pytest.mark.slow


@pytest.fixture
def window(qtbot, samples_dir, monkeypatch):
    def no_box(*args, **kwargs):
        raise AssertionError(f"unexpected message box: {args[2] if len(args) > 2 else args}")

    monkeypatch.setattr(QMessageBox, "warning", no_box)
    monkeypatch.setattr(QMessageBox, "question", no_box)
    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    monkeypatch.setattr(
        QFileDialog, "getOpenFileName", lambda *a, **k: (str(samples_dir / "river_survey.xlsx"), "")
    )
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.actions_["open"].trigger()
    yield w
    w.session.mark_exported()  # nothing to ask on close
    w.close()


def test_open_shows_the_sheet_with_default_roles(window):
    sheet = window.session.sheet
    assert window.table_model.rowCount() == len(sheet.frame) == 304
    roles = {c.name: c.role for c in window.setup.choices()}
    assert roles["Sample ID"] == "carried" and roles["Station"] == "similarity" and roles["pH"] == "both"
    plan = window.session.plan
    assert "pH" in plan.fill_columns and "Sample ID" in plan.carried_columns
    # censored entries such as <0.02 carry their marker in the table
    r, c = np.argwhere(window.table_model.codes == 2)[0]
    assert window.table_model.data(window.table_model.index(int(r), int(c))).startswith(
        MARKERS["censored"].symbol
    )
    assert "304 rows" in window.summary.text()


def test_the_whole_job(window, qtbot, tmp_path, monkeypatch):
    setup = window.setup
    # roles and weights, set through the setup's own controls
    setup.select_columns(["Temperature"])
    setup.role_combo.setCurrentIndex(setup.role_combo.findData("similarity"))
    setup.role_combo.activated.emit(setup.role_combo.currentIndex())
    setup.select_columns(["Conductivity", "Nitrate"])
    setup.weight_spin.setValue(2.5)
    plan = window.session.plan
    assert "Temperature" in plan.similarity_columns and "Temperature" not in plan.fill_columns
    assert plan.weights == {"Conductivity": 2.5, "Nitrate": 2.5}

    # recovery test, waited for, then "use best k"
    panel = window.recovery_panel
    panel.k_to.setValue(8)
    panel.repeats.setValue(2)
    with qtbot.waitSignal(panel.report_ready, timeout=60_000) as ready:
        window.actions_["recovery"].trigger()
    report = ready.args[0]
    assert window.session.report is report and 1 <= report.best_k <= 8
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=5000)
    panel.use_best_button.click()
    assert setup.k_spin.value() == report.best_k == window.session.plan.k

    # preview: a layer over the data, nothing applied
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.actions_["preview"].trigger()
    preview = window.session.preview
    assert window.table_model.layer_kind == "preview" and window.session.applied is None
    assert int((window.table_model.fill_codes > 0).sum()) == int(preview.filled.to_numpy().sum()) > 0

    # one filled cell's donors
    r, c = (int(v) for v in np.argwhere(window.table_model.fill_codes > 0)[0])
    window.select_position(r, c)
    label, column = window.table_model.row_label(r), window.table_model.column_names()[c]
    entry = preview.log[(preview.log["row"] == label) & (preview.log["column"] == column)].iloc[0]
    story = window.donor_panel.story
    assert story.status == "filled"
    assert [d.label for d in story.donors] == list(entry["donors"])
    assert window.current_panel() is window.donor_panel

    # apply, undo, redo
    window.actions_["apply"].trigger()
    assert window.session.applied is preview and window.table_model.layer_kind == "applied"
    assert window.table_model.data(window.table_model.index(r, c)).startswith(MARKERS["filled"].symbol)
    assert window.isWindowModified()
    window.actions_["undo"].trigger()
    assert window.session.applied is None
    assert window.table_model.data(window.table_model.index(r, c)).startswith(MARKERS["missing"].symbol)
    window.actions_["redo"].trigger()
    assert window.session.applied is preview

    # export, then read back and compare with impute on the same plan
    target = tmp_path / "river_survey.filled.xlsx"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(target), ""))
    with qtbot.waitSignal(window.exported, timeout=30_000) as done:
        window.actions_["export"].trigger()
    assert target in [p for p in done.args[0]] and not window.session.dirty
    back = read_sheet(target)
    expected = impute(read_sheet(window.session.path), window.session.plan).frame
    numbers = [n for n in expected.columns if expected[n].dtype.kind == "f" and n != "Oxygen saturation"]
    np.testing.assert_allclose(back.frame[numbers].to_numpy(float), expected[numbers].to_numpy(float))
    # the formula column stays formulas, without stored results (recomputed when opened)
    assert (back.states["Oxygen saturation"] == "formula_error").all()
    assert (back.frame.index == expected.index).all()
    assert back.frame["Station"].tolist() == expected["Station"].tolist()
