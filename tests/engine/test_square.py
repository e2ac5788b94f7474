"""The symmetric block (targets and candidates the same rows) agrees with the row-by-row search."""

from __future__ import annotations

import threading

import numpy as np
import pandas as pd
import pytest
from sklearn.impute import KNNImputer
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import _distance, impute, nearest_donors, prepare
from imputer_app.engine._distance import DistanceModel, Features
from imputer_app.engine._nearest import BlockSearch
from imputer_app.engine._ties import shares
from imputer_app.errors import Cancelled
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


def _square(model: DistanceModel, rows: np.ndarray, parts: int = 2) -> np.ndarray:
    """Squared distances among ``rows`` by summing every slab's gram, as the search does."""
    total, shared = np.zeros((len(rows), len(rows))), np.zeros((len(rows), len(rows)))
    for cols, weight in model.slabs(parts):
        t, s = model.gram(rows, cols, weight)
        total += t
        shared += s
    return model.square(rows, total, shared)


def _features(x: np.ndarray, weights: np.ndarray, codes: np.ndarray, code_weights: np.ndarray) -> Features:
    return Features(x, weights, codes, code_weights, float(weights.sum() + code_weights.sum()))


def test_square_block_equals_sklearn_nan_euclidean(monkeypatch: pytest.MonkeyPatch) -> None:
    # scikit-learn nan_euclidean_distances is Dixon's (1979) distance with weights 1. Slabs
    # of 7 columns make the block a sum of many slabs, shared over two workers.
    monkeypatch.setattr(_distance, "SLAB", 7)
    rng = np.random.default_rng(5)
    x = rng.normal(size=(60, 40)) * 10 + 100  # far from 0: the shift keeps precision
    x[rng.random(x.shape) < 0.3] = np.nan
    model = DistanceModel(_features(x, np.ones(40), np.zeros((60, 0), dtype=np.intp), np.ones(0)))
    assert len(model.slabs(2)) % 2 == 0 and len(model.slabs(2)) >= 6
    got = np.sqrt(_square(model, np.arange(60)))
    want = nan_euclidean_distances(x)
    off = ~np.eye(60, dtype=bool)
    np.testing.assert_allclose(got[off], want[off], rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize("whole", [True, False])
@pytest.mark.parametrize("weights", [[1.0, 2.0, 0.5, 1.0, 4.0, 0.0], [1.0, 2.0, 0.5, 0.25, 4.0, 8.0]])
def test_square_block_equals_the_row_products(
    monkeypatch: pytest.MonkeyPatch, whole: bool, weights: list[float]
) -> None:
    # Both compute Dixon's (1979) weighted distance with Gower's (1971) rule for the two
    # categorical columns, so they agree: exactly for whole numbers and power-of-two
    # weights (ties stay ties), otherwise up to rounding. The second weight list has more
    # different weights than WEIGHT_GROUPS, so each column is weighted on its own; a
    # weight of 0 leaves a column out.
    monkeypatch.setattr(_distance, "SLAB", 2)
    rng = np.random.default_rng(6)
    x = rng.normal(size=(80, 6)) * 3
    x = x.round() if whole else x
    x[rng.random(x.shape) < 0.35] = np.nan
    codes = rng.integers(-1, 3, size=(80, 2))
    model = DistanceModel(_features(x, np.array(weights), codes, np.array([1.0, 0.25])))
    rows = np.arange(3, 80)  # not every row: the block is over a subset
    got = _square(model, rows)
    want = model.block(model.targets(rows), model.candidates(rows))
    if whole:
        np.testing.assert_array_equal(got, want)
    else:
        np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-12)
    np.testing.assert_array_equal(got, got.T)


def test_slabs_cover_each_weight_in_even_runs(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_distance, "SLAB", 4)
    weights = np.array([1.0] * 9 + [2.0] * 3 + [0.0] * 2)
    model = DistanceModel(_features(np.zeros((5, 14)), weights, np.zeros((5, 0), dtype=np.intp), np.ones(0)))
    slabs = model.slabs(2)
    ones = [cols for cols, w in slabs if w == 1.0]
    twos = [cols for cols, w in slabs if w == 2.0]
    assert len(ones) == 4 and sorted(np.concatenate(ones).tolist()) == list(range(9))
    assert max(map(len, ones)) - min(map(len, ones)) <= 1 and max(map(len, ones)) <= 4
    assert len(twos) == 2 and sorted(np.concatenate(twos).tolist()) == [9, 10, 11]
    assert all(w != 0.0 for _, w in slabs)  # weight 0 adds nothing: left out
    many = np.arange(1.0, 15.0)  # more different weights than WEIGHT_GROUPS: one group
    model = DistanceModel(_features(np.zeros((5, 14)), many, np.zeros((5, 0), dtype=np.intp), np.ones(0)))
    assert {w for _, w in model.slabs(2)} == {None}
    assert sorted(np.concatenate([c for c, _ in model.slabs(2)]).tolist()) == list(range(14))


def _row_path_only(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(BlockSearch, "squares", lambda self, rows, cand: False)


@pytest.mark.parametrize("seed", [0, 1])
def test_square_and_row_paths_find_the_same_donors(monkeypatch: pytest.MonkeyPatch, seed: int) -> None:
    # Common practice, no source: one search, two ways to the same distances. Whole
    # numbers make many exact ties, which both must list by row among equals; a group
    # column and a category take part.
    rng = np.random.default_rng(seed)
    frame = (random_frame(150, 8, 0.2, seed=seed) * 2).round()
    frame["kind"] = rng.choice(["a", "b", "c"], size=150)
    frame["site"] = rng.choice(["north", "south"], size=150)
    plan = FillPlan(scaling="none", group_column="site", weights={"c0": 2.0, "c1": 0.5})
    table = prepare(frame, plan)
    squared = nearest_donors(table, kmax=5)
    with monkeypatch.context() as m:
        _row_path_only(m)
        rowwise = nearest_donors(table, kmax=5)
    for col in table.fill_columns:
        # the donors that take part for k = 5 (ties included); a farther one kept past them may differ
        taken = shares(np.square(squared[col].distance), squared[col].count, 5)[1]
        for row, n in enumerate(taken.tolist()):
            assert squared[col].index[row, :n].tolist() == rowwise[col].index[row, :n].tolist()
            # equal up to rounding (recomputed exactly only near 0 and near a tie)
            np.testing.assert_allclose(
                squared[col].distance[row, :n], rowwise[col].distance[row, :n], rtol=1e-12
            )


def test_wide_table_takes_the_square_path_and_matches_knnimputer(monkeypatch: pytest.MonkeyPatch) -> None:
    # scikit-learn KNNImputer (default settings) is the reference for uniform k-NN means
    # with Dixon's distance. A wide table (every row a target) takes the symmetric block,
    # cut into slabs of 64 columns.
    monkeypatch.setattr(_distance, "SLAB", 64)
    calls: list[int] = []
    among = BlockSearch.among

    def spy(self: BlockSearch, rows: np.ndarray, *args: object, **kwargs: object) -> np.ndarray:
        calls.append(len(rows))
        return among(self, rows, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(BlockSearch, "among", spy)
    frame = random_frame(40, 600, 0.05, seed=8)
    got = impute(frame, FillPlan(k=5, scaling="none", interval_level=None)).frame.to_numpy()
    want = KNNImputer(n_neighbors=5).fit_transform(frame.to_numpy())
    assert calls == [40]
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-9)


def test_cancel_stops_the_square_block(monkeypatch: pytest.MonkeyPatch) -> None:
    # Cancel is checked before every slab, also on the worker threads.
    monkeypatch.setattr(_distance, "SLAB", 8)
    table = prepare(random_frame(60, 400, 0.05, seed=2), FillPlan())
    checks: list[int] = []

    def cancel_later() -> bool:
        checks.append(1)
        return len(checks) > 6

    with pytest.raises(Cancelled):
        nearest_donors(table, kmax=3, cancel=cancel_later)
    assert len(checks) < 20  # stopped soon after, not at the end of 50 slabs


def test_square_path_is_used_only_when_it_pays() -> None:
    # Few targets among many candidates: the row-by-row products cost less.
    table = prepare(random_frame(50, 3, 0.0, seed=1), FillPlan())
    search = BlockSearch(DistanceModel(table.features), None, 2**26)
    everyone = np.arange(50)
    assert search.squares(everyone, everyone)
    assert not search.squares(everyone[:5], everyone)
    assert not BlockSearch(search.model, None, 2**12).squares(everyone, everyone)  # over budget


def test_square_path_leaves_the_input_frame_unchanged() -> None:
    # The input frame is never modified, also on the square path.
    frame = random_frame(30, 200, 0.05, seed=4)
    before = frame.copy()
    impute(frame, FillPlan(k=3))
    pd.testing.assert_frame_equal(frame, before)


def test_progress_counts_every_slab_of_the_square_block(monkeypatch: pytest.MonkeyPatch) -> None:
    # Each slab the workers sum is reported as it finishes. Counted, not timed: every slab
    # after the first is held until a report has arrived, so the first report must say
    # exactly one slab is done while the other 249 are still to be summed. The count
    # never goes back and ends at its total, which counts the 250 slabs.
    from imputer_app.engine import _nearest

    monkeypatch.setattr(_distance, "SLAB", 8)
    monkeypatch.setattr(_nearest, "PROGRESS_SECONDS", 0.001)  # only makes the test quick
    table = prepare(random_frame(60, 2000, 0.05, seed=3), FillPlan())
    reported = threading.Event()
    started: list[int] = []
    released: list[bool] = []
    gram = DistanceModel.gram

    def held(self: DistanceModel, rows: np.ndarray, cols: np.ndarray, weight: float | None) -> tuple:
        started.append(1)
        if len(started) > 1:  # after one wait in vain, the others would be in vain too
            released.append(reported.wait(timeout=10 if all(released) else 0))
        return gram(self, rows, cols, weight)

    calls: list[tuple[int, int]] = []

    def progress(done: int, total: int) -> None:
        calls.append((done, total))
        if done:
            reported.set()

    monkeypatch.setattr(DistanceModel, "gram", held)
    nearest_donors(table, kmax=3, progress=progress)
    done = [d for d, _ in calls]
    assert len(started) == 250 and released == [True] * 249
    assert next(d for d in done if d) == 1
    assert len({t for _, t in calls}) == 1 and calls[0][1] >= 250
    assert done == sorted(done) and done[-1] == calls[0][1]
