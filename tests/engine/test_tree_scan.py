"""Rare target patterns searched through boxes: every pair within reach, and the block search's donors."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import _tree_scan, _tree_search, nearest_donors, prepare
from imputer_app.engine._patterns import Layout, by_pattern
from imputer_app.engine._tree_scan import boxes_of, scan_hits
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame
from tests.engine.test_tree_direct import _layout
from tests.engine.test_tree_search import _both, _lower_limits


def _unit_layout(seed: int, n: int, p: int, gap: float) -> tuple[Layout, np.ndarray]:
    """Equal weights (scikit-learn's nan-Euclidean distance is Dixon's then) and the values with NaN."""
    rng = np.random.default_rng(seed)
    values = rng.standard_normal((n, p))
    values[rng.random((n, p)) < gap] = np.nan
    values[np.isnan(values).all(axis=1), 0] = 0.5  # every row has a column
    mask = np.isfinite(values)
    pattern = (mask.astype(np.intp) << np.arange(p)).sum(axis=1)
    x = np.where(mask, values, 0.0)
    return Layout(x, mask, np.ones(p), float(p), pattern, np.zeros(n, dtype=np.intp)), values


@pytest.mark.parametrize("limits", [(8, 1, 7), (32, 4, 512), (10**6, 2, 3)])  # BOX, SEED, ROWS
@pytest.mark.parametrize("sheet", [(0, 400, 4, 0.25), (1, 300, 6, 0.4), (2, 350, 3, 0.15)])  # seed, n, p, gap
def test_scan_finds_every_pair_within_reach_as_scikit_learn_measures_it(
    monkeypatch: pytest.MonkeyPatch, limits: tuple[int, int, int], sheet: tuple[int, int, int, float]
) -> None:
    """Reference: scikit-learn's ``nan_euclidean_distances`` (Dixon's distance with equal weights)."""
    for name, value in zip(("BOX", "SEED", "ROWS"), limits, strict=True):
        monkeypatch.setattr(_tree_scan, name, value)
    lay, values = _unit_layout(*sheet)
    n = len(values)
    boxes = boxes_of(lay, list(by_pattern(lay, np.arange(n)).values()))
    assert sorted(boxes.rows.tolist()) == list(range(n))  # every candidate in exactly one box
    batch = np.flatnonzero(~lay.mask.all(axis=1))[::3]  # targets of every pattern with a gap
    size = 4
    at, index, got = scan_hits(lay, boxes, batch, size, noise=1e-9)
    d2 = nan_euclidean_distances(values[batch], values) ** 2
    d2[np.arange(len(batch)), batch] = np.inf  # never a row with itself
    d2[np.isnan(d2)] = np.inf  # no shared column: never a donor
    assert all(batch[a] != c for a, c in zip(at, index, strict=True))
    found = {(int(a), int(c)): float(d) for a, c, d in zip(at, index, got, strict=True)}
    for (a, c), d in found.items():
        assert d == pytest.approx(d2[a, c], rel=1e-9, abs=1e-9)
    for i in range(len(batch)):
        kth = np.sort(d2[i])[size - 1]
        want = {int(c) for c in np.flatnonzero(d2[i] <= kth)}  # the nearest `size`, ties included
        assert want <= {c for a, c in found if a == i}


def test_scan_bounds_never_pass_a_candidate_with_weights() -> None:
    """Weighted columns: each pair kept has Dixon's distance (brute force), and the reach holds
    the nearest four (a box's lower bound never exceeds a distance within it)."""
    lay = _layout(5, 500, 5, 0.3)
    boxes = boxes_of(lay, list(by_pattern(lay, np.arange(500)).values()))
    batch = np.arange(0, 500, 2)
    at, index, got = scan_hits(lay, boxes, batch, 4, noise=1e-9)
    shared = lay.mask[batch][:, None, :] & lay.mask[None, :, :]
    diff2 = np.where(shared, (lay.x[batch][:, None, :] - lay.x[None, :, :]) ** 2, 0.0).sum(axis=2)
    w = shared @ lay.weights
    with np.errstate(divide="ignore", invalid="ignore"):
        d2 = np.where(w > 0, lay.total / w * diff2, np.inf)
    d2[np.arange(len(batch)), batch] = np.inf
    np.testing.assert_allclose(got, d2[at, index], rtol=1e-9, atol=1e-9)
    for i in range(len(batch)):
        assert {int(c) for c in np.argsort(d2[i], kind="stable")[:4]} <= set(index[at == i].tolist())


def _rare_everywhere(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Every target pattern rare (all through the boxes), small boxes; returns the rows each scan took."""
    _lower_limits(monkeypatch)
    monkeypatch.setattr(_tree_search, "MIN_TARGETS", 10**9)
    monkeypatch.setattr(_tree_search, "SCAN_CANDIDATES", 1)
    monkeypatch.setattr(_tree_search, "SCAN_ROWS", 1)
    monkeypatch.setattr(_tree_scan, "BOX", 16)
    monkeypatch.setattr(_tree_scan, "ROWS", 32)
    scanned: list[int] = []
    scan = _tree_search.scan_hits

    def spy(*args: object) -> object:
        scanned.append(len(args[2]))  # type: ignore[arg-type]
        return scan(*args)  # type: ignore[arg-type]

    monkeypatch.setattr(_tree_search, "scan_hits", spy)
    return scanned


@pytest.mark.parametrize(("n", "p", "gap", "seed", "kmax"), [
    (600, 4, 0.1, 0, 5), (800, 6, 0.25, 1, 3), (500, 3, 0.4, 2, 7), (400, 8, 0.05, 3, 1),
])  # fmt: skip
def test_rare_patterns_in_boxes_give_the_block_search_donors(
    monkeypatch: pytest.MonkeyPatch, n: int, p: int, gap: float, seed: int, kmax: int
) -> None:
    scanned = _rare_everywhere(monkeypatch)
    frame = random_frame(n, p, gap, seed)
    _both(frame, FillPlan(scaling="none"), kmax)
    # every row with a gap and a value (rows of no value have no distance at all)
    assert sum(scanned) >= (frame.isna().any(axis=1) & frame.notna().any(axis=1)).sum()


def test_rare_patterns_in_boxes_with_weights_groups_given_targets(monkeypatch: pytest.MonkeyPatch) -> None:
    scanned = _rare_everywhere(monkeypatch)
    _both(random_frame(700, 5, 0.15, seed=4), FillPlan(weights={"c0": 3.0, "c1": 0.5, "c3": 0.0}), 4)
    frame = random_frame(900, 4, 0.15, seed=5)
    rng = np.random.default_rng(5)
    frame["site"] = rng.choice(["north", "south", "east"], size=len(frame))
    frame.loc[frame.index[::50], "site"] = np.nan  # rows of no group: never donors
    _both(frame, FillPlan(scaling="none", group_column="site"), 3)
    plan = FillPlan(scaling="none", similarity_columns=["c0", "c1", "c2"], fill_columns=["c2", "c3"])
    targets = {"c2": np.arange(400) % 3 == 0, "c3": np.arange(400) % 5 == 0}
    _both(random_frame(400, 4, 0.1, seed=6), plan, 3, targets=targets)
    assert len(scanned) > 10


@pytest.mark.parametrize(("values", "kmax"), [(3, 4), (2, 2)])
def test_rare_patterns_in_boxes_share_ties_like_the_block_search(
    monkeypatch: pytest.MonkeyPatch, values: int, kmax: int
) -> None:
    """Whole numbers on a small grid: donors tie at the k-th distance; lists widen until they hold them."""
    scanned = _rare_everywhere(monkeypatch)
    rng = np.random.default_rng(values)
    x = rng.integers(0, values, size=(160, 3)).astype(float)
    x[rng.random(x.shape) < 0.15] = np.nan
    _both(pd.DataFrame(x, columns=["a", "b", "c"]), FillPlan(scaling="none"), kmax)
    assert scanned


def test_rare_rows_below_the_least_go_to_the_block_search(monkeypatch: pytest.MonkeyPatch) -> None:
    scanned = _rare_everywhere(monkeypatch)
    monkeypatch.setattr(_tree_search, "SCAN_ROWS", 10**9)
    table = prepare(random_frame(300, 4, 0.2, seed=7), FillPlan(scaling="none"))
    assert nearest_donors(table, kmax=3, path="tree")["c0"].path == "tree"
    assert not scanned


def test_boxes_spare_most_comparisons(monkeypatch: pytest.MonkeyPatch) -> None:
    """3,000 rows in 3 columns, boxes of 32, 4 seed boxes: the targets (one shared column
    or two) meet under a fifth of the candidates and keep little more than their nearest."""
    monkeypatch.setattr(_tree_scan, "BOX", 32)
    monkeypatch.setattr(_tree_scan, "SEED", 4)
    lay, _ = _unit_layout(9, 3000, 3, 0.05)
    boxes = boxes_of(lay, list(by_pattern(lay, np.arange(3000)).values()))
    measured: list[int] = []
    box_d2 = _tree_scan._box_d2

    def spy(*args: object) -> np.ndarray:
        d2 = box_d2(*args)  # type: ignore[arg-type]
        measured.append(d2.size)
        return d2

    monkeypatch.setattr(_tree_scan, "_box_d2", spy)
    batch = np.flatnonzero(~lay.mask.all(axis=1))
    at, _, _ = scan_hits(lay, boxes, batch, 4, noise=1e-9)
    assert sum(measured) < 0.2 * len(batch) * 3000
    assert len(at) < 5 * 4 * len(batch)


@pytest.mark.parametrize(("offset", "spread", "rough"), [(1e3, 1e-2, True), (1e16, 1e15, False)])
def test_scan_in_single_precision_first_never_loses_a_pair(offset: float, spread: float, rough: bool) -> None:
    """Values whose product form cancels in single precision (it only chooses the pairs to
    measure again exactly), and values past its safe range (double precision only): each
    target's nearest four are kept, with their distances (brute force)."""
    lay, values = _unit_layout(8, 400, 4, 0.25)
    values = offset + spread * values
    x = np.where(lay.mask, values, 0.0)
    lay = Layout(x, lay.mask, lay.weights, lay.total, lay.pattern, lay.group)
    boxes = boxes_of(lay, list(by_pattern(lay, np.arange(400)).values()))
    assert (boxes.rough is not None) == rough
    batch = np.flatnonzero(~lay.mask.all(axis=1))
    noise = 1e-13 * float(np.abs(x).max()) ** 2  # the product form's rounding in double precision
    at, index, got = scan_hits(lay, boxes, batch, 4, noise=noise)
    d2 = nan_euclidean_distances(values[batch], values) ** 2
    d2[np.arange(len(batch)), batch] = np.inf
    d2[np.isnan(d2)] = np.inf
    np.testing.assert_allclose(got, d2[at, index], rtol=0, atol=noise)
    for i in range(len(batch)):
        sure = np.flatnonzero(d2[i] <= np.sort(d2[i])[3] - noise)  # the nearest four, less a near tie
        assert set(sure.tolist()) <= set(index[at == i].tolist())


@pytest.mark.parametrize("rare", [False, True])
def test_a_category_to_fill_gets_the_block_search_donors_and_vote(
    monkeypatch: pytest.MonkeyPatch, rare: bool
) -> None:
    """A category filled by vote from donors found on number columns (a category among the
    similarity columns sends the search to the block search): both paths give the same donors
    and the same votes, through trees or, with every pattern rare, through boxes."""
    if rare:
        _rare_everywhere(monkeypatch)
    else:
        _lower_limits(monkeypatch)
    frame = random_frame(600, 4, 0.1, seed=12)
    rng = np.random.default_rng(12)
    frame["soil"] = np.where(frame["c0"].fillna(0) > 0, "clay", rng.choice(["sand", "silt"], size=len(frame)))
    frame.loc[rng.random(len(frame)) < 0.1, "soil"] = np.nan
    plan = FillPlan(scaling="none", similarity_columns=["c0", "c1", "c2", "c3"], fill_columns=["c1", "soil"])
    table = prepare(frame, plan)
    assert nearest_donors(table, kmax=4, path="tree")["soil"].path == "tree"
    _both(frame, plan, 4)
