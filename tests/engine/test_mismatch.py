"""A category mismatch weighs what a typical numeric difference weighs under the plan's scaling."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import impute, prepare
from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._pairwise import pairwise_distances
from imputer_app.plan import FillPlan

# a: 0..3; b: 0, 0, 0, 3 (by hand, population variances after each scaling)
SMALL = pd.DataFrame({"a": [0.0, 1.0, 2.0, 3.0], "b": [0.0, 0.0, 0.0, 3.0], "c": list("xyxy")})


@pytest.mark.parametrize(
    ("scaling", "factor"),
    [
        ("zscore", 2.0),  # E[(x - y)^2] = 2 for two independent standardized values
        ("none", (2 * 1.25 + 2 * 27 / 16) / 2),  # var a = 1.25, var b = 9/4 - 9/16 = 27/16
        ("range", (2 * 5 / 36 + 2 * 3 / 16) / 2),  # a/3: var 5/36; b/3 = 0, 0, 0, 1: var 3/16
        ("robust", (2 * 1.25 / 1.5**2 + 2 * (27 / 16) / 0.75**2) / 2),  # IQR a 1.5, b 0.75
    ],
)
def test_mismatch_factor_per_scaling_by_hand(scaling: str, factor: float) -> None:
    # Kinfill's own rule (README "How the numbers are made"), on Gower's (1971) matching
    # coefficient: a mismatch adds 2 var of a scaled numeric similarity column, averaged
    # over those columns, instead of 1.
    table = prepare(SMALL, FillPlan(scaling=scaling, fill_columns=("a",)))
    assert table.features.mismatch == pytest.approx(factor, rel=1e-12)
    # rows 0 and 2 differ in a only (and match in c), rows 1 and 3 in a and b; 0 and 1 in
    # a and c: the mismatch adds the factor to the squared numeric difference
    model = DistanceModel(table.features)
    x = table.features.numbers
    d2 = model.exact(np.array([0]), np.array([1]))[0]
    assert d2 == pytest.approx(((x[0] - x[1]) ** 2).sum() + factor, rel=1e-12)


def test_without_numeric_columns_a_mismatch_adds_one() -> None:
    # Gower 1971: the matching coefficient scores a mismatch 1.
    frame = pd.DataFrame({"c": list("xyxyx"), "t": [1.0, 2.0, np.nan, 4.0, 5.0]})
    table = prepare(frame, FillPlan(similarity_columns=("c",), fill_columns=("t",)))
    assert table.features.mismatch == 1.0
    codes = table.features.codes
    assert pairwise_distances(np.empty((5, 0)), codes=codes)[0, 1] == 1.0


def _mismatch_against_typical_difference(weight_c: float) -> dict[int, float]:
    """Distances from T (row 0) to A (category differs) and B1, B2 (number differs by sqrt 2 sd)."""
    bulk = np.arange(1.0, 21.0)
    bulk = np.concatenate([bulk, -bulk])  # mean 0
    # B sits at +-h with h^2 = 2 var of the whole column: z-scored, it differs from T by sqrt 2
    h = np.sqrt(2 * (bulk**2).sum() / (len(bulk) + 4 - 4))
    x = np.concatenate([[0.0, 0.0, h, -h], bulk])
    c = ["p", "q", "p", "p"] + ["q", "r", "s", "u"] * 10
    t = np.concatenate([[np.nan, 1.0, 2.0, 3.0], np.full(len(bulk), 100.0)])
    frame = pd.DataFrame({"x": x, "c": c, "t": t})
    plan = FillPlan(k=1, similarity_columns=("x", "c"), fill_columns=("t",), weights={"c": weight_c})
    model = DistanceModel(prepare(frame, plan).features)
    return dict(enumerate(model.exact(np.zeros(4, dtype=np.intp), np.arange(4)).tolist()))


def test_equal_weights_mean_equal_influence() -> None:
    # Kinfill's own rule: with z-scores, a mismatch adds 2 = E[(x - y)^2]. T = (0, p),
    # A = (0, q), B = (+-h, p) with h a typical difference (sqrt 2 standard deviations):
    # with equal weights A and B are equally near; weighting the category twice puts A behind.
    even = _mismatch_against_typical_difference(1.0)
    assert even[1] == pytest.approx(even[2], rel=1e-12) == pytest.approx(even[3], rel=1e-12)
    heavy = _mismatch_against_typical_difference(2.0)
    assert heavy[2] == pytest.approx(heavy[3], rel=1e-12) and heavy[2] < heavy[1]


def test_equal_distances_share_the_fill() -> None:
    # The three equally near donors above (A, B1, B2) share k = 1 (Kinfill's tie rule).
    bulk = np.arange(1.0, 21.0)
    bulk = np.concatenate([bulk, -bulk])
    h = np.sqrt(2 * (bulk**2).sum() / len(bulk))
    frame = pd.DataFrame(
        {
            "x": np.concatenate([[0.0, 0.0, h, -h], bulk]),
            "c": ["p", "q", "p", "p"] + ["q", "r", "s", "u"] * 10,
            "t": np.concatenate([[np.nan, 1.0, 2.0, 3.0], np.full(len(bulk), 100.0)]),
        }
    )
    result = impute(frame, FillPlan(k=1, similarity_columns=("x", "c"), fill_columns=("t",)))
    assert result.frame.loc[0, "t"] == pytest.approx(2.0, abs=1e-9)


def test_mean_pair_difference_equals_the_factor() -> None:
    # E over all pairs of rows of (x_i - x_j)^2 = 2 var (population variance): the factor
    # is what an equally weighted numeric column adds on average (range scaling here).
    rng = np.random.default_rng(5)
    frame = pd.DataFrame(
        {"x": rng.normal(size=80), "y": rng.gamma(2.0, size=80), "c": rng.choice(list("uv"), 80)}
    )
    table = prepare(frame, FillPlan(scaling="range", fill_columns=("x",)))
    z = table.features.numbers
    mean_pair = np.mean([((z[:, j, None] - z[None, :, j]) ** 2).mean() for j in range(2)])
    assert table.features.mismatch == pytest.approx(mean_pair, rel=1e-12)
