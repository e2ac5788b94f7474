"""The donor search: order, ties, exclusions and the chunked paths agree."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import _nearest, nearest_donors, prepare
from imputer_app.engine._distance import DistanceModel, Features
from imputer_app.engine._nearest import top_l
from imputer_app.engine._pairwise import pairwise_distances
from imputer_app.engine._search import first_donors
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


def _brute(frame: pd.DataFrame, column: str, kmax: int) -> tuple[list[int], np.ndarray]:
    """Donors by sorting every row's distances (stable: ties by row order), the tie at kmax whole.

    Returns the targets and, per target, its ``kmax`` nearest followed by every further
    donor tied with the ``kmax``-th (padded with -1).
    """
    x = frame.to_numpy()
    return _brute_grouped(x, np.zeros(len(x)), list(frame.columns).index(column), kmax)


def _same_donors(found: np.ndarray, want: np.ndarray) -> None:
    """The search's lists hold the brute force's donors first (ties: all of them, by row)."""
    for got, row in zip(found.tolist(), want.tolist(), strict=True):
        n = sum(1 for r in row if r >= 0)
        assert got[:n] == row[:n]  # a few farther donors may follow


@pytest.mark.parametrize("budget", [2**12, 2**16, 64 * 2**20])
@pytest.mark.parametrize(("gap", "seed"), [(0.1, 0), (0.5, 1), (0.85, 2)])
def test_matches_brute_force_for_any_chunking(budget: int, gap: float, seed: int) -> None:
    # Common practice, no source: the k nearest by a full stable sort. Small budgets force
    # many chunks and tiles; a high gap share sends columns to the per-column search.
    # whole numbers make many exact ties (and keep every product exact)
    frame = (random_frame(120, 5, gap, seed=seed) * 3).round()
    table = prepare(frame, FillPlan(scaling="none"))
    found = nearest_donors(table, kmax=6, budget=budget)
    for col in table.fill_columns:
        rows, index = _brute(frame, col, 6)
        assert found[col].rows.tolist() == rows
        _same_donors(found[col].index, index)
        assert (found[col].count >= (index >= 0).sum(axis=1)).all()


def test_every_donor_tied_with_the_kth_is_found() -> None:
    # Kinfill's tie rule (README "How the numbers are made"): all donors tied with the k-th
    # are kept, listed by row among equals, so that they can share the last places.
    frame = pd.DataFrame({"a": [0.0, 1.0, -1.0, 1.0, -1.0, 5.0], "t": [np.nan, 4.0, 3.0, 2.0, 1.0, 0.0]})
    found = nearest_donors(prepare(frame, FillPlan(scaling="none")), kmax=1)["t"]
    assert found.index[0].tolist()[:4] == [1, 2, 3, 4] and found.count[0] >= 4
    assert found.distance[0].tolist()[:4] == [np.sqrt(2.0)] * 4  # Dixon: 1^2 x (2 columns / 1 shared)


def test_a_row_is_never_its_own_donor() -> None:
    # Asking for donors of observed cells (as the recovery test may) must skip the row itself.
    frame = random_frame(20, 3, 0.0, seed=3)
    table = prepare(frame, FillPlan(fill_columns=("c0",)))
    found = nearest_donors(table, kmax=3, targets={"c0": np.ones(20, dtype=bool)})["c0"]
    assert (found.index != found.rows[:, None]).all()
    assert (found.count >= 3).all()


def test_group_column_restricts_donors() -> None:
    frame = pd.DataFrame(
        {
            "site": ["A", "A", "A", "B", "B", "B", None],
            "x": [0.0, 0.1, 5.0, 0.05, 0.2, 0.3, 0.0],
            "t": [np.nan, 1.0, 2.0, 10.0, np.nan, 30.0, 7.0],
        }
    )
    table = prepare(frame, FillPlan(scaling="none", group_column="site"))
    assert table.similarity_columns == ("x", "t")
    found = nearest_donors(table, kmax=5)["t"]
    assert found.index[0].tolist()[:2] == [1, 2] and found.count[0] == 2  # only site A
    assert found.index[1].tolist()[:2] == [5, 3] and found.count[1] == 2  # only site B; row 6 has no group


def test_kmax_larger_than_donors_pads() -> None:
    frame = pd.DataFrame({"x": [0.0, 1.0, 2.0], "t": [np.nan, 1.0, 2.0]})
    found = nearest_donors(prepare(frame, FillPlan()), kmax=5)["t"]
    assert found.count.tolist() == [2]
    assert found.index[0].tolist()[:5] == [1, 2, -1, -1, -1]
    assert np.isinf(found.distance[0, 2:]).all()


def test_rows_sharing_no_column_are_not_donors() -> None:
    # Dixon 1979: no shared coordinate, no distance, so no donor.
    frame = pd.DataFrame({"x": [1.0, np.nan, 2.0], "y": [np.nan, 3.0, np.nan], "t": [np.nan, 5.0, 6.0]})
    table = prepare(frame, FillPlan(scaling="none", similarity_columns=("x", "y"), fill_columns=("t",)))
    found = nearest_donors(table, kmax=3)["t"]
    assert found.index[0].tolist()[:3] == [2, -1, -1]


@pytest.mark.parametrize("size", [1, 3, 7, 20])
def test_top_l_is_exact_value_then_position_order(size: int) -> None:
    rng = np.random.default_rng(size)
    block = rng.integers(0, 4, size=(30, 15)).astype(float)
    block[rng.random(block.shape) < 0.2] = np.inf
    idx, val = top_l(block, size)
    want = np.argsort(block, axis=1, kind="stable")[:, :size]
    np.testing.assert_array_equal(idx, want)
    np.testing.assert_array_equal(val, np.take_along_axis(block, want, axis=1))


def test_progress_and_cancel() -> None:
    from imputer_app.errors import Cancelled

    table = prepare(random_frame(300, 4, 0.3, seed=9), FillPlan())
    calls: list[tuple[int, int]] = []
    nearest_donors(table, kmax=3, progress=lambda d, t: calls.append((d, t)), budget=2**14)
    assert len(calls) > 3 and calls[-1][0] == calls[-1][1]
    assert all(d <= t for d, t in calls)
    with pytest.raises(Cancelled):
        nearest_donors(table, kmax=3, cancel=lambda: True)
    seen = []

    def cancel_later() -> bool:
        seen.append(1)
        return len(seen) > 3

    with pytest.raises(Cancelled):
        nearest_donors(table, kmax=3, cancel=cancel_later, budget=2**14)


def _brute_grouped(x: np.ndarray, groups: np.ndarray, j: int, kmax: int) -> tuple[list[int], np.ndarray]:
    """:func:`_brute` within groups (whole numbers: distances are exact, ties exactly equal)."""
    d = pairwise_distances(x)
    targets = np.flatnonzero(np.isnan(x[:, j]))
    out = np.full((len(targets), len(x)), -1)
    for t, row in enumerate(targets):
        ok = ~np.isnan(x[:, j]) & ~np.isnan(d[row]) & (groups == groups[row])
        ok[row] = False
        cand = np.flatnonzero(ok)
        order = cand[np.argsort(d[row, cand], kind="stable")]
        if len(order) > kmax:
            order = order[d[row, order] <= d[row, order[kmax - 1]]]
        out[t, : len(order)] = order
    return targets.tolist(), out[:, : max(int((out >= 0).sum(axis=1).max(initial=0)), kmax)]


@pytest.mark.parametrize("budget", [2**16, 2**20])
def test_tiles_beyond_the_first_block_match_brute_force(budget: int) -> None:
    # Common practice, no source: the k nearest by a full stable sort. 2,600 rows run past
    # the first exactly-searched block, so candidates are gathered under a bound; whole
    # numbers make ties; a late group has no member in the first block.
    rng = np.random.default_rng(31)
    x = rng.integers(0, 6, size=(2600, 3)).astype(float)
    x[rng.random(x.shape) < 0.2] = np.nan
    groups = np.where(np.arange(2600) >= 2300, "late", "early")
    frame = pd.DataFrame(x, columns=["a", "b", "c"]).assign(g=groups)
    table = prepare(frame, FillPlan(scaling="none", group_column="g"))
    found = nearest_donors(table, kmax=4, budget=budget)
    for j, col in enumerate(["a", "b", "c"]):
        rows, index = _brute_grouped(x, groups, j, 4)
        assert found[col].rows.tolist() == rows
        _same_donors(found[col].index, index)


@pytest.mark.parametrize("kmax", [1, 5, 30])
def test_growing_tiles_match_brute_force(monkeypatch: pytest.MonkeyPatch, kmax: int) -> None:
    # Common practice, no source: the k nearest by a full stable sort. A tiny head and
    # small first steps make the bound search run through many growing tiles (and reach
    # rows whose list is not yet full) on a table small enough for brute force; whole
    # numbers make many exact ties, listed by row among equals whatever kmax is.
    monkeypatch.setattr(_nearest, "HEAD", 32)
    monkeypatch.setattr(_nearest, "STEP_MIN", 8)
    rng = np.random.default_rng(kmax)
    x = rng.integers(0, 4, size=(400, 4)).astype(float)
    x[rng.random(x.shape) < 0.25] = np.nan
    frame = pd.DataFrame(x, columns=["a", "b", "c", "d"])
    table = prepare(frame, FillPlan(scaling="none"))
    found = nearest_donors(table, kmax=kmax, budget=2**16)
    for col in table.fill_columns:
        rows, index = _brute(frame, col, kmax)
        assert found[col].rows.tolist() == rows
        _same_donors(found[col].index, index)


def test_one_search_up_to_30_starts_with_the_search_for_5() -> None:
    # The recovery test searches once with kmax = max(ks) and reads every k from the prefix:
    # the first 5 donors of a kmax=30 search must be the kmax=5 search's, ties included
    # (common practice, no source).
    frame = (random_frame(3000, 4, 0.2, seed=11) * 2).round()
    table = prepare(frame, FillPlan(scaling="none"))
    short, long = nearest_donors(table, kmax=5), nearest_donors(table, kmax=30)
    for col in table.fill_columns:
        np.testing.assert_array_equal(long[col].index[:, :5], short[col].index[:, :5])
        np.testing.assert_array_equal(long[col].distance[:, :5], short[col].distance[:, :5])
        assert set(np.minimum(long[col].count, 30).tolist()) == {0, 30}  # 0: no similarity value


@pytest.mark.parametrize("whole", [True, False])
def test_pair_distances_equal_the_block(whole: bool) -> None:
    # The search reads gathered candidates' distances pair by pair and the head's from a
    # matrix-product block; both compute Dixon's (1979) weighted distance, so they agree
    # (exactly for whole numbers and weights that are powers of two, so ties stay ties;
    # otherwise up to rounding). Rows sharing no column have none (inf).
    rng = np.random.default_rng(4)
    x = rng.normal(size=(200, 5)) * 3
    x = x.round() if whole else x
    x[rng.random(x.shape) < 0.35] = np.nan
    codes = rng.integers(-1, 3, size=(200, 2))
    weights = np.array([1.0, 2.0, 0.5, 1.0, 4.0])
    code_weights = np.array([1.0, 0.25])
    total = float(weights.sum() + code_weights.sum())
    model = DistanceModel(Features(x, weights, codes, code_weights, total))
    targets = model.targets(np.arange(0, 200, 3))
    block = model.block(targets, model.candidates())
    which = np.repeat(np.arange(len(targets.rows)), 200)
    others = np.tile(np.arange(200), len(targets.rows))
    pairs = model.pairs(targets, which, others).reshape(block.shape)
    np.testing.assert_array_equal(np.isinf(pairs), np.isinf(block))
    assert np.isinf(pairs).any()  # the gap share leaves some rows with no shared column
    if whole:
        np.testing.assert_array_equal(pairs, block)
    else:
        finite = np.isfinite(block)
        np.testing.assert_allclose(pairs[finite], block[finite], rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize(("kmax", "share"), [(1, 0.95), (5, 0.95), (5, 0.4), (12, 0.9)])
def test_first_donors_equal_a_plain_scan(kmax: int, share: float) -> None:
    # Common practice, no source: walk each cell's list nearest first and keep the donors.
    # Most cells' first kmax candidates are all donors (the quick way); the others, the
    # lists padded with inf, and kmax longer than the list take the sort.
    rng = np.random.default_rng(kmax)
    cand = rng.integers(0, 500, size=(400, 10))
    d2 = np.sort(rng.random((400, 10)), axis=1)
    d2[:40, 7:] = np.inf
    cand[:40, 7:] = -1
    ok = rng.random((400, 10)) < share
    idx, dist, short = first_donors(cand, d2, ok, kmax)
    for i in range(400):
        keep = [t for t in range(10) if ok[i, t] and np.isfinite(d2[i, t])][:kmax]
        want_idx = cand[i, keep].tolist() + [-1] * (kmax - len(keep))
        want_d2 = d2[i, keep].tolist() + [np.inf] * (kmax - len(keep))
        assert idx[i].tolist() == want_idx and dist[i].tolist() == want_d2
        assert short[i] == (len(keep) < kmax and np.isfinite(d2[i, -1]))
