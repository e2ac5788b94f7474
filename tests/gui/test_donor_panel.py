"""The donor panel shows the fill log's account of one cell, donors nearest first.

Data: the iris measurements shipped in scikit-learn (Fisher 1936) with cells removed at
a fixed seed; every number shown is compared with `FillResult.log`.
"""

from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import Qt
from sklearn.datasets import load_iris

from imputer_app.engine import impute
from imputer_app.gui.cell_story import describe_cell, method_words, support_words
from imputer_app.gui.donor_panel import SAMPLE_COLUMN, DonorPanel
from imputer_app.gui.formatting import format_value
from imputer_app.gui.records_model import RAW_ROLE
from imputer_app.plan import FillPlan
from tests.gui._screenshot import private_env, run


def iris_with_gaps(n_rows: int = 50, share: float = 0.1, seed: int = 2) -> pd.DataFrame:
    """Iris (Fisher 1936, shipped in scikit-learn) with a fixed share of cells removed."""
    iris = load_iris(as_frame=True).frame.drop(columns="target")
    iris.columns = ["sepal length", "sepal width", "petal length", "petal width"]
    frame = iris.sample(n=n_rows, random_state=seed).reset_index(drop=True)
    frame.index = frame.index + 2
    return frame.mask(np.random.default_rng(seed).random(frame.shape) < share)


@pytest.fixture(scope="module")
def filled():
    frame = iris_with_gaps()
    return frame, impute(frame, FillPlan(k=3))


@pytest.fixture
def panel(qtbot):
    widget = DonorPanel()
    qtbot.addWidget(widget)
    return widget


def facts(panel: DonorPanel) -> dict[str, str]:
    return dict(panel.story.facts)


@pytest.mark.parametrize("which", [0, 1, 5, -1])
def test_donors_in_order_with_the_logs_distances(panel, filled, which):
    _, result = filled
    log = result.log
    # cells without donors tied at the k-th distance (those list more donors than k, with shares)
    untied = log[(log["method"] == "knn") & (log["donors"].map(len) == log["k"])]
    entry = untied.iloc[which]
    panel.show_cell(result, entry["row"], entry["column"])

    model = panel.model
    assert model.rowCount() == len(entry["donors"]) == entry["k"]
    shown_labels = [model.index(r, 0).data(RAW_ROLE) for r in range(model.rowCount())]
    shown_distances = [model.index(r, 2).data(RAW_ROLE) for r in range(model.rowCount())]
    shown_values = [model.index(r, 3).data(RAW_ROLE) for r in range(model.rowCount())]
    assert shown_labels == list(entry["donors"])
    assert shown_distances == [float(d) for d in entry["distances"]]  # exact, not rounded
    assert shown_values == pytest.approx([float(v) for v in entry["donor_values"]])
    assert shown_distances == sorted(shown_distances)  # nearest first
    assert panel.table.isVisibleTo(panel)
    assert panel.table.isColumnHidden(SAMPLE_COLUMN)  # iris names no rows: no sample ID column

    told = facts(panel)
    assert told["Value"] == format_value(entry["value"])
    assert told["Donors used (k)"] == "3"
    assert told["Method"] == "mean of the nearest donors' values"
    assert told["Support"] == entry["support"]
    headline = f"Row {entry['row']}, {entry['column']}: filled with {told['Value']}"
    assert panel.headline.text() in (headline, f"{headline}, {told.get('Interval')}")
    # A plain mean of k donors (scikit-learn KNNImputer, uniform weights): the shown value
    # is the mean of the shown donor values.
    assert float(told["Value"]) == pytest.approx(np.mean(shown_values), rel=1e-5)
    assert told["Spread"].startswith(format_value(entry["spread"], 3))


def test_category_cell_shows_the_vote(panel):
    """Iris species (Fisher 1936) filled by a majority vote of 5 donors."""
    iris = load_iris(as_frame=True)
    frame = iris.frame.drop(columns="target").iloc[::3].copy()
    frame["species"] = iris.target_names[iris.target.iloc[::3]]
    frame.index = frame.index + 2
    frame.loc[frame.index[::7], "species"] = np.nan
    result = impute(frame, FillPlan(k=5))
    log = result.log[result.log["column"] == "species"]
    mixed = log[[len(set(v)) > 1 for v in log["donor_values"]]]
    entry = (mixed if len(mixed) else log).iloc[0]
    panel.show_cell(result, entry["row"], "species")
    told = facts(panel)
    assert told["Value"] == entry["value"]
    assert told["Method"].startswith("majority vote of the nearest donors")
    share = list(entry["donor_values"]).count(entry["value"]) / len(entry["donor_values"])
    assert entry["spread"] == pytest.approx(share)  # the log's spread is the winning vote share
    assert told["Spread"] == f"{share:.0%} of the donors chose this value"
    shown = [panel.model.index(r, 3).data() for r in range(panel.model.rowCount())]
    assert shown == list(entry["donor_values"])


def test_weak_support_is_explained(qtbot):
    """Without intervals: an outlier row's nearest donor is farther than for 95% of the filled cells."""
    rng = np.random.default_rng(7)
    frame = pd.DataFrame(rng.normal(size=(40, 3)), columns=["a", "b", "c"])
    frame.iloc[::4, 2] = np.nan
    frame.loc[39] = [25.0, -25.0, np.nan]  # far from every other row
    result = impute(frame, FillPlan(k=3, interval_level=None))
    entry = result.log[(result.log["row"] == 39) & (result.log["column"] == "c")].iloc[0]
    assert entry["support"] == "weak"
    panel = DonorPanel()
    qtbot.addWidget(panel)
    panel.show_cell(result, 39, "c")
    assert panel.story.support == "weak"
    text = panel.support_text.text()
    assert "farther than for 95% of the cells filled in this sheet" in text
    assert f"threshold {format_value(result.k_weak_threshold, 3)}" in text
    assert f"distance {format_value(entry['distances'][0], 3)}" in text
    assert panel.support_icon.isVisibleTo(panel)
    # An ordinary cell of the same fill carries no warning sign.
    ok = result.log[result.log["support"] == "ok"].iloc[0]
    panel.show_cell(result, ok["row"], ok["column"])
    assert panel.support_text.text().startswith("Ordinary support")
    assert not panel.support_icon.isVisibleTo(panel)


def test_unfilled_cell_gives_the_reason(panel):
    frame = iris_with_gaps()
    frame.loc[5, :] = np.nan  # a row with nothing to measure similarity by
    result = impute(frame, FillPlan(k=3))
    assert len(result.unfilled)
    entry = result.unfilled.iloc[0]
    panel.show_cell(result, entry["row"], entry["column"])
    assert panel.story.status == "unfilled"
    assert facts(panel) == {"Reason": entry["reason"]}
    assert panel.headline.text().endswith("not filled")
    assert not panel.table.isVisibleTo(panel)


def test_measured_cell_and_clear(panel, filled):
    frame, result = filled
    row, column = next((r, c) for c in frame.columns for r in frame.index if pd.notna(frame.at[r, c]))
    panel.show_cell(result, row, column)
    assert panel.story.status == "measured"
    assert "nothing was filled" in panel.headline.text()
    assert panel.model.rowCount() == 0
    panel.clear()
    assert panel.story.status == "none"
    assert panel.headline.text().startswith("Select a cell")


def test_censored_cell_shows_its_original_text(panel):
    """A below-limit entry is replaced by half its limit (asked for in the plan) and stays flagged."""
    rng = np.random.default_rng(3)
    frame = pd.DataFrame(rng.uniform(1, 2, size=(12, 2)), columns=["nitrate", "zinc"])
    frame.index = frame.index + 2
    frame.loc[4, "zinc"] = np.nan
    states = pd.DataFrame("observed", index=frame.index, columns=frame.columns)
    states.loc[4, "zinc"] = "censored"
    states = states.astype(pd.CategoricalDtype(["observed", "missing", "censored", "text_in_number"]))
    notes = pd.DataFrame(
        {
            "row": [4],
            "column": ["zinc"],
            "state": ["censored"],
            "text": ["<0.05"],
            "side": ["<"],
            "limit": [0.05],
        }
    )
    sheet = SimpleNamespace(frame=frame, states=states, cell_notes=notes)
    result = impute(sheet, FillPlan(k=3, censored="half_limit"))
    entry = result.log[(result.log["row"] == 4) & (result.log["column"] == "zinc")].iloc[0]
    assert entry["method"] == "half_limit" and entry["value"] == pytest.approx(0.025)

    panel.show_cell(result, 4, "zinc", notes=notes)
    told = facts(panel)
    assert panel.story.status == "substituted"
    assert told["Original entry"] == "<0.05 (limit 0.05)"
    assert told["Method"] == "replaced by half the limit"
    assert "censored" in told["Flag"]
    assert not panel.table.isVisibleTo(panel)


def test_enter_on_a_donor_asks_to_show_its_row(qtbot, panel, filled):
    _, result = filled
    entry = result.log.iloc[0]
    panel.show_cell(result, entry["row"], entry["column"])
    panel.table.setCurrentIndex(panel.donor_index(1))
    with qtbot.waitSignal(panel.jump_requested, timeout=1000) as blocker:
        qtbot.keyClick(panel.table, Qt.Key.Key_Return)
    assert blocker.args == [entry["donors"][1], entry["column"]]


@pytest.mark.parametrize(
    ("method", "numeric", "plan", "words"),
    [
        ("knn", True, FillPlan(), "mean of the nearest donors' values"),
        ("knn", True, FillPlan(numeric_rule="median"), "median of the nearest donors' values"),
        (
            "knn",
            True,
            FillPlan(neighbour_weighting="inverse_distance"),
            "distance-weighted mean of the nearest donors (nearer donors count more)",
        ),
        (
            "knn",
            False,
            FillPlan(),
            "majority vote of the nearest donors (a tie goes to the nearest donor's class)",
        ),
        ("knn_capped", True, FillPlan(), "mean of the nearest donors' values, capped at the entry's limit"),
        ("column_mean", True, FillPlan(), "column average (no donor was available)"),
        ("limit_sqrt2", True, FillPlan(), "replaced by the limit divided by sqrt(2) (Hornung & Reed 1990)"),
    ],
)
def test_method_words(method, numeric, plan, words):
    assert method_words(method, plan, numeric) == words


def test_words_without_a_result():
    assert describe_cell(None, 3, "x").status == "none"
    assert support_words("", 1.0, 2.0).startswith("Not applicable")


def test_interval_is_shown_and_support_follows_its_width(qtbot):
    """With intervals on (README "How the numbers are made"): the interval is a fact and in
    the headline, and support is told by the interval's width against the column's 5-95 %
    range and the nearest donor's distance against the column's typical one."""
    rng = np.random.default_rng(3)
    frame = pd.DataFrame(rng.normal(size=(200, 3)), columns=["a", "b", "c"])
    frame.iloc[::5, 2] = np.nan
    result = impute(frame, FillPlan(k=5))
    rule = result.calibration.columns["c"]
    known = frame["c"].dropna()
    assert rule.column_range == pytest.approx(known.quantile(0.95) - known.quantile(0.05), rel=0.02)
    panel = DonorPanel()
    qtbot.addWidget(panel)
    for flag, words in (("ok", "Ordinary support"), ("weak", "Weak support")):
        shown = result.log[(result.log["column"] == "c") & (result.log["support"] == flag)]
        assert len(shown) == 20  # half of the 40 fills of c each way on this seed
        entry = shown.iloc[0]
        panel.show_cell(result, entry["row"], "c")
        told = facts(panel)
        interval = f"{format_value(entry['lower'])} to {format_value(entry['upper'])} (90% interval)"
        assert told["Interval"] == interval
        assert panel.headline.text().endswith(f", {interval}")
        share = (entry["upper"] - entry["lower"]) / rule.column_range
        text = panel.support_text.text()
        assert f"{share:.1f} times the width of the column's 5-95 % range" in text
        assert text.startswith(words) and "times as far as is typical" in text


def test_donor_table_names_rows_by_sample_id_and_a_double_click_shows_the_row(qtbot, window):
    """The demo's Sample ID column names each donor beside its row; a double-click jumps there."""
    from PySide6.QtTest import QTest

    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.actions_["preview"].trigger()
    preview = window.session.preview
    r, c = (int(v) for v in np.argwhere(window.table_model.fill_codes > 0)[0])
    window.select_position(r, c)
    panel = window.donor_panel
    entry = preview.log[
        (preview.log["row"] == window.table_model.row_label(r))
        & (preview.log["column"] == window.table_model.column_names()[c])
    ].iloc[0]
    ids = preview.frame["Sample ID"]
    model = panel.model
    rows = range(model.rowCount())
    shown = [(model.index(i, 0).data(RAW_ROLE), model.index(i, SAMPLE_COLUMN).data()) for i in rows]
    assert shown == [(label, ids.loc[label]) for label in entry["donors"]]
    assert dict(panel.story.facts)["Sample"] == ids.loc[entry["row"]]  # the filled row too
    assert not panel.table.isColumnHidden(SAMPLE_COLUMN)

    far = model.rowCount() - 1
    assert panel.table.isVisible()
    target = panel.table.visualRect(model.index(far, SAMPLE_COLUMN)).center()
    QTest.mouseClick(panel.table.viewport(), Qt.MouseButton.LeftButton, pos=target)  # a press comes first
    QTest.mouseDClick(panel.table.viewport(), Qt.MouseButton.LeftButton, pos=target)
    current = window.table.currentIndex()
    assert window.table_model.row_label(current.row()) == entry["donors"][far]
    assert window.table_model.column_names()[current.column()] == entry["column"]


@pytest.mark.xvfb
@pytest.mark.slow
@pytest.mark.skipif(shutil.which("xvfb-run") is None, reason="xvfb-run is not installed")
@pytest.mark.parametrize("width, height", [(1400, 900), (1280, 800)])
def test_in_a_real_window_every_fact_is_as_tall_as_its_text(tmp_path, samples_dir, width, height) -> None:
    """The demo's first filled cell after a preview (its spread and note wrap): each fact is as
    tall as its lines need. A form layout cut them to a line and a half in a real window and
    spread the rest over one-line facts; offscreen it did not."""
    env = private_env(tmp_path / "home")
    env.pop("QT_QPA_PLATFORM", None)  # the real xcb platform, with its fonts
    driver = Path(__file__).with_name("_donor_fit.py")
    command = ["xvfb-run", "-a", "-s", f"-screen 0 {width}x{height}x24", sys.executable, str(driver)]
    done = run([*command, str(samples_dir / "river_survey.xlsx"), str(width), str(height)], env, timeout=150)
    assert done.returncode == 0, done.stderr[-2000:]
    facts = json.loads(done.stdout.strip().splitlines()[-1])
    line = min(needed for _, _, needed in facts)
    assert any(needed > 1.5 * line for _, _, needed in facts)  # some fact wraps
    for text, height_now, needed in facts:
        assert height_now >= needed, text
