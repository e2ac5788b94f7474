"""A fill re-combined from kept neighbour lists equals a fresh fill, to the last bit."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd
import pytest
from pandas.testing import assert_frame_equal
from sklearn.impute import KNNImputer

from imputer_app.engine import FillResult, NeighbourCache, _neighbours, impute, nearest_donors, prepare
from imputer_app.engine._distance import DistanceModel
from imputer_app.engine._search import ColumnDonors
from imputer_app.plan import FillPlan
from tests.engine.helpers import fake_sheet, random_frame


def assert_same(got: FillResult, want: FillResult) -> None:
    """Values, flags, fill log (donors, distances, intervals), empty cells and calibration all equal."""
    for name in ("frame", "filled", "censored", "log", "unfilled"):
        assert_frame_equal(getattr(got, name), getattr(want, name), check_exact=True, obj=name)
    assert got.plan == want.plan and got.warnings == want.warnings
    assert got.k_weak_threshold == want.k_weak_threshold or (
        math.isnan(got.k_weak_threshold) and math.isnan(want.k_weak_threshold)
    )
    assert (got.calibration is None) == (want.calibration is None)
    if got.calibration is not None and want.calibration is not None:
        assert got.calibration.to_dict() == want.calibration.to_dict()


def tied_frame() -> pd.DataFrame:
    """Whole numbers from a narrow range: many donors at exactly equal distances."""
    rng = np.random.default_rng(4)
    x = rng.integers(0, 4, size=(240, 4)).astype(float)
    x[rng.random(x.shape) < 0.15] = np.nan
    return pd.DataFrame(x, columns=["a", "b", "c", "d"])


def mixed_frame() -> pd.DataFrame:
    """Numbers, a category to fill and a group column."""
    rng = np.random.default_rng(5)
    frame = random_frame(240, 3, 0.15, seed=5)
    kind = rng.choice(np.array(["clay", "loam", "sand"], dtype=object), size=240)
    kind[rng.random(240) < 0.15] = None
    frame["kind"] = kind
    frame["site"] = rng.choice(np.array(["north", "south"], dtype=object), size=240)
    return frame


def censored_sheet() -> Any:
    """A sheet whose ``lead`` column has entries below its limit (a fill column, not a similarity one)."""
    frame = random_frame(200, 3, 0.12, seed=6)
    frame["lead"] = np.abs(frame["c0"].fillna(0.0)) + 0.5
    frame.loc[[3, 11, 40], "lead"] = np.nan
    frame.loc[[5, 17, 60, 90], "lead"] = np.nan
    cells = [(r, "lead", "<0.6", "<", 0.6) for r in (5, 17, 60, 90)]
    return fake_sheet(frame, cells)


#: Changes of the combining settings only: each must re-combine without a new search.
COMBINING = [
    {"k": 1},
    {"k": 2},
    {"k": 3, "neighbour_weighting": "inverse_distance"},
    {"k": 4, "numeric_rule": "median"},
    {"k": 7},
    {"k": 10, "neighbour_weighting": "inverse_distance"},
    {"k": 5, "interval_level": 0.8},
    {"k": 6, "interval_level": None},
    {"k": 5, "no_donor": "column_mean"},
]


@pytest.mark.parametrize("change", COMBINING)
@pytest.mark.parametrize("case", ["plain", "ties", "groups and categories"])
def test_recombined_fill_equals_a_fresh_fill(case: str, change: dict[str, Any]) -> None:
    if case == "plain":
        data, base = random_frame(200, 4, 0.15, seed=3), FillPlan(k=5)
    elif case == "ties":
        data, base = tied_frame(), FillPlan(k=5, scaling="none")
    else:
        data, base = mixed_frame(), FillPlan(k=5, group_column="site")
    cache = NeighbourCache()
    assert_same(cache.impute(data, base), impute(data, base))
    searched = cache.searches
    plan = base.replace(**change)
    assert_same(cache.impute(data, plan), impute(data, plan))
    assert cache.searches == searched  # re-combined, not searched again
    assert cache.reused > 0


@pytest.mark.parametrize(
    "change",
    [{"bounds": {"c1": (0.0, 0.5)}}, {"decimals": {"c1": 1, "c2": 0}}, {"k_by_column": {"c1": 2, "c2": 9}}],
)
def test_bounds_decimals_and_per_column_k_recombine(change: dict[str, Any]) -> None:
    data, base = random_frame(200, 4, 0.15, seed=7), FillPlan(k=5)
    cache = NeighbourCache()
    cache.impute(data, base)
    searched = cache.searches
    plan = base.replace(**change)
    assert_same(cache.impute(data, plan), impute(data, plan))
    assert cache.searches == searched


@pytest.mark.parametrize("method", ["half_limit", "limit", "limit_sqrt2", "ros"])
def test_a_censored_rule_outside_the_distance_recombines(method: str) -> None:
    # lead is filled but not compared on: its stand-in values never enter the distance
    sheet = censored_sheet()
    base = FillPlan(k=3, similarity_columns=("c0", "c1", "c2"), fill_columns=("c1", "lead"))
    cache = NeighbourCache()
    cache.impute(sheet, base.replace(censored="ros" if method != "ros" else "limit"))
    searched = cache.searches
    plan = base.replace(censored=method)
    assert_same(cache.impute(sheet, plan), impute(sheet, plan))
    assert cache.searches == searched


@pytest.mark.parametrize("method", ["fill_capped", "half_limit"])
def test_a_censored_rule_that_moves_rows_searches_again(method: str) -> None:
    # lead is a similarity column here: its stand-ins (or gaps, when censored cells are
    # filled) change the distances, so the kept lists do not serve
    sheet = censored_sheet()
    base = FillPlan(k=3)
    cache = NeighbourCache()
    cache.impute(sheet, base)
    searched = cache.searches
    plan = base.replace(censored=method)
    assert_same(cache.impute(sheet, plan), impute(sheet, plan))
    assert cache.searches > searched


@pytest.mark.parametrize(
    "change",
    [
        {"weights": {"c0": 2.0}},
        {"scaling": "range"},
        {"similarity_columns": ("c0", "c1", "c2")},
        {"group_column": "site"},
    ],
)
def test_a_change_of_who_is_near_searches_again(change: dict[str, Any]) -> None:
    data = random_frame(200, 4, 0.15, seed=8)
    data["site"] = np.where(np.arange(200) % 3 == 0, "a", "b")
    base = FillPlan(k=4, interval_level=None, similarity_columns=("c0", "c1", "c2", "c3"))
    cache = NeighbourCache()
    cache.impute(data, base)
    plan = base.replace(**change)
    assert_same(cache.impute(data, plan), impute(data, plan))
    assert cache.searches == 2


def test_a_k_beyond_the_kept_lists_searches_again() -> None:
    data, base = random_frame(150, 3, 0.2, seed=9), FillPlan(k=2, interval_level=None)
    cache = NeighbourCache(reach=4)
    cache.impute(data, base)
    cache.impute(data, base.replace(k=4))
    assert cache.searches == 1
    plan = base.replace(k=6)
    assert_same(cache.impute(data, plan), impute(data, plan))
    assert cache.searches == 2


def test_changed_data_searches_again() -> None:
    data, plan = random_frame(150, 3, 0.2, seed=10), FillPlan(k=3, interval_level=None)
    cache = NeighbourCache()
    cache.impute(data, plan)
    other = data.copy()
    other.iloc[0, 0] = 99.0
    assert_same(cache.impute(other, plan), impute(other, plan))
    assert cache.searches == 2


def test_lists_that_do_not_hold_the_ties_are_searched_again(monkeypatch: pytest.MonkeyPatch) -> None:
    data, base = tied_frame(), FillPlan(k=6, scaling="none", interval_level=None)
    cache = NeighbourCache()
    cache.impute(data, base)
    monkeypatch.setattr(_neighbours, "covers", lambda *_a: False)
    plan = base.replace(k=3)
    assert_same(cache.impute(data, plan), impute(data, plan))
    assert cache.searches == 2


def _donors(distance: list[list[float]], count: list[int]) -> ColumnDonors:
    d = np.asarray(distance, dtype=float)
    index = np.where(np.isfinite(d), np.arange(d.shape[1])[None, :], -1)
    return ColumnDonors(np.arange(len(d)), index.astype(np.intp), d, np.asarray(count, dtype=np.intp))


def test_covers_accepts_ties_inside_and_refuses_lists_out_of_order() -> None:
    # kmax = 3: the donors tied with the 2nd (distance 2) are all in the list
    tied = _donors([[1.0, 2.0, 2.0, 2.0, np.inf], [1.0, 1.5, 3.0, 4.0, 5.0]], [4, 5])
    assert _neighbours.covers(tied, 3, [1, 2, 3])
    assert not _neighbours.covers(tied, 3, [4])  # more places than were searched for
    # not sorted: a donor left out could tie with the 2nd
    muddled = _donors([[1.0, 3.0, 2.0]], [3])
    assert not _neighbours.covers(muddled, 3, [2])
    # fewer donors than kmax: the list holds them all
    assert _neighbours.covers(_donors([[1.0, np.inf, np.inf, np.inf]], [1]), 3, [1, 2, 3])


@pytest.mark.parametrize("weights", ["uniform", "distance"])
def test_recombined_values_match_scikit_learn(weights: str) -> None:
    # scikit-learn's KNNImputer (n_neighbors=k, weights=...) on numbers, no scaling, no groups
    x = random_frame(180, 4, 0.15, seed=11).to_numpy()
    frame = pd.DataFrame(x, columns=["a", "b", "c", "d"])
    rule = "inverse_distance" if weights == "distance" else "uniform"
    cache = NeighbourCache()
    plan = FillPlan(k=8, scaling="none", neighbour_weighting=rule, interval_level=None)
    cache.impute(frame, plan)
    for k in (1, 2, 3, 5, 8):
        got = cache.impute(frame, plan.replace(k=k)).frame.to_numpy()
        ref = KNNImputer(n_neighbors=k, weights=weights).fit_transform(x)
        # within 1e-9 (README.md): scikit-learn's distances come from products, Kinfill's from differences
        np.testing.assert_allclose(got, ref, rtol=0, atol=1e-9)
    assert cache.searches == 1


def test_kept_searches_give_way_past_the_byte_budget() -> None:
    data = random_frame(150, 3, 0.2, seed=12)
    cache = NeighbourCache(keep_bytes=1)  # nothing fits: only the fill under way is kept
    cache.impute(data, FillPlan(k=3, interval_level=None))
    cache.impute(data, FillPlan(k=3, interval_level=None, weights={"c0": 2.0}))
    assert len(cache._kept) == 1
    assert cache.searches == 2


@pytest.mark.parametrize("kmax", [2, 30])
def test_a_widened_search_keeps_to_the_group(kmax: int) -> None:
    # rows of equal x tie at distance 0, so the search widens; the widened lists must
    # still hold rows of the target's own group only (and never the row itself)
    frame = pd.DataFrame({"x": np.arange(60) % 2, "y": np.arange(60.0), "g": ["a"] * 6 + ["b"] * 54})
    frame.loc[[0, 7], "y"] = np.nan
    plan = FillPlan(group_column="g", similarity_columns=("x",), fill_columns=("y",))
    donors = nearest_donors(prepare(frame, plan), kmax=kmax)["y"]
    for row, index, count in zip(donors.rows, donors.index, donors.count, strict=True):
        same = (frame["g"] == frame["g"].iloc[row]).to_numpy() & frame["y"].notna().to_numpy()
        found = index[:count]
        assert same[found].all() and row not in found
        twins = np.flatnonzero(same & (frame["x"] == frame["x"].iloc[row]).to_numpy())
        assert set(twins) <= set(found)  # every donor tied at distance 0
        if kmax >= same.sum():
            assert count == same.sum()  # fewer donors than kmax: all of them


def test_an_exact_distance_does_not_depend_on_the_pairs_computed_with_it() -> None:
    # a BLAS product's rounding varies with the number of rows: the exact form must not
    frame = random_frame(300, 7, 0.2, seed=13)
    frame["kind"] = np.where(np.arange(300) % 3 == 0, "a", "b")
    model = DistanceModel(prepare(frame, FillPlan()).features)
    rng = np.random.default_rng(13)
    x, y = rng.integers(0, 300, 2000), rng.integers(0, 300, 2000)
    together = model.exact(x, y)
    for size in (1, 2, 3, 5, 33):
        apart = np.concatenate([model.exact(x[i : i + size], y[i : i + size]) for i in range(0, 2000, size)])
        np.testing.assert_array_equal(apart, together)
