"""The recovery test's baseline: group means with a group column; classes from all known cells."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_iris

from imputer_app import engine
from imputer_app.plan import FillPlan
from imputer_app.validation import recovery_test
from imputer_app.validation._baseline import baseline_values
from imputer_app.validation._recovery import draw_masks, prepare_base


def _small() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "site": ["a", "a", "a", "a", "b", "b", "b", "b"],
            "x": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0],
            "y": [1.0, 3.0, 5.0, 100.0, 10.0, 20.0, 30.0, 40.0],
            "cls": ["u", "u", "v", "v", "w", "w", "w", "u"],
        }
    )


def test_hand_worked_baseline_with_and_without_groups() -> None:
    frame = _small()
    hide = np.zeros(frame.shape, dtype=bool)
    hide[[3, 7], 2] = True  # y of rows 3 and 7
    hide[[2, 3], 3] = True  # cls of rows 2 and 3 (both "v")
    rows = np.array([2, 3, 7])
    plan = FillPlan(similarity_columns=("x",), fill_columns=("y", "cls"), group_column="site")
    whole, hidden = engine.prepare(frame, plan), engine.prepare(frame, plan, hide=hide)
    # numbers: mean of the group's visible cells (row 3's own 100 is not in it)
    np.testing.assert_allclose(baseline_values(hidden, whole, np.array([3, 7]), "y"), [3.0, 20.0])
    # classes: the group's most common class over all known cells, hidden ones too:
    # group a has u, u, v, v -> a tie, the first class in order (u); visible cells alone: u
    assert baseline_values(hidden, whole, rows, "cls").tolist() == ["u", "u", "w"]
    flat = plan.replace(group_column=None)
    whole, hidden = engine.prepare(frame, flat), engine.prepare(frame, flat, hide=hide)
    np.testing.assert_allclose(
        baseline_values(hidden, whole, np.array([3, 7]), "y"), [(1 + 3 + 5 + 10 + 20 + 30) / 6] * 2
    )
    # all known cells: u 3, v 2, w 3 -> u (first of the tied classes); visible: u 3, w 3
    assert baseline_values(hidden, whole, rows, "cls").tolist() == ["u", "u", "u"]


def test_majority_class_counts_the_hidden_cells_too() -> None:
    frame = _small().assign(cls=["v", "v", "v", "u", "u", "u", "v", "v"])  # v 5, u 3
    hide = np.zeros(frame.shape, dtype=bool)
    hide[[0, 1, 2], 3] = True  # visible: u 3, v 2 -> a visible-only count would say u
    plan = FillPlan(similarity_columns=("x",), fill_columns=("cls",))
    whole, hidden = engine.prepare(frame, plan), engine.prepare(frame, plan, hide=hide)
    assert baseline_values(hidden, whole, np.array([0, 1, 2]), "cls").tolist() == ["v", "v", "v"]


def _iris() -> pd.DataFrame:
    iris = load_iris(as_frame=True)  # Fisher 1936, as shipped in scikit-learn
    frame = iris.data.copy()
    frame["species"] = iris.target_names[iris.target]
    return frame


def test_iris_grouped_by_species_is_scored_against_the_species_mean() -> None:
    frame = _iris()
    plan = FillPlan(group_column="species", fill_columns=tuple(frame.columns[:4]))
    report = recovery_test(frame, plan, ks=[1, 5], hide_fraction=0.2, repeats=2, seed=0, masking="random")
    # recompute the baseline RMSE fold by fold with pandas: the species mean of visible cells
    base = prepare_base(frame, plan)
    expected: dict[str, list[float]] = {c: [] for c in frame.columns[:4]}
    for folds in draw_masks(base.layout, 0.2, "random", seed=0, repeats=2):
        for mask in folds:
            visible = frame.mask(pd.DataFrame(mask, columns=frame.columns))
            means = visible.groupby(frame["species"])[list(frame.columns[:4])].transform("mean")
            for j, column in enumerate(frame.columns[:4]):
                cells = mask[:, j]
                expected[column].append(
                    float(np.sqrt(np.mean((means[column][cells] - frame[column][cells]) ** 2)))
                )
    for column, values in expected.items():
        assert report.baseline.loc[column, "rmse"] == pytest.approx(np.mean(values), abs=1e-12)
    # the species mean is a much harder baseline than the column mean on petal length
    global_rmse = frame["petal length (cm)"].std(ddof=0)
    assert report.baseline.loc["petal length (cm)", "rmse"] < 0.4 * global_rmse


def test_a_sheet_without_enough_incomplete_rows_is_hidden_at_random() -> None:
    frame = _iris()
    report = recovery_test(frame, FillPlan(), ks=[3], repeats=1)
    assert report.masking == "random" and report.settings["masking_asked"] == "auto"
    holed = frame.copy()
    holed.iloc[::6, 0] = np.nan  # 25 incomplete rows, 125 complete rows
    report = recovery_test(holed, FillPlan(), ks=[3], repeats=1)
    assert report.masking == "pattern"
