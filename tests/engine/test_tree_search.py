"""The k-d tree path gives the block search's donors, distances and fills."""

from __future__ import annotations

import threading

import numpy as np
import pandas as pd
import pytest
from sklearn.impute import KNNImputer

from imputer_app.engine import (
    _block_jobs,
    _nearest,
    _patterns,
    _row_pairs,
    _tree_search,
    combine,
    impute,
    nearest_donors,
    prepare,
)
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._ties import shares
from imputer_app.errors import Cancelled
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


def _taking_part(found: ColumnDonors, k: int) -> list[dict[int, tuple[float, float]]]:
    """Per target: every donor with a share in a k-fill, with its share and distance."""
    weights, taken = shares(found.distance**2, found.count, k)
    return [
        {
            int(d): (float(w), float(x))
            for d, w, x in zip(found.index[i, :n], weights[i, :n], found.distance[i, :n], strict=True)
        }
        for i, n in enumerate(taken.tolist())
    ]


def _same(block: ColumnDonors, tree: ColumnDonors, k: int) -> None:
    assert block.path == "block"
    assert tree.path == "tree"
    np.testing.assert_array_equal(block.rows, tree.rows)
    for a, b in zip(_taking_part(block, k), _taking_part(tree, k), strict=True):
        assert a.keys() == b.keys()
        for donor, (share, dist) in a.items():
            assert b[donor][0] == pytest.approx(share, rel=1e-12)
            assert b[donor][1] == pytest.approx(dist, rel=1e-9, abs=1e-12)


def _both(frame: pd.DataFrame, plan: FillPlan, kmax: int, **kw: object) -> None:
    """Run both paths on ``frame`` and compare donors (for every k <= kmax) and fills."""
    table = prepare(frame, plan)
    block = nearest_donors(table, kmax=kmax, path="block", **kw)  # type: ignore[arg-type]
    tree = nearest_donors(table, kmax=kmax, path="tree", **kw)  # type: ignore[arg-type]
    for col in block:
        for k in range(1, kmax + 1):
            _same(block[col], tree[col], k)
    ks = list(range(1, kmax + 1))
    got_block, got_tree = combine(table, block, ks), combine(table, tree, ks)
    for k in ks:
        for col in got_block[k]:
            np.testing.assert_allclose(got_tree[k][col], got_block[k][col], rtol=1e-12, atol=1e-12)


def _lower_limits(monkeypatch: pytest.MonkeyPatch) -> None:
    """Trees for patterns of a few rows, so that small tables take every branch of the path."""
    monkeypatch.setattr(_tree_search, "MIN_TARGETS", 4)
    monkeypatch.setattr(_tree_search, "MIN_TREE", 4)
    monkeypatch.setattr(_tree_search, "SUB", 16)
    monkeypatch.setattr(_tree_search, "BATCH", 64)


@pytest.mark.parametrize(("n", "p", "gap", "seed", "kmax"), [
    (600, 4, 0.1, 0, 5), (800, 6, 0.25, 1, 3), (500, 3, 0.4, 2, 7), (400, 8, 0.05, 3, 1),
])  # fmt: skip
def test_tree_matches_block_on_gap_pattern_mixes(
    monkeypatch: pytest.MonkeyPatch, n: int, p: int, gap: float, seed: int, kmax: int
) -> None:
    _lower_limits(monkeypatch)
    _both(random_frame(n, p, gap, seed), FillPlan(scaling="none"), kmax)


@pytest.mark.parametrize("limits", [True, False])
def test_tree_matches_block_with_weights_and_zscores(monkeypatch: pytest.MonkeyPatch, limits: bool) -> None:
    if limits:
        _lower_limits(monkeypatch)
    plan = FillPlan(weights={"c0": 3.0, "c1": 0.5, "c3": 0.0})
    _both(random_frame(700, 5, 0.15, seed=4), plan, 4)


def test_tree_matches_block_with_groups(monkeypatch: pytest.MonkeyPatch) -> None:
    _lower_limits(monkeypatch)
    frame = random_frame(900, 4, 0.15, seed=5)
    rng = np.random.default_rng(5)
    frame["site"] = rng.choice(["north", "south", "east"], size=len(frame))
    frame.loc[frame.index[::50], "site"] = np.nan  # rows of no group: never donors
    _both(frame, FillPlan(scaling="none", group_column="site"), 3)


@pytest.mark.parametrize(("values", "kmax"), [(3, 4), (5, 5), (2, 2)])
def test_tree_matches_block_on_integer_grid_ties(
    monkeypatch: pytest.MonkeyPatch, values: int, kmax: int
) -> None:
    """Whole numbers on a small grid: many donors tie at the k-th distance; they share its places."""
    _lower_limits(monkeypatch)
    rng = np.random.default_rng(values)
    x = rng.integers(0, values, size=(160, 3)).astype(float)
    x[rng.random(x.shape) < 0.15] = np.nan
    frame = pd.DataFrame(x, columns=["a", "b", "c"])
    _both(frame, FillPlan(scaling="none"), kmax)
    table = prepare(frame, FillPlan(scaling="none"))
    tree = nearest_donors(table, kmax=kmax, path="tree")
    weights, _ = shares(tree["a"].distance ** 2, tree["a"].count, kmax)
    assert ((weights > 0) & (weights < 1)).any()  # the data do hold ties that share places


def test_tree_matches_block_for_given_targets_and_fill_only_columns(monkeypatch: pytest.MonkeyPatch) -> None:
    """Observed targets (their own row is never a donor) and a fill column outside the distance."""
    _lower_limits(monkeypatch)
    frame = random_frame(400, 4, 0.1, seed=6)
    plan = FillPlan(scaling="none", similarity_columns=["c0", "c1", "c2"], fill_columns=["c2", "c3"])
    targets = {"c2": np.arange(400) % 3 == 0, "c3": np.arange(400) % 5 == 0}
    _both(frame, plan, 3, targets=targets)
    table = prepare(frame, plan)
    found = nearest_donors(table, kmax=3, targets=targets, path="tree")["c2"]
    assert not (found.index == found.rows[:, None]).any()


@pytest.mark.parametrize("min_tree", [4, 60, 10**9])
def test_direct_comparison_matches_block_at_any_tree_size(
    monkeypatch: pytest.MonkeyPatch, min_tree: int
) -> None:
    """Small candidate patterns are compared in one matrix product; with no tree at all every
    list starts empty and takes each block's nearest rows."""
    _lower_limits(monkeypatch)
    monkeypatch.setattr(_tree_search, "MIN_TREE", min_tree)
    _both(random_frame(700, 5, 0.2, seed=8), FillPlan(scaling="none"), 4)
    _both(random_frame(500, 4, 0.1, seed=9), FillPlan(weights={"c0": 2.0, "c2": 0.25}), 3)


@pytest.mark.parametrize("order_queries", [0, 10**9])
def test_rows_in_leaf_order_give_the_same_donors(monkeypatch: pytest.MonkeyPatch, order_queries: int) -> None:
    """Target rows taken in the order of their tree's leaves, candidate patterns' rows in the
    order of theirs, and each tree's rows in its own (every tree with 10**9, none with 0),
    change where rows sit, never the donors."""
    _lower_limits(monkeypatch)
    monkeypatch.setattr(_tree_search, "ORDER_QUERIES", order_queries)
    built: list[tuple[np.ndarray, np.ndarray]] = []  # each tree's rows as stored, its pattern's rows
    tree = _tree_search.TreeSearch._tree

    def spy(self: _tree_search.TreeSearch, t: tuple[int, int, int]) -> tuple[object, np.ndarray]:
        found = tree(self, t)
        built.append((found[1], self._cand[t[0], t[1]]))
        return found

    monkeypatch.setattr(_tree_search.TreeSearch, "_tree", spy)
    _both(random_frame(700, 5, 0.2, seed=11), FillPlan(scaling="none"), 4)
    assert built
    for rows, pattern in built:  # each of the pattern's rows once
        assert sorted(rows.tolist()) == sorted(pattern.tolist()) and len(set(rows.tolist())) == len(rows)
    assert not all(bool((np.diff(pattern) > 0).all()) for _, pattern in built)  # the pattern's leaf order
    as_pattern = [np.array_equal(rows, pattern) for rows, pattern in built]
    assert all(as_pattern) if order_queries == 0 else not all(as_pattern)


@pytest.mark.parametrize(("path", "shape"), [("tree", (900, 5)), ("block", (900, 5)), ("block", (300, 40))])
def test_donors_same_with_any_number_of_threads(
    monkeypatch: pytest.MonkeyPatch, path: str, shape: tuple[int, int]
) -> None:
    """Chunks, batches and a symmetric block's slabs are searched by WORKERS threads; one
    thread or three find the same donors at the same distances, to the last bit, as two."""
    _lower_limits(monkeypatch)
    table = prepare(random_frame(*shape, 0.2, seed=12), FillPlan(scaling="none"))
    blocks: list[int] = []
    among = _nearest.BlockSearch.among
    monkeypatch.setattr(
        _nearest.BlockSearch, "among", lambda self, *a, **k: blocks.append(1) or among(self, *a, **k)
    )
    found = []
    for workers in (2, 1, 3):
        for module in (_tree_search, _block_jobs, _nearest, _row_pairs):
            monkeypatch.setattr(module, "WORKERS", workers)
        found.append(nearest_donors(table, kmax=4, path=path))
    assert blocks or path == "tree"  # the block search took the symmetric block
    for other in found[1:]:
        for col, donors in found[0].items():
            assert other[col].path == path
            for part in ("rows", "index", "distance", "count"):
                np.testing.assert_array_equal(getattr(other[col], part), getattr(donors, part))


def test_candidate_patterns_that_cannot_donate_are_not_searched(monkeypatch: pytest.MonkeyPatch) -> None:
    """Rows that lack a target's only gap column never give it a donor: their tree is not built."""
    _lower_limits(monkeypatch)
    rng = np.random.default_rng(10)
    x = rng.normal(size=(600, 4))
    gaps = rng.random(len(x)) < 0.3
    x[gaps, rng.integers(0, 4, size=int(gaps.sum()))] = np.nan  # one gap at most per row
    frame = pd.DataFrame(x, columns=[f"c{j}" for j in range(4)])
    built: list[tuple[int, int, int]] = []
    tree = _tree_search.TreeSearch._tree

    def spy(self: _tree_search.TreeSearch, t: tuple[int, int, int]) -> object:
        built.append(t)
        return tree(self, t)

    monkeypatch.setattr(_tree_search.TreeSearch, "_tree", spy)
    _both(frame, FillPlan(scaling="none"), 3)
    assert built
    # a target missing c_j asks the complete rows (shared: all but c_j) and the rows missing
    # another column; never the rows missing c_j themselves (candidate pattern = shared columns)
    assert all(cbits != shared for _, cbits, shared in built)


def test_tree_fill_equals_knnimputer() -> None:
    """Plain numbers, no scaling, no ties: the tree path's fill is scikit-learn's KNNImputer's output.

    Reference: scikit-learn ``KNNImputer`` (``nan_euclidean_distances``, Dixon 1979).
    """
    frame = random_frame(1500, 5, 0.1, seed=7)
    table = prepare(frame, FillPlan(k=4, scaling="none"))
    found = nearest_donors(table, kmax=4, path="tree")
    assert all(f.path == "tree" for f in found.values())
    filled = combine(table, found, [4])[4]
    ref = KNNImputer(n_neighbors=4).fit_transform(frame.to_numpy())
    for j, col in enumerate(frame.columns):
        np.testing.assert_allclose(filled[col], ref[found[col].rows, j], rtol=1e-9, atol=1e-12)


def test_categories_go_to_the_block_search() -> None:
    frame = random_frame(300, 3, 0.1, seed=8)
    frame["soil"] = np.random.default_rng(8).choice(["clay", "sand"], size=len(frame))
    table = prepare(frame, FillPlan(scaling="none"))
    found = nearest_donors(table, kmax=3, path="tree")
    assert {f.path for f in found.values()} == {"block"}


def test_auto_keeps_the_block_search_where_the_trees_do_not_pay() -> None:
    small = prepare(random_frame(500, 4, 0.1, seed=9), FillPlan())
    wide = prepare(random_frame(300, 20, 0.05, seed=9), FillPlan())
    assert nearest_donors(small, kmax=3)["c0"].path == "block"
    assert nearest_donors(wide, kmax=3, path="tree")["c0"].path == "block"  # more than MAX_COLUMNS


def test_cost_estimate_prefers_trees_for_long_narrow_sheets() -> None:
    frame = random_frame(200_000, 6, 0.05, seed=10)
    table = prepare(frame, FillPlan(scaling="none"))
    lay = _patterns.layout(table.features, table.groups)
    assert lay is not None
    want = frame.isna().to_numpy()
    assert _patterns.tree_pays(lay, want, (~want).any(axis=1))
    short = _patterns.layout(prepare(frame.head(5000), FillPlan()).features, None)
    assert short is not None
    assert not _patterns.tree_pays(short, want[:5000], (~want[:5000]).any(axis=1))  # below MIN_ROWS


def test_impute_says_which_search_it_used(monkeypatch: pytest.MonkeyPatch) -> None:
    frame = random_frame(300, 3, 0.1, seed=11)
    assert impute(frame, FillPlan(k=2)).search == _tree_search.PATH_NAMES["block"]
    monkeypatch.setattr(_tree_search, "tree_pays", lambda *a: True)
    assert impute(frame, FillPlan(k=2)).search == _tree_search.PATH_NAMES["tree"]


def test_progress_per_batch_and_cancel_between_batches(monkeypatch: pytest.MonkeyPatch) -> None:
    _lower_limits(monkeypatch)
    table = prepare(random_frame(1200, 3, 0.2, seed=12), FillPlan())
    calls: list[tuple[int, int]] = []
    nearest_donors(table, kmax=3, path="tree", progress=lambda d, t: calls.append((d, t)))
    assert len(calls) >= 4
    assert [d for d, _ in calls] == sorted(d for d, _ in calls)
    assert calls[-1][0] == calls[-1][1]
    with pytest.raises(Cancelled):
        nearest_donors(table, kmax=3, path="tree", cancel=lambda: True)
    flag = threading.Event()

    def cancel_later(done: int, total: int) -> None:
        if done >= 2:
            flag.set()

    with pytest.raises(Cancelled):
        nearest_donors(table, kmax=3, path="tree", progress=cancel_later, cancel=flag)


def test_unknown_path_is_refused() -> None:
    table = prepare(random_frame(50, 3, 0.1, seed=13), FillPlan())
    with pytest.raises(ValueError, match="path"):
        nearest_donors(table, kmax=3, path="fast")


def test_recovery_test_takes_the_same_path_and_scores(monkeypatch: pytest.MonkeyPatch) -> None:
    """The recovery test searches through the same choice of path, and both paths score alike."""
    from imputer_app.validation import recovery_test

    _lower_limits(monkeypatch)
    frame = random_frame(500, 4, 0.1, seed=11)
    plan = FillPlan(scaling="none")
    runs: list[str] = []
    run = _tree_search.TreeSearch.run

    def spy(self: _tree_search.TreeSearch, *args: object) -> int:
        runs.append("tree")
        return run(self, *args)  # type: ignore[arg-type]

    monkeypatch.setattr(_tree_search.TreeSearch, "run", spy)
    monkeypatch.setattr(_tree_search, "tree_pays", lambda *a: False)
    block = recovery_test(frame, plan, ks=[1, 3], repeats=2, seed=4, masking="random")
    assert runs == []
    monkeypatch.setattr(_tree_search, "tree_pays", lambda *a: True)
    tree = recovery_test(frame, plan, ks=[1, 3], repeats=2, seed=4, masking="random")
    assert runs  # every search of the test (one per fold and repeat)
    assert tree.best_k == block.best_k
    pd.testing.assert_frame_equal(tree.scores, block.scores, rtol=1e-12)
