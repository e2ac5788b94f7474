"""The recovery panel runs the recovery test off the GUI thread and shows its evidence.

Data: the iris measurements shipped in scikit-learn (Fisher 1936), with cells removed
at fixed seeds. The numbers the panel shows are checked against the report it emits and
against `recovery_test` called directly with the same settings.
"""

from __future__ import annotations

import math
import threading
import time
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QFileDialog
from sklearn.datasets import load_iris

import imputer_app.validation as validation
from imputer_app.errors import KinfillError
from imputer_app.gui.records_model import RAW_ROLE
from imputer_app.gui.recovery_logic import (
    RecoveryRequest,
    columns_without_gain,
    k_ceiling,
    summary_text,
    verdict,
)
from imputer_app.gui.recovery_panel import RecoveryPanel
from imputer_app.plan import FillPlan
from imputer_app.work import raise_if_cancelled

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def iris_with_gaps(n_rows: int = 60, share: float = 0.08, seed: int = 1) -> pd.DataFrame:
    """Iris (Fisher 1936, shipped in scikit-learn) with a fixed share of cells removed."""
    iris = load_iris(as_frame=True).frame.drop(columns="target")
    iris.columns = ["sepal length", "sepal width", "petal length", "petal width"]
    frame = iris.sample(n=n_rows, random_state=seed).reset_index(drop=True)
    frame.index = frame.index + 2  # file row numbers, as a read sheet has them
    rng = np.random.default_rng(seed)
    frame = frame.mask(rng.random(frame.shape) < share)
    return frame


@pytest.fixture
def panel(qtbot):
    widget = RecoveryPanel()
    qtbot.addWidget(widget)
    yield widget
    assert widget.shutdown(10_000), "a recovery worker thread outlived the test"


def configure(
    panel: RecoveryPanel,
    frame: pd.DataFrame,
    plan: FillPlan,
    *,
    k_to: int = 8,
    repeats: int = 2,
    fraction: float = 0.1,
) -> None:
    panel.set_source(frame, plan)
    panel.k_from.setValue(1)
    panel.k_to.setValue(k_to)
    panel.repeats.setValue(repeats)
    panel.hide_fraction.setValue(fraction)


def run_to_report(qtbot, panel: RecoveryPanel):
    with qtbot.waitSignal(panel.report_ready, timeout=20_000) as blocker:
        panel.run_button.click()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=10_000)
    return blocker.args[0]


def same(a: float, b: float) -> bool:
    return (math.isnan(a) and math.isnan(b)) or a == b


def column_of(panel: RecoveryPanel, title: str) -> int:
    return panel.model.headers().index(title)


# ---------------------------------------------------------------------- runs
def test_table_shows_the_reports_numbers(qtbot, panel):
    frame = iris_with_gaps()
    configure(panel, frame, FillPlan())
    report = run_to_report(qtbot, panel)

    assert panel.report is report
    assert list(report.ks) == list(range(1, 9))
    model = panel.model
    assert model.rowCount() == len(report.overall) + 1  # every k, then the baseline
    score, se = column_of(panel, "NRMSE"), column_of(panel, "SE")
    for row, (k, values) in enumerate(report.overall.iterrows()):
        assert model.index(row, 0).data(RAW_ROLE) == k
        assert same(model.index(row, score).data(RAW_ROLE), float(values["score"]))
        assert same(model.index(row, se).data(RAW_ROLE), float(values["se"]))
        for column in report.kinds:
            shown = model.index(row, column_of(panel, f"{column} NRMSE")).data(RAW_ROLE)
            assert same(shown, float(report.summary.loc[k, (column, "mean")]))
    last = model.rowCount() - 1
    assert model.index(last, 0).data(RAW_ROLE) == "average"
    assert same(model.index(last, score).data(RAW_ROLE), float(report.baseline.loc["overall", "score"]))
    best_row = report.ks.index(report.best_k)
    assert "best" in model.index(best_row, 1).data(RAW_ROLE)
    assert "one-SE" in model.index(report.ks.index(report.best_k_1se), 1).data(RAW_ROLE)


def test_category_fill_shows_error_rates(qtbot, panel):
    """Iris species (Fisher 1936) as the only fill column: scored by error rate."""
    iris = load_iris(as_frame=True)
    frame = iris.frame.drop(columns="target").iloc[::2].copy()
    frame["species"] = iris.target_names[iris.target.iloc[::2]]
    configure(panel, frame, FillPlan(fill_columns=("species",)), k_to=6, repeats=3, fraction=0.2)
    report = run_to_report(qtbot, panel)
    assert report.kinds == {"species": "category"}
    headers = panel.model.headers()
    assert "NRMSE" not in headers and "species error rate" in headers
    error = column_of(panel, "Error rate")
    for row, (_, values) in enumerate(report.overall.iterrows()):
        assert same(panel.model.index(row, error).data(RAW_ROLE), float(values["category_error"]))
    best = float(report.overall.loc[report.best_k, "category_error"])
    assert panel.summary.text().startswith(f"best k = {report.best_k} (error rate {best:.2f})")


def test_panel_passes_its_settings_to_the_recovery_test(qtbot, panel):
    """The same request called directly gives the same numbers (fixed seed)."""
    frame = iris_with_gaps(seed=3)
    plan = FillPlan(scaling="range")
    configure(panel, frame, plan, k_to=6, repeats=3, fraction=0.2)
    panel.seed.setValue(11)
    panel.masking.setCurrentIndex(panel.masking.findData("pattern"))
    report = run_to_report(qtbot, panel)

    direct = validation.recovery_test(
        frame, plan, ks=range(1, 7), hide_fraction=0.2, repeats=3, seed=11, masking="pattern"
    )
    pd.testing.assert_frame_equal(report.overall, direct.overall)
    assert report.settings["masking"] == "pattern"
    assert report.settings["seed"] == 11
    assert (report.best_k, report.best_k_1se) == (direct.best_k, direct.best_k_1se)


def test_summary_line_names_best_and_one_se_k_and_the_baseline(qtbot, panel):
    configure(panel, iris_with_gaps(), FillPlan())
    report = run_to_report(qtbot, panel)
    text = panel.summary.text()
    best = float(report.overall.loc[report.best_k, "score"])
    assert text.startswith(f"best k = {report.best_k} (NRMSE {best:.2f})")
    if report.best_k_1se != report.best_k:
        assert f"one-SE rule suggests k = {report.best_k_1se}" in text
    assert f"column average scores {float(report.baseline.loc['overall', 'score']):.2f}" in text
    # Iris rows are strongly alike within a species, so neighbours beat the column mean
    # (Troyanskaya et al. 2001: kNN fill beats average fill).
    assert "neighbours help" in text
    assert text == summary_text(report)


@pytest.mark.parametrize(
    ("best", "se", "baseline", "words"),
    [
        (0.40, 0.05, 0.98, "neighbours help"),
        (0.90, 0.10, 0.98, "neighbours help only a little (within one standard error)"),
        (1.10, 0.05, 0.98, "neighbours do not beat the column average; check the similarity columns"),
        (math.nan, 0.05, 0.98, "no comparison with the column average"),
    ],
)
def test_verdict_words(best, se, baseline, words):
    assert verdict(best, se, baseline) == words


def test_columns_without_gain_are_named():
    """A column filled no better than by its average is named (compared per column at k)."""
    columns = pd.MultiIndex.from_product([["pH", "zinc"], ["mean", "se"]], names=["column", None])
    summary = pd.DataFrame([[0.5, 0.1, 1.2, 0.1], [0.4, 0.1, 1.0, 0.1]], index=[1, 2], columns=columns)
    baseline = pd.DataFrame({"score": [1.0, 1.0, 1.0]}, index=["pH", "zinc", "overall"])
    report = SimpleNamespace(kinds={"pH": "number", "zinc": "number"}, summary=summary, baseline=baseline)
    assert columns_without_gain(report, 1) == ["zinc"]
    assert columns_without_gain(report, 2) == ["zinc"]  # equal to the average is no gain
    baseline.loc["zinc", "score"] = 1.1
    assert columns_without_gain(report, 2) == []


def test_use_buttons_emit_the_reports_k(qtbot, panel):
    configure(panel, iris_with_gaps(), FillPlan())
    assert not panel.use_best_button.isEnabled()  # nothing to use before a test
    report = run_to_report(qtbot, panel)
    with qtbot.waitSignal(panel.use_k, timeout=1000) as best:
        panel.use_best_button.click()
    assert best.args == [report.best_k]
    with qtbot.waitSignal(panel.use_k, timeout=1000) as one_se:
        panel.use_one_se_button.click()
    assert one_se.args == [report.best_k_1se]
    # Enter on a row of the table uses that row's k.
    panel.table.setCurrentIndex(panel.model.index(2, 0))
    with qtbot.waitSignal(panel.use_k, timeout=1000) as chosen:
        qtbot.keyClick(panel.table, Qt.Key.Key_Return)
    assert chosen.args == [report.ks[2]]


def test_enter_in_a_setting_starts_the_test(qtbot, panel):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=4)
    with qtbot.waitSignal(panel.report_ready, timeout=20_000):
        qtbot.keyClick(panel.repeats, Qt.Key.Key_Return)
    assert panel.report is not None


@pytest.mark.parametrize(
    ("name", "chosen_filter", "written", "magic"),
    [
        ("chart.png", "PNG image (*.png)", "chart.png", PNG_MAGIC),
        ("chart.svg", "SVG drawing (*.svg)", "chart.svg", b"<svg"),
        ("chart", "SVG drawing (*.svg)", "chart.svg", b"<svg"),  # extension from the filter
    ],
)
def test_save_chart(qtbot, panel, tmp_path, monkeypatch, name, chosen_filter, written, magic):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=5)
    run_to_report(qtbot, panel)
    monkeypatch.setattr(
        QFileDialog, "getSaveFileName", staticmethod(lambda *a, **k: (str(tmp_path / name), chosen_filter))
    )
    panel.save_button.click()
    path = tmp_path / written
    data = path.read_bytes()
    assert len(data) > 1000
    if magic == PNG_MAGIC:
        assert data.startswith(PNG_MAGIC)
    else:
        assert data.lstrip().startswith(b"<?xml") and magic in data[:2000]
    assert str(path) in panel.status.text()


def test_chart_draws_the_chosen_columns(qtbot, panel):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=4)
    report = run_to_report(qtbot, panel)

    def column_lines() -> list[str]:
        return sorted(
            str(line.get_gid())[7:]
            for line in panel.figure.axes[0].lines
            if str(line.get_gid()).startswith("column:")
        )

    choices = [panel.chart_columns.itemText(i) for i in range(panel.chart_columns.count())]
    assert choices == ["all columns", "overall only", *report.kinds]
    assert column_lines() == sorted(report.kinds)
    panel.chart_columns.setCurrentIndex(1)
    assert column_lines() == []
    panel.chart_columns.setCurrentIndex(2)
    assert column_lines() == [next(iter(report.kinds))]
    # The overall line, the baseline and both chosen k stay in every view.
    gids = {str(line.get_gid()) for line in panel.figure.axes[0].lines}
    assert {"baseline", "best_k", "one_se_k"} <= gids


def test_save_chart_dialog_cancelled_writes_nothing(qtbot, panel, tmp_path, monkeypatch):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=3)
    run_to_report(qtbot, panel)
    monkeypatch.setattr(QFileDialog, "getSaveFileName", staticmethod(lambda *a, **k: ("", "")))
    assert panel.save_chart() is None


# ---------------------------------------------------------------------- cancel and errors
def slow_test(started: threading.Event):
    def fake(*args, cancel=None, progress=None, **kwargs):
        started.set()
        for i in range(500):
            raise_if_cancelled(cancel)
            if progress is not None:
                progress(i, 500)
            time.sleep(0.01)
        raise AssertionError("the cancel flag was never seen")

    return fake


def test_cancel_keeps_the_previous_report(qtbot, panel, monkeypatch):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=5)
    first = run_to_report(qtbot, panel)
    rows_before = [
        [panel.model.index(r, c).data() for c in range(panel.model.columnCount())]
        for r in range(panel.model.rowCount())
    ]
    summary_before = panel.summary.text()

    started = threading.Event()
    monkeypatch.setattr(validation, "recovery_test", slow_test(started))
    emitted: list[object] = []
    panel.report_ready.connect(emitted.append)
    panel.run_button.click()
    assert panel.cancel_button.isEnabled() and not panel.run_button.isEnabled()
    assert not panel.hide_fraction.isEnabled()  # settings are locked while running
    qtbot.waitUntil(started.is_set, timeout=5000)
    with qtbot.waitSignal(panel.runner.cancelled, timeout=5000):
        panel.cancel_button.click()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=5000)

    assert emitted == []
    assert panel.report is first
    assert panel.summary.text() == summary_before
    assert [
        [panel.model.index(r, c).data() for c in range(panel.model.columnCount())]
        for r in range(panel.model.rowCount())
    ] == rows_before
    assert panel.status.text() == "Stopped. The previous result is kept."
    assert panel.progress.format() == "stopped"
    assert panel.run_button.isEnabled() and not panel.cancel_button.isEnabled()


def test_cancel_a_real_test_on_a_bigger_sheet(qtbot, panel):
    rng = np.random.default_rng(5)
    frame = pd.DataFrame(rng.normal(size=(4000, 8)), columns=[f"c{i}" for i in range(8)])
    frame = frame.mask(rng.random(frame.shape) < 0.05)
    configure(panel, frame, FillPlan(), k_to=30, repeats=20, fraction=0.3)
    emitted: list[object] = []
    panel.report_ready.connect(emitted.append)
    with qtbot.waitSignal(panel.runner.cancelled, timeout=10_000):
        panel.run_button.click()
        panel.cancel()
    assert emitted == [] and panel.report is None


@pytest.mark.parametrize(
    ("error", "shown"),
    [
        (
            KinfillError("column 'nitrate' has no known cells to hide"),
            "Recovery test failed: column 'nitrate' has no known cells to hide",
        ),
        (RuntimeError("boom"), "Recovery test failed: internal fault: boom"),
    ],
)
def test_errors_show_one_line_and_change_nothing(qtbot, panel, monkeypatch, error, shown):
    configure(panel, iris_with_gaps(), FillPlan(), k_to=3)
    first = run_to_report(qtbot, panel)

    def fail(*args, **kwargs):
        raise error

    monkeypatch.setattr(validation, "recovery_test", fail)
    with qtbot.waitSignal(panel.runner.failed, timeout=5000):
        panel.run_button.click()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=5000)
    assert panel.status.text() == shown
    assert "\n" not in panel.status.text() and "Traceback" not in panel.status.text()
    assert panel.status_icon.isVisibleTo(panel)
    assert panel.report is first


# ---------------------------------------------------------------------- settings
@pytest.mark.parametrize(
    ("n_rows", "gaps", "plan", "ceiling"),
    [
        (12, [(0, "a")], FillPlan(), 10),  # 'a' is the only fill column: 11 known, less the hidden one
        (60, [(0, "a")], FillPlan(), 58),
        (400, [(0, "a")], FillPlan(), 100),  # never above 100
        (12, [], FillPlan(), 11),  # no gaps: every similarity column is tested
        (12, [(0, "a"), (1, "a"), (0, "b")], FillPlan(fill_columns=("a",)), 9),
        (12, [(0, "a"), (1, "a"), (0, "b")], FillPlan(carried_columns=("b",)), 9),
    ],
)
def test_k_range_is_capped_by_donors_and_100(qtbot, panel, n_rows, gaps, plan, ceiling):
    rng = np.random.default_rng(0)
    frame = pd.DataFrame(rng.normal(size=(n_rows, 3)), columns=["a", "b", "c"])
    for row, column in gaps:
        frame.loc[row, column] = np.nan
    assert k_ceiling(frame, plan) == ceiling
    panel.set_source(frame, plan)
    assert panel.k_to.maximum() == ceiling and panel.k_from.maximum() == ceiling
    assert panel.k_to.value() == min(20, ceiling)


def test_k_from_never_passes_k_to(qtbot, panel):
    panel.set_source(iris_with_gaps(), FillPlan())
    panel.k_to.setValue(5)
    panel.k_from.setValue(9)
    assert (panel.k_from.value(), panel.k_to.value()) == (9, 9)
    panel.k_to.setValue(3)
    assert (panel.k_from.value(), panel.k_to.value()) == (3, 3)
    assert panel.request().ks == [3]


def test_request_reads_the_controls(qtbot, panel):
    panel.set_source(iris_with_gaps(), FillPlan())
    panel.hide_fraction.setValue(0.25)
    panel.repeats.setValue(7)
    panel.k_from.setValue(2)
    panel.k_to.setValue(9)
    panel.seed.setValue(4)
    assert panel.request() == RecoveryRequest(0.25, 7, 2, 9, "random", 4)
    assert (panel.hide_fraction.minimum(), panel.hide_fraction.maximum()) == (0.01, 0.5)
    assert (panel.repeats.minimum(), panel.repeats.maximum()) == (1, 50)


def test_changed_settings_mark_the_report_as_old(qtbot, panel):
    frame = iris_with_gaps()
    configure(panel, frame, FillPlan(), k_to=3)
    run_to_report(qtbot, panel)
    panel.set_source(frame, FillPlan(k=7))  # only k changed: still current
    assert "run the test again" not in panel.summary.text()
    panel.set_source(frame, FillPlan(scaling="robust"))
    assert "run the test again" in panel.summary.text()


def test_shutdown_during_a_run_stops_the_thread_promptly(qtbot, panel, monkeypatch):
    started = threading.Event()
    monkeypatch.setattr(validation, "recovery_test", slow_test(started))
    panel.set_source(iris_with_gaps(), FillPlan())
    panel.run()
    qtbot.waitUntil(started.is_set, timeout=5000)
    t0 = time.monotonic()
    assert panel.shutdown(5000)
    assert time.monotonic() - t0 < 2.0
    assert not panel.runner.is_running()


def test_chart_file_is_suggested_beside_the_sheet(qtbot, panel, tmp_path, monkeypatch):
    frame = iris_with_gaps()
    states = (
        frame.isna()
        .replace({True: "missing", False: "observed"})
        .astype(pd.CategoricalDtype(["observed", "missing", "censored", "text_in_number"]))
    )
    sheet = SimpleNamespace(
        frame=frame,
        states=states,
        cell_notes=pd.DataFrame(columns=["row", "column", "state", "text", "side", "limit"]),
        source=SimpleNamespace(path=tmp_path / "iris lab.xlsx"),
    )
    configure(panel, sheet, FillPlan(), k_to=3)
    run_to_report(qtbot, panel)
    asked: list[str] = []

    def dialog(parent, title, suggested, filters):
        asked.append(suggested)
        return "", ""

    monkeypatch.setattr(QFileDialog, "getSaveFileName", staticmethod(dialog))
    panel.save_chart()
    assert asked == [str(tmp_path / "iris lab.error_vs_k.png")]
