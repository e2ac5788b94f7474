"""Suggested weights: noise columns are dropped and the error on fresh cells falls."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_breast_cancer

from imputer_app.engine import impute
from imputer_app.errors import Cancelled
from imputer_app.plan import FillPlan
from imputer_app.validation import suggest_weights
from imputer_app.validation._weights import _paths, _rescaled

NOISE = [f"noise{i}" for i in range(4)]


def _with_noise() -> tuple[pd.DataFrame, pd.DataFrame, tuple[str, ...]]:
    """The first ten columns of the breast cancer data shipped in scikit-learn (Wisconsin
    diagnostic data, UCI) plus four columns of pure noise; 5 % of the real cells removed."""
    data = load_breast_cancer(as_frame=True).data.iloc[:, :10].copy()
    real = tuple(data.columns)
    rng = np.random.default_rng(0)
    for name in NOISE:
        data[name] = rng.normal(size=len(data))
    sheet = data.copy()
    sheet[list(real)] = data[list(real)].mask(rng.random((len(data), len(real))) < 0.05)
    return data, sheet, real


def _fresh_error(truth: pd.DataFrame, sheet: pd.DataFrame, plan: FillPlan, columns: tuple[str, ...]) -> float:
    """Mean NRMSE over the removed cells (never hidden by the search)."""
    filled = impute(sheet, plan).frame
    gaps = sheet.isna()
    errors = [
        np.sqrt(np.mean((filled[c][gaps[c]] - truth[c][gaps[c]]) ** 2)) / truth[c].std() for c in columns
    ]
    return float(np.mean(errors))


def test_noise_columns_get_weights_near_0_and_the_fresh_error_drops() -> None:
    truth, sheet, real = _with_noise()
    plan = FillPlan(k=5, fill_columns=real, interval_level=None)
    got = suggest_weights(sheet, plan, seed=0)
    assert all(got.weights[n] <= 0.5 for n in NOISE), got.weights
    assert got.score_after < got.score_before
    assert _fresh_error(truth, sheet, got.plan, real) < _fresh_error(truth, sheet, plan, real)
    assert list(got.table.columns) == ["weight_before", "weight_after", "score_before", "score_after"]
    assert got.table.loc[NOISE, "score_before"].isna().all()  # not filled: no score
    assert got.plan.fill_columns == real and got.plan.k == 5
    assert got.settings["seed"] == 0 and got.settings["fills"] > len(got.weights)


def test_the_same_seed_gives_the_same_weights_and_progress_ends_full() -> None:
    rng = np.random.default_rng(1)
    base = rng.normal(size=(60, 2))
    sheet = pd.DataFrame(
        base @ rng.normal(size=(2, 4)) + 0.2 * rng.normal(size=(60, 4)), columns=list("abcd")
    )
    sheet = sheet.mask(rng.random(sheet.shape) < 0.05)
    seen: list[tuple[int, int]] = []
    first = suggest_weights(sheet, FillPlan(k=3), seed=4, progress=lambda d, t: seen.append((d, t)))
    second = suggest_weights(sheet, FillPlan(k=3), seed=4)
    assert first.weights == second.weights and first.score_after == second.score_after
    assert seen[-1][0] == seen[-1][1]


def test_cancel_stops_the_search() -> None:
    sheet = pd.DataFrame(np.random.default_rng(2).normal(size=(40, 3)), columns=list("abc"))
    with pytest.raises(Cancelled):
        suggest_weights(sheet, FillPlan(k=3), cancel=lambda: True)


@pytest.mark.parametrize(
    ("weight", "down", "up"),
    [(1.0, (0.0, 0.5), (2.0, 4.0)), (0.0, (), (0.5, 1.0, 2.0, 4.0)), (4.0, (0.0, 2.0, 1.0, 0.5), ())],
)
def test_search_paths(weight: float, down: tuple[float, ...], up: tuple[float, ...]) -> None:
    assert _paths(weight) == (down, up)


def test_weights_are_scaled_to_a_median_of_1() -> None:
    # common practice, no source: only ratios of weights matter to the distance ranking
    assert _rescaled({"a": 2.0, "b": 4.0, "c": 0.0, "d": 1.0}) == {"a": 1.0, "b": 2.0, "c": 0.0, "d": 0.5}
