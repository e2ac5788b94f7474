"""The recovery panel's evidence tabs: each column's own k, suggested weights, interval coverage.

Data: the iris measurements shipped in scikit-learn (Fisher 1936), with cells removed at
fixed seeds (as in test_recovery_panel). The numbers shown are compared with the
recovery report's and the weight suggestion's own numbers; the plan must change only
when the user presses a button.
"""

from __future__ import annotations

import itertools
import math
import threading
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import Qt

import imputer_app.validation as validation
from imputer_app.gui.coverage_view import sheet_coverage
from imputer_app.gui.records_model import RAW_ROLE
from imputer_app.gui.recovery_panel import RecoveryPanel
from imputer_app.gui.state import Session
from imputer_app.plan import FillPlan
from imputer_app.work import raise_if_cancelled
from tests.gui._sheets import make_sheet
from tests.gui.test_recovery_panel import configure, iris_with_gaps, run_to_report


@pytest.fixture
def panel(qtbot):
    widget = RecoveryPanel()
    qtbot.addWidget(widget)
    yield widget
    assert widget.shutdown(10_000), "a worker thread outlived the test"


def report_of(qtbot, panel: RecoveryPanel, plan: FillPlan | None = None):
    configure(panel, iris_with_gaps(n_rows=80, share=0.1), plan or FillPlan(k=3), k_to=10, repeats=2)
    return run_to_report(qtbot, panel)


def raw_rows(model) -> list[list[object]]:
    return [
        [model.index(r, c).data(RAW_ROLE) for c in range(model.columnCount())]
        for r in range(model.rowCount())
    ]


# ------------------------------------------------------------------ per column
def test_per_column_table_shows_the_reports_numbers(qtbot, panel):
    report = report_of(qtbot, panel)
    view = panel.columns_view
    rows = raw_rows(view.model)
    assert [r[0] for r in rows] == list(report.kinds)
    for column, own_k, at_own, at_best, baseline, in_plan in rows:
        assert own_k == report.k_by_column_1se[column]
        assert at_own == report.summary.loc[own_k, (column, "mean")]
        assert at_best == report.summary.loc[report.best_k, (column, "mean")]
        assert baseline == report.baseline.loc[column, "score"]
        assert in_plan == 3  # the plan's k: nothing chosen yet
    header = [view.model.headerData(c, Qt.Orientation.Horizontal) for c in range(view.model.columnCount())]
    assert header[3] == f"At k = {report.best_k}"
    # shown text is the same number, rounded
    shown = view.table.model().index(0, 2).data()
    assert math.isclose(float(shown), rows[0][2], rel_tol=5e-3)


def test_use_each_columns_k_changes_the_plan_only_when_pressed(qtbot, panel):
    report = report_of(qtbot, panel)
    before = FillPlan(k=3)
    assert panel.session.plan == before  # the test alone changes nothing
    said = []
    panel.said.connect(said.append)
    panel.columns_view.use_each_button.click()
    plan = panel.session.plan
    assert plan == validation.plan_with_k(
        before, report, "best-per-column"
    )  # as kinfill fill --k best-per-column
    assert dict(plan.k_by_column) == report.k_by_column_1se and plan.k == report.best_k
    assert said and "recovery test (2 repeats, 10% hidden, seed 0; in the export)" in said[0]
    assert panel.status.text() == said[0]
    assert [r[5] for r in raw_rows(panel.columns_view.model)] == [plan.k_for(c) for c in report.kinds]
    assert not panel.columns_view.use_each_button.isEnabled()  # already in use
    assert "other data or settings" not in panel.summary.text()  # per-column k keep the test current
    panel.columns_view.one_k_button.click()
    assert panel.session.plan == plan.replace(k_by_column={})
    assert "One k for all" in panel.status.text() or "for every column" in panel.status.text()
    assert not panel.columns_view.one_k_button.isEnabled()


def test_use_best_k_says_per_column_k_stay(qtbot, panel):
    report = report_of(qtbot, panel)
    panel.columns_view.use_each()
    panel.use_one_se_button.click()
    assert panel.session.plan.k == report.best_k_1se
    assert dict(panel.session.plan.k_by_column) == report.k_by_column_1se
    assert "keep it" in panel.status.text()


def test_per_column_table_sorts_by_numbers_from_the_keyboard(qtbot, panel):
    report = report_of(qtbot, panel)
    table = panel.columns_view.table
    panel.views.setCurrentWidget(panel.columns_view)
    table.sort_by.setFocus()
    table.sort_by.setCurrentIndex(table.sort_by.findText("Error"))
    shown = [table.model().index(r, 2).data(RAW_ROLE) for r in range(table.model().rowCount())]
    assert shown == sorted(shown)
    assert {table.model().index(r, 0).data() for r in range(len(shown))} == set(report.kinds)
    # a header click sorts the same way and the combo follows
    table.horizontalHeader().setSortIndicator(1, Qt.SortOrder.DescendingOrder)
    own = [table.model().index(r, 1).data(RAW_ROLE) for r in range(len(shown))]
    assert own == sorted(own, reverse=True) and table.sort_by.currentText() == "Own k"
    table.sort_by.setCurrentIndex(0)  # as listed: the report's order again
    assert [table.model().index(r, 0).data() for r in range(len(shown))] == list(report.kinds)


# ------------------------------------------------------------------ weights
def test_suggested_weights_are_shown_then_applied_only_on_request(qtbot, panel):
    frame = iris_with_gaps(n_rows=80, share=0.1)
    plan = FillPlan(k=3)
    panel.set_source(frame, plan)
    view = panel.weights_view
    assert not view.apply_button.isEnabled()
    with qtbot.waitSignal(view.runner.finished, timeout=60_000) as done:
        view.suggest_button.click()
    qtbot.waitUntil(lambda: not view.runner.is_running(), timeout=10_000)
    got = done.args[0]
    expected = validation.suggest_weights(frame, plan, seed=0)  # same seed: the same search
    assert got.weights == expected.weights
    assert panel.session.plan == plan  # nothing applied yet
    rows = {r[0]: r for r in raw_rows(view.model)}
    for column, row in got.table.iterrows():
        shown = rows[str(column)]
        assert shown[1] == row["weight_before"] and shown[2] == row["weight_after"]
        for a, b in ((shown[3], row["score_before"]), (shown[4], row["score_after"])):
            assert (math.isnan(a) and math.isnan(b)) or a == b
    assert f"{got.score_before:.3f}" in view.note.text() and f"{got.score_after:.3f}" in view.note.text()
    if got.weights == {c: plan.weight(c) for c in got.weights}:
        assert not view.apply_button.isEnabled()  # nothing to apply
        return
    said = []
    panel.said.connect(said.append)
    view.apply_button.click()
    assert {c: panel.session.plan.weight(c) for c in got.weights} == got.weights
    assert panel.session.plan.replace(weights={}) == plan.replace(weights={})
    assert said and said[0].startswith("Suggested weights applied")
    assert not view.apply_button.isEnabled()


def test_weight_search_cancel_keeps_the_plan(qtbot, panel, monkeypatch):
    started = threading.Event()

    def slow(data, plan, *, seed=0, progress=None, cancel=None):
        started.set()
        for i in range(2000):
            raise_if_cancelled(cancel)
            if progress is not None:
                progress(i, 2000)
            threading.Event().wait(0.005)
        raise AssertionError("the search was not cancelled")

    monkeypatch.setattr(validation, "suggest_weights", slow)
    panel.set_source(iris_with_gaps(), FillPlan(k=3))
    view = panel.weights_view
    view.suggest_button.click()
    qtbot.waitUntil(started.is_set, timeout=5000)
    assert view.cancel_button.isEnabled() and not view.suggest_button.isEnabled()
    with qtbot.waitSignal(view.runner.cancelled, timeout=10_000):
        view.cancel_button.click()
    qtbot.waitUntil(lambda: not view.runner.is_running(), timeout=10_000)
    assert panel.session.plan == FillPlan(k=3) and view.suggestion is None
    assert "Stopped" in view.note.text() and view.progress.format() == "stopped"


def test_a_suggestion_for_other_settings_cannot_be_applied(qtbot, panel, monkeypatch):
    table = pd.DataFrame(
        {"weight_before": [1.0, 1.0], "weight_after": [0.0, 2.0], "score_before": [0.5, 0.6]}
        | {"score_after": [0.4, 0.5]},
        index=["sepal length", "sepal width"],
    )
    fake = SimpleNamespace(
        weights={"sepal length": 0.0, "sepal width": 2.0}, score_before=0.55, score_after=0.45, table=table
    )
    monkeypatch.setattr(validation, "suggest_weights", lambda *a, **k: fake)
    panel.set_source(iris_with_gaps(), FillPlan(k=3))
    view = panel.weights_view
    with qtbot.waitSignal(view.runner.finished, timeout=10_000):
        view.run()
    qtbot.waitUntil(lambda: not view.runner.is_running(), timeout=10_000)
    assert view.apply_button.isEnabled() and view.apply_button.text() == "Apply suggested weights"
    assert "18% lower" in view.note.text()
    panel.session.set_plan(FillPlan(k=3, scaling="range"))  # another setting than weights
    assert not view.apply_button.isEnabled() and "suggest again" in view.note.text()
    view.apply()  # refused, not silently applied
    assert panel.session.plan == FillPlan(k=3, scaling="range")


# ------------------------------------------------------------------ coverage
def coverage_table() -> pd.DataFrame:
    """A made-up coverage table in the engine's layout: per column and "(all)" rows."""
    return pd.DataFrame(
        {
            "column": ["(all)", "(all)", "a", "a"],
            "level": [0.8, 0.9, 0.8, 0.9],
            "observed": [0.78, 0.87, 0.75, 0.85],
            "n_cells": [120, 120, 60, 60],
        }
    )


def test_coverage_chart_draws_the_sheet_rows_beside_the_level(qtbot):
    session = Session()
    panel = RecoveryPanel(session=session)
    qtbot.addWidget(panel)
    view = panel.coverage_view
    assert view.canvas.isHidden() and "preview a fill" in view.note.text()
    frame = pd.DataFrame({"a": [1.0, 2.0, np.nan], "b": [1.0, 2.0, 3.0]})
    session.load(make_sheet(frame, {}))
    result = SimpleNamespace(coverage=coverage_table(), plan=FillPlan(interval_level=0.9))
    session.set_preview(result)
    assert not view.canvas.isHidden() and not view.figure.axes  # hidden: drawn once shown
    panel.show()
    panel.results.views.setCurrentWidget(view)
    qtbot.waitUntil(lambda: bool(view.figure.axes), timeout=3000)
    observed = next(line for line in view.figure.axes[0].lines if line.get_gid() == "observed")
    assert list(observed.get_xdata()) == [0.8, 0.9] and list(observed.get_ydata()) == [0.78, 0.87]
    assert view.figure.axes[0].get_title() == "Coverage (120 cells)"
    assert view.note.text().startswith("Level asked for: 90%. Inside their interval: 87% of 120")
    session.set_preview(SimpleNamespace(plan=FillPlan()))  # a fill without coverage: the note again
    assert view.canvas.isHidden() and "preview a fill" in view.note.text()


@pytest.mark.parametrize(
    "table",
    [
        None,
        pd.DataFrame({"column": ["a"], "level": [0.9], "observed": [0.8]}),  # no "(all)" rows
        pd.DataFrame({"column": ["(all)"], "level": [0.9]}),  # no observed column
    ],
)
def test_sheet_coverage_needs_the_whole_sheet_rows(table):
    assert sheet_coverage(SimpleNamespace(coverage=table)) is None


# ------------------------------------------------------------------ chart
def test_panel_chart_labels_do_not_overlap_and_it_opens_large(qtbot, panel):
    panel.resize(380, 900)
    panel.show()
    report = report_of(qtbot, panel)
    qtbot.waitUntil(lambda: panel.canvas.width() > 100, timeout=3000)
    panel.chart.redraw()
    panel.figure.draw_without_rendering()
    labels = [t for t in panel.figure.axes[0].get_xticklabels() if t.get_text()]
    boxes = sorted((t.get_window_extent() for t in labels), key=lambda b: b.x0)
    assert len(boxes) >= 3
    assert all(a.x1 < b.x0 for a, b in itertools.pairwise(boxes))
    assert "NRMSE" in panel.chart_help.text() and "spread" in panel.chart_help.text()
    window = panel.enlarge_chart()
    assert window is not None and window.isVisible() and window.isWindow()
    assert window.chart.report is report and window.chart.columns == panel.chart.columns
    panel.chart_columns.setCurrentIndex(1)  # "overall only": the large chart follows
    assert window.chart.columns == ()
    window.close()


def test_a_suggestion_without_gain_says_so_on_its_button(qtbot, panel, monkeypatch):
    table = pd.DataFrame(
        {"weight_before": [1.0], "weight_after": [4.0], "score_before": [0.5], "score_after": [0.52]},
        index=["sepal length"],
    )
    fake = SimpleNamespace(weights={"sepal length": 4.0}, score_before=0.5, score_after=0.52, table=table)
    monkeypatch.setattr(validation, "suggest_weights", lambda *a, **k: fake)
    panel.set_source(iris_with_gaps(), FillPlan(k=3))
    view = panel.weights_view
    with qtbot.waitSignal(view.runner.finished, timeout=10_000):
        view.run()
    assert view.apply_button.text() == "Apply anyway (no gain)"
    assert "keeping the plan's weights is as good" in view.note.text()
    assert panel.session.plan.weights == {}


def test_own_k_from_elsewhere_are_pointed_out(qtbot, panel):
    report = report_of(qtbot, panel)
    first = next(iter(report.kinds))
    panel.session.set_plan(panel.session.plan.replace(k_by_column={first: 1 if report.best_k != 1 else 2}))
    assert "came from elsewhere" in panel.columns_view.note.text()
    panel.columns_view.use_each()
    assert "came from elsewhere" not in panel.columns_view.note.text()
