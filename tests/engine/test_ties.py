"""Ties, exact zero distances and rows that share nothing: the fill does not depend on row order."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_iris
from sklearn.impute import KNNImputer
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import impute, nearest_donors, prepare
from imputer_app.plan import FillPlan

nan = np.nan


def _shuffled_fill(frame: pd.DataFrame, plan: FillPlan, seed: int) -> pd.DataFrame:
    """The fill of ``frame`` with its rows shuffled, put back in the original order."""
    order = np.random.default_rng(seed).permutation(len(frame))
    return impute(frame.iloc[order], plan).frame.loc[frame.index]


def _assert_same_fill(a: pd.DataFrame, b: pd.DataFrame) -> None:
    for col in a.columns:
        if pd.api.types.is_numeric_dtype(a[col].dtype):
            np.testing.assert_allclose(a[col].to_numpy(float), b[col].to_numpy(float), rtol=0, atol=1e-9)
        else:
            assert a[col].tolist() == b[col].tolist()


def test_site_reproduction_takes_every_tied_donor() -> None:
    # Kinfill's tie rule (README "How the numbers are made"): row 0 has only its site ("a")
    # among the similarity columns, so it is at distance 0 from rows 1-5 (the other site-a
    # rows) and farther from rows 6-7 (a mismatch). With k=2 the five donors tied at the 2nd
    # distance share the 2 places (2/5 each): x = mean(1..5) = 3.0, y = mean(0,1,0,1,0) = 0.4,
    # in any row order (before, the first two rows in the sheet won: 1.5 or 4.5).
    f = pd.DataFrame(
        {"site": list("aaaaaabb"), "x": [nan, 1, 2, 3, 4, 5, 9, 8], "y": [nan, 0, 1, 0, 1, 0, 1, 0]}
    )
    for frame in (f, f.iloc[::-1], f.iloc[[3, 0, 7, 5, 1, 6, 2, 4]]):
        result = impute(frame, FillPlan(k=2))
        assert result.frame.loc[0, "x"] == pytest.approx(3.0, abs=1e-12)
        assert result.frame.loc[0, "y"] == pytest.approx(0.4, abs=1e-12)
        row = result.log[(result.log["row"] == 0) & (result.log["column"] == "x")].iloc[0]
        assert sorted(row["donors"]) == [1, 2, 3, 4, 5] and row["distances"] == (0.0,) * 5
        assert (
            row["k"] == 2
            and "5 donors tied at the 2nd distance share 2 places (weight 0.4 each)" in row["note"]
        )


def _many_ties(seed: int) -> pd.DataFrame:
    """Whole numbers in 0..3, every row repeated once or twice, a category column, gaps."""
    rng = np.random.default_rng(seed)
    base = rng.integers(0, 4, size=(40, 4)).astype(float)
    x = np.vstack([base, base[:25], base[:10]])
    x[rng.random(x.shape) < 0.2] = nan
    frame = pd.DataFrame(x, columns=["a", "b", "c", "d"])
    frame["kind"] = np.where(np.nan_to_num(x[:, 0]) + np.nan_to_num(x[:, 1]) > 3, "high", "low")
    frame.loc[rng.random(len(frame)) < 0.2, "kind"] = None
    return frame


@pytest.mark.parametrize("k", [1, 2, 5])
@pytest.mark.parametrize(
    "plan",
    [
        FillPlan(scaling="none"),
        FillPlan(scaling="zscore", numeric_rule="median"),
        FillPlan(scaling="range", neighbour_weighting="inverse_distance"),
        FillPlan(scaling="robust", no_donor="column_mean"),
    ],
    ids=["mean", "median", "inverse-distance", "robust"],
)
def test_shuffling_rows_leaves_every_fill_unchanged(plan: FillPlan, k: int) -> None:
    # Kinfill's tie rule: on data full of ties (whole numbers, repeated rows, a category
    # column voted on) any row order gives the same filled values (1e-9) and classes.
    frame = _many_ties(k)
    plan = plan.replace(k=k)
    first = impute(frame, plan).frame
    for seed in (1, 2, 3):
        _assert_same_fill(first, _shuffled_fill(frame, plan, seed))


def _iris_with_gaps(fraction: float, seed: int) -> pd.DataFrame:
    """Iris (Fisher 1936, shipped in scikit-learn) with MCAR gaps."""
    x = load_iris().data.copy()
    rng = np.random.default_rng(seed)
    x[rng.random(x.shape) < fraction] = nan
    return pd.DataFrame(x, columns=["sepal_length", "sepal_width", "petal_length", "petal_width"])


def test_iris_k1_untied_cells_equal_sklearn_and_tied_cells_take_the_tied_mean() -> None:
    # Reference: scikit-learn KNNImputer(n_neighbors=1) and nan_euclidean_distances on iris
    # (Fisher 1936, shipped in scikit-learn) with 20 % gaps. Where the nearest donor is not
    # tied, the fill equals KNNImputer within 1e-9; where several donors tie for nearest
    # (equal in exact arithmetic: within 1e-6 after nan_euclidean's rounding), the fill is
    # their mean (Kinfill's tie rule), which KNNImputer does not promise (it picks one).
    frame = _iris_with_gaps(0.2, seed=0)
    x = frame.to_numpy()
    ref = KNNImputer(n_neighbors=1).fit_transform(x)
    result = impute(frame, FillPlan(k=1, scaling="none", no_donor="column_mean"))
    got = result.frame.to_numpy()
    dist = nan_euclidean_distances(x)
    tied_cells = untied_cells = 0
    for i, j in zip(*np.nonzero(np.isnan(x)), strict=True):
        donors = np.flatnonzero(~np.isnan(x[:, j]) & ~np.isnan(dist[i]))
        donors = donors[donors != i]
        d = dist[i, donors]
        nearest = donors[np.abs(d - d.min()) <= 1e-6]
        if len(nearest) == 1:
            untied_cells += 1
            assert got[i, j] == pytest.approx(ref[i, j], abs=1e-9)
        else:
            tied_cells += 1
            assert got[i, j] == pytest.approx(x[nearest, j].mean(), abs=1e-9)
    assert tied_cells >= 10 and untied_cells >= 50
    for seed in (4, 5):
        _assert_same_fill(result.frame, _shuffled_fill(frame, FillPlan(k=1, scaling="none"), seed))


def test_a_tie_wider_than_the_search_list_is_found() -> None:
    # Kinfill's tie rule: 60 rows equal to each other tie with the k-th donor; the search
    # keeps only a few beyond k at first and must widen until it has all of them.
    rng = np.random.default_rng(7)
    x = np.vstack([np.tile([1.0, 2.0, 3.0], (60, 1)), rng.normal(size=(300, 3)) * 5])
    t = np.concatenate([np.arange(60.0), rng.normal(size=300)])
    frame = pd.DataFrame(np.column_stack([x, t]), columns=["a", "b", "c", "t"])
    frame.loc[[0, 200], "t"] = nan
    result = impute(frame, FillPlan(k=3, scaling="none", fill_columns=("t",)))
    assert result.frame.loc[0, "t"] == pytest.approx(np.arange(1.0, 60.0).mean(), abs=1e-9)
    row = result.log[result.log["row"] == 0].iloc[0]
    assert sorted(row["donors"]) == list(range(1, 60))
    _assert_same_fill(
        result.frame, _shuffled_fill(frame, FillPlan(k=3, scaling="none", fill_columns=("t",)), 3)
    )


def test_exact_zero_distances_with_decimals_as_sklearn() -> None:
    # Reference: scikit-learn KNNImputer(n_neighbors=4, weights="distance"), run here: all
    # four donors of row 0, column a are at distance 0 in exact arithmetic (rows 1-4 share
    # b = 3.4, or c = 1.6 and d = 0.2, with row 0), so only they count, equally: 5.375.
    # The matrix-product form left 5.96e-08 on one of them (5.4667 before); Kinfill
    # recomputes the chosen donors' distances from differences (Dixon 1979) and logs 0.
    f = pd.DataFrame(
        [
            [nan, 3.4, 1.6, 0.2], [5.0, 3.4, nan, nan], [5.1, 3.4, nan, 0.2], [6.3, 3.4, nan, nan],
            [5.1, nan, 1.6, 0.2], [7.7, 2.6, 6.9, 2.3], [6.1, 3.0, 4.9, 1.8],
        ],
        columns=list("abcd"),
    )  # fmt: skip
    ref = KNNImputer(n_neighbors=4, weights="distance").fit_transform(f.to_numpy())
    assert ref[0, 0] == pytest.approx(5.375, abs=1e-12)
    result = impute(f, FillPlan(k=4, scaling="none", neighbour_weighting="inverse_distance"))
    assert result.frame.loc[0, "a"] == pytest.approx(5.375, abs=1e-12)
    row = result.log[(result.log["row"] == 0) & (result.log["column"] == "a")].iloc[0]
    assert row["distances"] == (0.0, 0.0, 0.0, 0.0)
    assert sorted(row["donors"]) == [1, 2, 3, 4]
    # elsewhere scikit-learn's own rounding near 0 (distances ~1e-8, weights ~1e8) moves its
    # values by up to 5e-7, so only this cell is compared


@pytest.mark.parametrize("offset", [0.0, 1000.0])
def test_duplicated_decimal_rows_are_at_distance_exactly_zero(offset: float) -> None:
    # Dixon 1979: equal rows are at distance 0. Decimal values far from 0 (offset) make the
    # product form's rounding largest; the logged distance is still exactly 0.
    rng = np.random.default_rng(3)
    x = rng.normal(size=(30, 4)).round(3) + offset
    x = np.vstack([x, x[:5]])
    x[30:35, 3] = nan
    frame = pd.DataFrame(x, columns=list("abcd"))
    result = impute(frame, FillPlan(k=1, scaling="none", fill_columns=("d",)))
    for i in range(5):
        row = result.log[result.log["row"] == 30 + i].iloc[0]
        assert row["donors"] == (i,) and row["distances"] == (0.0,)
        assert result.frame.loc[30 + i, "d"] == x[i, 3]


def test_rows_sharing_nothing_are_never_donors_as_sklearn_nan() -> None:
    # Reference: scikit-learn nan_euclidean_distances gives NaN for two rows with no column
    # measured in common; Kinfill never takes such a row as a donor.
    rng = np.random.default_rng(12)
    x = rng.normal(size=(60, 4))
    x[rng.random(x.shape) < 0.6] = nan
    frame = pd.DataFrame(x, columns=list("abcd"))
    table = prepare(frame, FillPlan(scaling="none"))
    dist = nan_euclidean_distances(x)
    found = nearest_donors(table, kmax=3)
    pairs = 0
    for donors in found.values():
        for row, index in zip(donors.rows.tolist(), donors.index.tolist(), strict=True):
            for donor in (d for d in index if d >= 0):
                assert np.isfinite(dist[row, donor])
                pairs += 1
    assert pairs > 50 and np.isnan(dist).sum() > 100


@pytest.mark.parametrize("no_donor", ["leave_empty", "column_mean"])
def test_a_row_without_similarity_values_gets_no_knn_donor(no_donor: str) -> None:
    # A row with no measured similarity value shares no column with any row
    # (scikit-learn's nan_euclidean_distances: NaN to every row): no kNN donor, so it is
    # left empty with that reason or takes the plan's no-donor rule, never "ok" support.
    frame = pd.DataFrame({"a": [nan, 1.0, 2.0, 3.0], "b": [nan, 1.0, 2.5, 2.0], "t": [nan, 10.0, 20.0, 30.0]})
    assert np.isnan(nan_euclidean_distances(frame[["a", "b"]].to_numpy())[0, 1:]).all()
    plan = FillPlan(k=2, similarity_columns=("a", "b"), fill_columns=("t",), no_donor=no_donor)
    result = impute(frame, plan)
    if no_donor == "leave_empty":
        assert result.unfilled["reason"].tolist() == ["every similarity column is empty in this row"]
        assert np.isnan(result.frame.loc[0, "t"])
    else:
        row = result.log[result.log["row"] == 0].iloc[0]
        assert row["method"] == "column_mean" and row["donors"] == () and row["support"] != "ok"
        assert row["value"] == pytest.approx(20.0)
        assert "every similarity column is empty in this row" in row["note"]
