"""The weighted missing-aware distance against outside references and hand-worked cases."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import nearest_donors, prepare
from imputer_app.engine._pairwise import pairwise_distances
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


@pytest.mark.parametrize(
    ("n_rows", "n_cols", "gap", "seed"), [(30, 4, 0.2, 0), (60, 12, 0.4, 1), (25, 50, 0.1, 2)]
)
def test_weights_one_equal_sklearn_nan_euclidean(n_rows: int, n_cols: int, gap: float, seed: int) -> None:
    # Reference: scikit-learn nan_euclidean_distances (Dixon's distance, unweighted).
    x = random_frame(n_rows, n_cols, gap, seed).to_numpy()
    ours = pairwise_distances(x)
    ref = nan_euclidean_distances(x)
    np.testing.assert_array_equal(np.isnan(ours), np.isnan(ref))
    np.testing.assert_allclose(ours, ref, rtol=1e-9, atol=1e-9, equal_nan=True)


def _direct(x: np.ndarray) -> np.ndarray:
    """Dixon's formula pair by pair (slow, for checking rounding)."""
    n, p = x.shape
    out = np.full((n, n), np.nan)
    for i in range(n):
        for j in range(n):
            both = ~np.isnan(x[i]) & ~np.isnan(x[j])
            if both.any():
                out[i, j] = math.sqrt(p / both.sum() * ((x[i, both] - x[j, both]) ** 2).sum())
    return out


def test_large_offset_values_keep_precision() -> None:
    # Values far from 0 compared with their spread (conductivity ~ 1000 +- 0.1): the
    # matrix-product form must not lose the small differences (checked against the
    # pair-by-pair formula; scikit-learn's expansion loses ~1e-8 here).
    x = random_frame(40, 6, 0.3, seed=4).to_numpy() * 0.1 + 1000.0
    np.testing.assert_allclose(pairwise_distances(x), _direct(x), rtol=1e-9, atol=1e-9, equal_nan=True)


def test_search_distances_equal_sklearn_nan_euclidean() -> None:
    # Reference: scikit-learn nan_euclidean_distances; the distances the donor search
    # reports (scaling none, weights 1) are the same numbers.
    frame = random_frame(50, 6, 0.2, seed=3)
    table = prepare(frame, FillPlan(scaling="none"))
    donors = nearest_donors(table, kmax=4)
    ref = nan_euclidean_distances(frame.to_numpy())
    for found in donors.values():
        width = found.index.shape[1]
        got = found.distance[found.index >= 0]
        rows = np.repeat(found.rows, width).reshape(-1, width)[found.index >= 0]
        want = ref[rows, found.index[found.index >= 0]]
        np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-12)


def test_dixon_1979_worked_example_by_hand() -> None:
    # Dixon 1979, IEEE Trans. SMC 9(10):617-621: with gaps, the squared distance over the
    # shared coordinates is scaled up by (all coordinates / shared coordinates).
    x = np.array([[1.0, np.nan, 3.0, 4.0], [2.0, 5.0, np.nan, 6.0]])
    # shared: columns 0 and 3 -> (1-2)^2 + (4-6)^2 = 5; scaled by 4/2 -> 10
    assert pairwise_distances(x)[0, 1] == pytest.approx(math.sqrt(10.0), rel=1e-12)
    # weighted (3, 1, 1, 1): shared sum 3*1 + 1*4 = 7; scaled by 6/4 -> 10.5
    assert pairwise_distances(x, np.array([3.0, 1, 1, 1]))[0, 1] == pytest.approx(math.sqrt(10.5), rel=1e-12)


def test_rows_without_shared_column_have_no_distance() -> None:
    # Dixon 1979: the distance is undefined when no coordinate is shared (NaN, as scikit-learn).
    x = np.array([[1.0, np.nan], [np.nan, 2.0], [1.0, 2.0]])
    d = pairwise_distances(x)
    assert np.isnan(d[0, 1]) and np.isnan(d[1, 0])
    assert d[0, 2] == pytest.approx(0.0) and d[1, 2] == pytest.approx(0.0)


@pytest.mark.parametrize("column", [0, 2])
def test_doubling_a_weight_equals_scaling_that_column_by_sqrt2(column: int) -> None:
    # Follows from the formula: w_j (x_j - y_j)^2 with w_j = 2 equals (sqrt2 x_j - sqrt2 y_j)^2.
    # Without gaps W_all / W_shared is 1 for both, so the distances agree exactly.
    x = random_frame(20, 4, 0.0, seed=5).to_numpy()
    w = np.ones(4)
    w[column] = 2.0
    scaled = x.copy()
    scaled[:, column] *= math.sqrt(2.0)
    np.testing.assert_allclose(pairwise_distances(x, w), pairwise_distances(scaled), rtol=1e-9, atol=1e-12)


def test_gower_1971_mixed_numbers_and_categories_by_hand() -> None:
    # Gower 1971, Biometrics 27(4):857-871: a number scaled by its range, a category
    # contributes 0 when equal and 1 when different. Combined as Dixon 1979 scales a
    # distance over shared columns (README.md, "How the numbers are made"):
    # d^2 = (W_all / W_shared) * sum w_j delta_j^2.
    frame = pd.DataFrame(
        {"a": [0.0, 10.0, 5.0, np.nan], "c": ["x", "y", "x", "y"], "t": [1.0, np.nan, np.nan, 2.0]}
    )
    table = prepare(frame, FillPlan(scaling="range", similarity_columns=("a", "c"), fill_columns=("t",)))
    numbers, codes = table.features.numbers, table.features.codes
    d = pairwise_distances(numbers, table.features.number_weights, codes=codes)
    # a scaled: 0, 1, 0.5, gap
    assert d[0, 1] == pytest.approx(math.sqrt(1.0 + 1.0))  # 1^2 + mismatch
    assert d[0, 2] == pytest.approx(0.5)  # 0.5^2 + match
    assert d[1, 2] == pytest.approx(math.sqrt(0.25 + 1.0))
    assert d[3, 0] == pytest.approx(math.sqrt(2.0 / 1.0 * 1.0))  # only c shared: mismatch x 2/1
    assert d[3, 1] == pytest.approx(0.0)
    # the search sees the same: row 1 and row 2 (gaps in t) get donors 3 then 0; in a fill a
    # mismatch weighs the mean squared difference of the range-scaled numbers (Kinfill's own
    # rule, README "How the numbers are made"): 2 x var(0, 1, 0.5) = 1/3, so row 1 to row 0
    # is 1^2 + 1/3 (both columns shared)
    found = nearest_donors(table, kmax=2)["t"]
    assert found.rows.tolist() == [1, 2]
    assert found.index[0].tolist()[:2] == [3, 0]
    np.testing.assert_allclose(found.distance[0, :2], [0.0, math.sqrt(1.0 + 1.0 / 3.0)])


def test_category_weight_counts_in_both_sums() -> None:
    # Kinfill's weighted form of Gower's matching rule (README.md, "How the numbers are made"):
    # a category contributes w_j x [x_j != y_j] to the distance sum and w_j to the shared weight.
    codes = np.array([[0], [1], [0]])
    numbers = np.array([[0.0], [np.nan], [3.0]])
    d = pairwise_distances(numbers, np.array([1.0]), codes=codes, code_weights=np.array([4.0]))
    assert d[0, 1] == pytest.approx(math.sqrt(5.0 / 4.0 * 4.0))  # only the category is shared
    assert d[0, 2] == pytest.approx(math.sqrt(9.0))  # 9 + 0, all shared
