"""Combining donors: every k from one search, votes, bounds, rounding and caps."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import ColumnDonors, combine, nearest_donors, prepare
from imputer_app.engine._combine import Finish, donor_values, mean_values, median_values, vote
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


def _donors(seed: int, m: int = 40, kmax: int = 8, n: int = 50) -> ColumnDonors:
    rng = np.random.default_rng(seed)
    count = rng.integers(0, kmax + 1, size=m)
    index = np.array([rng.permutation(n)[:kmax] for _ in range(m)])
    distance = np.sort(rng.random((m, kmax)) * 3, axis=1)
    distance[rng.random((m, kmax)) < 0.1] = 0.0
    distance = np.sort(distance, axis=1)
    pad = np.arange(kmax)[None, :] >= count[:, None]
    return ColumnDonors(np.arange(m), np.where(pad, -1, index), np.where(pad, np.inf, distance), count)


def _direct_weights(d: np.ndarray, k: int) -> np.ndarray:
    """The tie rule cell by cell: 1 nearer than the k-th distance, the places left shared by the tied."""
    used = min(k, len(d))
    dk = d[used - 1] ** 2
    slack = dk * 1e-9 + 1e-12
    near = d**2 < dk - slack
    tied = ~near & (d**2 <= dk + slack)
    return np.where(near, 1.0, np.where(tied, (used - near.sum()) / tied.sum(), 0.0))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_every_k_equals_the_tie_rule_cell_by_cell(seed: int) -> None:
    # Common practice, no source: mean, median and 1/d-weighted mean of the k nearest donors;
    # when some are at distance 0 only they count (as scikit-learn KNNImputer(weights="distance")).
    # Kinfill's tie rule (README "How the numbers are made"): donors tied with the k-th share
    # the places left; the random distances below hold many exact zeros, so many ties.
    found = _donors(seed)
    values = np.random.default_rng(seed + 10).normal(size=50)
    ks = [1, 2, 3, 5, 8, 12]
    v = donor_values(values, found)
    uniform = mean_values(v, found, ks, inverse_distance=False)
    weighted = mean_values(v, found, ks, inverse_distance=True)
    median = median_values(v, found, ks)
    for k in ks:
        for i in range(len(found.rows)):
            count = found.count[i]
            if count == 0:
                assert np.isnan(uniform[k][i]) and np.isnan(weighted[k][i]) and np.isnan(median[k][i])
                continue
            vals = values[found.index[i, :count]]
            d = found.distance[i, :count]
            share = _direct_weights(d, k)
            assert share.sum() == pytest.approx(min(k, count))
            w = share * (d == 0) if (d[share > 0] == 0).any() else share / np.where(d > 0, d, 1.0)
            assert uniform[k][i] == pytest.approx((share * vals).sum() / share.sum(), rel=1e-12)
            assert weighted[k][i] == pytest.approx((w * vals).sum() / w.sum(), rel=1e-12)
            if np.all((share == 0) | (share == 1)):  # untied: the plain median
                assert median[k][i] == pytest.approx(np.median(vals[share > 0]), rel=1e-12)


def test_tied_donors_share_the_last_places() -> None:
    # Kinfill's tie rule: k=2, one donor nearer and three tied at the 2nd distance -> weights
    # 1, 1/3, 1/3, 1/3 (mean); weighted median and weighted vote count the same shares.
    index = np.array([[0, 1, 2, 3, 4]])
    distance = np.array([[0.5, 1.0, 1.0, 1.0, 2.0]])
    found = ColumnDonors(np.array([9]), index, distance, np.array([5]))
    values = np.array([10.0, 1.0, 4.0, 7.0, 100.0])
    v = donor_values(values, found)
    assert mean_values(v, found, [2], inverse_distance=False)[2][0] == pytest.approx((10 + 4) / 2)
    # inverse distance: weights 1/0.5 and (1/3)/1 each: (2 x 10 + (1 + 4 + 7) / 3) / (2 + 1)
    assert mean_values(v, found, [2], inverse_distance=True)[2][0] == pytest.approx((20 + 4) / 3)
    # weighted median of 1 (1/3), 4 (1/3), 7 (1/3), 10 (1): half of 2 is reached at 7 and passed at 10
    assert median_values(v, found, [2])[2][0] == pytest.approx(8.5)
    codes = np.array([0, 1, 1, 2, 2])  # class 0: 1; class 1: 2/3; class 2: 1/3
    assert vote(codes, found, [2])[2][0] == 0
    codes = np.array([2, 0, 0, 0, 1])  # class 2: 1 and class 0: 1 tied -> class 2 has the nearest donor
    assert vote(codes, found, [2])[2][0] == 2
    codes = np.array([1, 1, 0, 0, 1])  # k=1: all three tied... no: the nearest alone
    assert vote(codes, found, [1])[1][0] == 1
    tied = ColumnDonors(np.array([9]), index[:, :4], np.ones((1, 4)), np.array([4]))
    # k=2, four tied: classes 1, 1, 0, 0 -> 1 place each, same nearest distance -> smaller class
    assert vote(np.array([1, 1, 0, 0]), tied, [2])[2][0] == 0


def test_vote_majority_then_nearest_tied_class() -> None:
    # Common practice, no source: majority vote; a tie goes to the tied class whose donor is nearest.
    codes = np.array([0, 1, 1, 0, 2, 2])
    index = np.array([[4, 1, 2, 0, 3, -1], [0, 1, 2, 3, 5, 4]])
    distance = np.where(index >= 0, np.arange(1.0, 7.0)[None, :], np.inf)  # no two donors tie
    found = ColumnDonors(np.array([10, 11]), index, distance, np.array([5, 6]))
    got = vote(codes, found, [1, 2, 3, 4, 5, 6])
    # row 0 donors' classes: 2, 1, 1, 0, 0
    assert [got[k][0] for k in (1, 2, 3, 4, 5)] == [2, 2, 1, 1, 1]  # k=2: 2 vs 1 tied -> nearest (2)
    # row 1 donors' classes: 0, 1, 1, 0, 2, 2 -> k=4: 0 and 1 tied, 0 nearer; k=6: three-way tie
    assert [got[k][1] for k in (1, 2, 3, 4, 6)] == [0, 0, 1, 0, 0]


def test_no_donor_gives_nan_and_minus_one() -> None:
    found = ColumnDonors(np.array([0]), np.full((1, 3), -1), np.full((1, 3), np.inf), np.array([0]))
    assert np.isnan(mean_values(donor_values(np.ones(3), found), found, [2], inverse_distance=False)[2][0])
    assert vote(np.array([0, 1, 1]), found, [2])[2][0] == -1


NAN4 = np.full(4, np.nan)


@pytest.mark.parametrize(
    ("bounds", "decimals", "want"),
    [
        ((0.0, np.nan), -1, [0.0, 0.26, 3.14159, 12.5]),
        ((np.nan, 10.0), 1, [-0.4, 0.3, 3.1, 10.0]),
        ((0.0, 5.0), 0, [0.0, 0.0, 3.0, 5.0]),
    ],
)
def test_bounds_then_rounding(bounds, decimals, want) -> None:  # type: ignore[no-untyped-def]
    raw = np.array([-0.4, 0.26, 3.14159, 12.5])
    finish = Finish(np.full(4, bounds[0]), np.full(4, bounds[1]), NAN4, NAN4, np.full(4, decimals))
    assert finish.apply(raw).tolist() == pytest.approx(want)


def test_censored_caps_keep_the_value_on_its_side_and_win_over_bounds() -> None:
    raw = np.array([0.2, 0.01, 3000.0, 100.0])
    upper = np.array([0.05, 0.05, np.nan, np.nan])  # "<0.05"
    lower = np.array([np.nan, np.nan, np.nan, 2000.0])  # ">2000"
    finish = Finish(NAN4, np.full(4, 1000.0), lower, upper, np.full(4, -1))
    assert finish.apply(raw).tolist() == [0.05, 0.01, 1000.0, 2000.0]


def test_combine_serves_every_k_from_one_search() -> None:
    frame = random_frame(60, 4, 0.2, seed=21)
    table = prepare(frame, FillPlan(scaling="zscore"))
    found = nearest_donors(table, kmax=7)
    all_k = combine(table, found, [1, 3, 7])
    for k in (1, 3, 7):
        single = combine(table, nearest_donors(table, kmax=k), [k])[k]
        for col in table.fill_columns:
            np.testing.assert_allclose(all_k[k][col], single[col], rtol=1e-12)


def test_combine_categories_returns_codes() -> None:
    frame = pd.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1], "kind": ["a", "a", None, "b", "b"]})
    table = prepare(frame, FillPlan(scaling="none"))
    got = combine(table, nearest_donors(table, kmax=4), [2, 4])
    assert table.categories["kind"][got[2]["kind"]].tolist() == ["a"]
    assert got[4]["kind"].tolist() == [0]  # two a's nearest win the 2-2 tie
