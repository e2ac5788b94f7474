"""A plan saved from the app and run with ``kinfill fill --plan`` gives the app's data sheet.

Labs redo the same fill each month headless and need byte-identical data, so the app
and the command line must be one code path (DEVELOPERS.md "Layers").
"""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import QMessageBox

from imputer_app.cli import main as kinfill
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from tests.sheets.write_support import sheet_xml

pytestmark = pytest.mark.slow


@pytest.fixture
def window(qtbot, samples_dir, monkeypatch):
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.Yes)
    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(samples_dir / "river_survey.xlsx")
    yield w
    w.session.mark_exported()
    w.close()


def test_app_export_and_cli_fill_with_the_saved_plan_write_the_same_data(
    window, qtbot, tmp_path, samples_dir
):
    setup = window.setup
    setup.select_columns(["Conductivity", "Nitrate"])
    setup.weight_spin.setValue(3.0)
    setup.k_spin.setValue(4)
    plan_file = window.save_plan(tmp_path / "monthly.plan.toml")
    assert plan_file is not None and plan_file.exists()

    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.actions_["preview"].trigger()
    window.actions_["apply"].trigger()
    app_csv, app_xlsx = tmp_path / "app.csv", tmp_path / "app.xlsx"
    for target in (app_csv, app_xlsx):
        with qtbot.waitSignal(window.exported, timeout=30_000):
            window.export(target)

    demo = str(samples_dir / "river_survey.xlsx")
    cli_csv, cli_xlsx = tmp_path / "cli.csv", tmp_path / "cli.xlsx"
    for target in (cli_csv, cli_xlsx):
        assert kinfill(["fill", demo, "--plan", str(plan_file), "--out", str(target)]) == 0

    assert cli_csv.read_bytes() == app_csv.read_bytes()
    # the xlsx export is the demo workbook with the fill written into its sheet "Survey"
    assert sheet_xml(cli_xlsx, "Survey") == sheet_xml(app_xlsx, "Survey")
    assert (tmp_path / "cli.fill-log.csv").read_bytes() == (tmp_path / "app.fill-log.csv").read_bytes()


def test_each_columns_k_from_the_app_matches_k_best_per_column(window, qtbot, tmp_path, samples_dir):
    """App: recovery test (default settings), "Use each column's best k", fill, export. CLI:
    ``kinfill fill --k best-per-column``. Same data, same k per column, same test recorded."""
    import json

    panel = window.recovery_panel
    with qtbot.waitSignal(panel.report_ready, timeout=120_000):
        window.run_recovery_test()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=10_000)
    panel.columns_view.use_each_button.click()
    assert window.session.plan.k_by_column == window.session.report.k_by_column_1se
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.actions_["preview"].trigger()
    window.actions_["apply"].trigger()
    app_csv, cli_csv = tmp_path / "app.csv", tmp_path / "cli.csv"
    with qtbot.waitSignal(window.exported, timeout=30_000):
        window.export(app_csv)
    demo = str(samples_dir / "river_survey.xlsx")
    assert kinfill(["fill", demo, "--k", "best-per-column", "--out", str(cli_csv)]) == 0

    assert cli_csv.read_bytes() == app_csv.read_bytes()
    app_run = json.loads((tmp_path / "app.run.json").read_text(encoding="utf-8"))
    cli_run = json.loads((tmp_path / "cli.run.json").read_text(encoding="utf-8"))
    assert app_run["plan_resolved"]["k_by_column"] == cli_run["plan_resolved"]["k_by_column"]
    assert app_run["recovery_test"] == cli_run["recovery_test"]
    assert app_run["recovery_test"]["k_by_column_1se"] == app_run["plan_resolved"]["k_by_column"]
