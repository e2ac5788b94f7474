"""Fills checked against scikit-learn's KNNImputer and against common practice."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_iris
from sklearn.impute import KNNImputer
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


def _iris_with_gaps(fraction: float, seed: int) -> pd.DataFrame:
    """Iris (Fisher 1936, shipped in scikit-learn) with MCAR gaps."""
    data = load_iris()
    x = data.data.copy()
    rng = np.random.default_rng(seed)
    x[rng.random(x.shape) < fraction] = np.nan
    return pd.DataFrame(x, columns=["sepal_length", "sepal_width", "petal_length", "petal_width"])


CASES = [
    pytest.param(lambda: random_frame(200, 6, 0.15, seed=11), id="random-200x6"),
    pytest.param(lambda: random_frame(80, 30, 0.05, seed=12), id="random-80x30"),
    pytest.param(lambda: random_frame(300, 3, 0.3, seed=13), id="random-300x3"),
    pytest.param(lambda: _iris_with_gaps(0.1, seed=0), id="iris"),
]


@pytest.mark.parametrize("make", CASES)
@pytest.mark.parametrize("k", [1, 5, 9])
def test_uniform_equals_sklearn_knnimputer(make, k: int) -> None:  # type: ignore[no-untyped-def]
    # Reference: scikit-learn KNNImputer(n_neighbors=k) with its defaults (uniform weights,
    # nan_euclidean) equals impute(scaling="none"); iris: Fisher 1936 via sklearn.datasets.
    # KNNImputer gives the column mean to a row sharing no column with any donor:
    # that is our no_donor="column_mean".
    frame = make()
    ref = KNNImputer(n_neighbors=k).fit_transform(frame.to_numpy())
    result = impute(frame, FillPlan(k=k, scaling="none", no_donor="column_mean"))
    clear = ~_tied_at_k(frame.to_numpy(), k)
    assert clear.mean() > 0.9
    np.testing.assert_allclose(result.frame.to_numpy()[clear], ref[clear], rtol=0, atol=1e-9)
    assert result.filled.to_numpy().sum() == frame.isna().to_numpy().sum()


def _tied_at_k(x: np.ndarray, k: int) -> np.ndarray:
    """True for gap cells whose k-th and (k+1)-th nearest donors are equally far.

    There KNNImputer picks among the tied donors in no stated order (it uses
    argpartition, and its distances carry rounding noise up to ~1e-7 near 0) while
    Kinfill lets all tied donors share the last places (README "How the numbers are
    made"), so only the other cells compare.
    """
    dist = nan_euclidean_distances(x)
    tied = np.zeros(x.shape, dtype=bool)
    for i, j in zip(*np.nonzero(np.isnan(x)), strict=True):
        d = np.sort(dist[i, ~np.isnan(x[:, j]) & ~np.isnan(dist[i])])
        tied[i, j] = len(d) > k and abs(d[k - 1] - d[k]) <= 1e-6
    return tied


@pytest.mark.parametrize("make", CASES[:3])
def test_inverse_distance_equals_sklearn_distance_weights(make) -> None:  # type: ignore[no-untyped-def]
    # Reference: scikit-learn KNNImputer(weights="distance") weights donors by 1/d.
    frame = make()
    ref = KNNImputer(n_neighbors=4, weights="distance").fit_transform(frame.to_numpy())
    plan = FillPlan(k=4, scaling="none", neighbour_weighting="inverse_distance", no_donor="column_mean")
    result = impute(frame, plan)
    np.testing.assert_allclose(result.frame.to_numpy(), ref, rtol=0, atol=1e-9)


def test_zero_distance_donors_alone_count_as_sklearn() -> None:
    # Reference: scikit-learn KNNImputer(weights="distance") -> neighbors._base._get_weights:
    # when some donors are at distance 0, only they count (equally). Whole numbers keep
    # every distance exact.
    frame = pd.DataFrame({"a": [1.0, 1.0, 1.0, 4.0, 6.0], "t": [np.nan, 10.0, 20.0, 40.0, 60.0]})
    ref = KNNImputer(n_neighbors=4, weights="distance").fit_transform(frame.to_numpy())
    result = impute(frame, FillPlan(k=4, scaling="none", neighbour_weighting="inverse_distance"))
    assert result.frame.loc[0, "t"] == pytest.approx(15.0)
    assert result.frame.loc[0, "t"] == pytest.approx(ref[0, 1])


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_k_equal_to_donor_count_gives_column_mean(seed: int) -> None:
    # Common practice, no source: with k = number of donors every donor is used, so the
    # fill is the mean of the column's observed values.
    frame = random_frame(30, 4, 0.0, seed=seed)
    frame.loc[[3, 17], "c2"] = np.nan
    donors = int(frame["c2"].notna().sum())
    result = impute(frame, FillPlan(k=donors))
    mean = frame["c2"].mean()
    assert result.frame.loc[[3, 17], "c2"].tolist() == pytest.approx([mean, mean], rel=1e-12)


def test_k_equal_to_donor_count_gives_majority_class() -> None:
    # Common practice, no source: with k = number of donors the vote is the majority class.
    rng = np.random.default_rng(4)
    frame = pd.DataFrame(
        {
            "x": rng.normal(size=25),
            "y": rng.normal(size=25),
            "kind": list("aabbbbbccc" * 2 + "abcab"),
        }
    )
    frame.loc[[2, 9], "kind"] = None
    donors = int(frame["kind"].notna().sum())
    result = impute(frame, FillPlan(k=donors))
    majority = frame["kind"].value_counts().idxmax()
    assert result.frame.loc[[2, 9], "kind"].tolist() == [majority, majority]
    shares = result.log.set_index("row").loc[[2, 9], "spread"].tolist()
    assert shares == pytest.approx([frame["kind"].value_counts().max() / donors] * 2)
