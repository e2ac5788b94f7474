"""The sweep's direct comparison finds exactly the pairs within reach (against every pair, brute force)."""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app.engine import _tree_direct
from imputer_app.engine._patterns import Layout
from imputer_app.engine._tree_direct import direct_hits, sweep_of


def _layout(seed: int, n: int, p: int, gap: float) -> Layout:
    rng = np.random.default_rng(seed)
    values = rng.standard_normal((n, p)) * rng.uniform(0.5, 3.0, p)
    mask = rng.random((n, p)) >= gap
    mask[~mask.any(axis=1), 0] = True  # every row has a column
    weights = rng.uniform(0.5, 2.0, p)
    x = np.where(mask, values, 0.0) * np.sqrt(weights)
    pattern = (mask.astype(np.intp) << np.arange(p)).sum(axis=1)
    return Layout(x, mask, weights, float(weights.sum()), pattern, np.zeros(n, dtype=np.intp))


def _all_pairs(lay: Layout, bits: int, batch: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Dixon's d^2 of every (target, candidate) pair, one target at a time (inf: no shared column)."""
    cols = lay.columns(bits)
    out = np.full((len(batch), len(rows)), np.inf)
    shared = lay.mask[np.ix_(rows, cols)]
    w_shared = shared @ lay.weights[cols]
    for i, t in enumerate(batch):
        diff2 = np.where(shared, (lay.x[t, cols] - lay.x[np.ix_(rows, cols)]) ** 2, 0.0).sum(axis=1)
        ok = (w_shared > 0) & (rows != t)
        out[i, ok] = lay.total / w_shared[ok] * diff2[ok]
    return out


@pytest.mark.parametrize("targets", [1, 8])
@pytest.mark.parametrize(
    ("seed", "n", "p", "gap"), [(0, 300, 4, 0.2), (1, 400, 6, 0.35), (2, 250, 3, 0.5), (3, 300, 2, 0.1)]
)
def test_direct_hits_are_the_pairs_within_reach(
    monkeypatch: pytest.MonkeyPatch, targets: int, seed: int, n: int, p: int, gap: float
) -> None:
    # small blocks, so that the sweep's windows, block edges and own rows all come into play
    monkeypatch.setattr(_tree_direct, "TARGETS", targets)
    monkeypatch.setattr(_tree_direct, "CANDIDATES", 16)
    lay = _layout(seed, n, p, gap)
    bits = int(np.bincount(lay.pattern).argmax())  # the commonest pattern's rows are the targets
    batch = np.flatnonzero(lay.pattern == bits)
    rows = np.flatnonzero(lay.mask[:, lay.columns(bits)].any(axis=1))  # targets among them: never self
    d2 = _all_pairs(lay, bits, batch, rows)
    # reaches halfway between the 3rd and 4th nearest (no pair near the edge), a few rows unbounded
    near = np.sort(d2, axis=1)
    reach = (near[:, 2] + near[:, 3]) / 2
    reach[::7] = np.inf
    at, index, got = direct_hits(lay, sweep_of(lay, bits, rows), batch, reach, size=4, noise=1e-9)
    found = {(int(a), int(c)): float(d) for a, c, d in zip(at, index, got, strict=True)}
    assert all(batch[a] != c for a, c in found)
    for i in np.flatnonzero(np.isfinite(reach)):
        want = {int(c) for c in rows[d2[i] <= reach[i]]}
        assert {c for a, c in found if a == i} == want
    for i in np.flatnonzero(~np.isfinite(reach)):
        mine = {c for a, c in found if a == i}
        assert {int(c) for c in rows[np.argsort(d2[i], kind="stable")[:4]]} <= mine  # the 4 nearest at least
    pos = {int(c): j for j, c in enumerate(rows)}
    for (a, c), d in found.items():
        assert d == pytest.approx(d2[a, pos[c]], rel=1e-9, abs=1e-12)


def test_candidates_without_the_sweep_column_meet_every_target(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_tree_direct, "TARGETS", 4)
    lay = _layout(5, 120, 3, 0.0)
    lay.mask[60:, 0] = False  # half the candidates lack column 0 (the sweep column is column 1 or 2)
    lay.mask[90:, :] = [False, True, False]  # ... and some have only column 1
    lay.x[~lay.mask] = 0.0
    batch, rows = np.arange(0, 30), np.arange(30, 120)
    d2 = _all_pairs(lay, 0b111, batch, rows)
    reach = np.median(d2, axis=1)
    at, index, _ = direct_hits(lay, sweep_of(lay, 0b111, rows), batch, reach, size=4, noise=1e-9)
    assert sorted(zip(at.tolist(), index.tolist(), strict=True)) == sorted(
        (i, int(rows[j])) for i, j in zip(*np.nonzero(d2 <= reach[:, None]), strict=True)
    )


def test_window_narrows_by_the_least_factor_and_keeps_the_pair_on_its_edge() -> None:
    """Candidates sharing one of two columns have ``f = W_all / w_0``; the sweep's window along
    column 0 is ``sqrt(reach / f)``, and a candidate exactly there is still within reach."""
    w = np.array([1.0, 3.0])
    f = w.sum() / w[0]  # 4: a candidate without column 1
    reach = 2.0
    edge = np.sqrt(reach / f)  # f x edge^2 == reach
    y = np.array([0.0, edge, edge * (1 + 1e-6), -edge, 0.5 * edge])
    mask = np.ones((6, 2), dtype=bool)
    mask[1:, 1] = False
    values = np.vstack([[0.0, 1.0], np.column_stack([y, np.zeros(5)])])
    x = np.where(mask, values, 0.0) * np.sqrt(w)
    pattern = (mask.astype(np.intp) << np.arange(2)).sum(axis=1)
    lay = Layout(x, mask, w, float(w.sum()), pattern, np.zeros(6, dtype=np.intp))
    sweep = sweep_of(lay, 0b11, np.arange(1, 6))
    assert sweep.runs[0].least == pytest.approx(f)
    # the reach one rounding step wider than f x edge^2 (the product form rounds too)
    _, index, d2 = direct_hits(lay, sweep, np.array([0]), np.array([reach * (1 + 1e-12)]), 4, 0.0)
    assert sorted(index.tolist()) == [1, 2, 4, 5]  # 3 lies just past the edge (d^2 = reach x (1 + 2e-6))
    assert np.all(d2 <= reach * (1 + 1e-12))


@pytest.mark.parametrize(
    ("offset", "spread", "rough"), [(1e3, 1e-2, True), (0.0, 1e-20, True), (1e16, 1e15, False)]
)
def test_single_precision_first_pass_never_loses_a_pair(offset: float, spread: float, rough: bool) -> None:
    """Values far from 0 for their spread (the product form cancels: single precision alone
    would misjudge every pair, double precision does not), values under single precision's
    range, and values past its safe range (the sweep then works in double precision only):
    the pairs within reach are those brute force finds, with their distances."""
    lay = _layout(6, 300, 4, 0.2)
    x = np.where(lay.mask, offset + spread * lay.x, 0.0)
    lay = Layout(x, lay.mask, lay.weights, lay.total, lay.pattern, lay.group)
    bits = int(np.bincount(lay.pattern).argmax())
    batch = np.flatnonzero(lay.pattern == bits)
    rows = np.flatnonzero(lay.mask[:, lay.columns(bits)].any(axis=1))
    sweep = sweep_of(lay, bits, rows)
    assert all((run.rough is not None) == rough for run in sweep.runs)
    d2 = _all_pairs(lay, bits, batch, rows)
    near = np.sort(d2, axis=1)
    reach = (near[:, 2] + near[:, 3]) / 2
    noise = 1e-13 * float(np.abs(x).max()) ** 2  # the product form's rounding in double precision
    at, index, got = direct_hits(lay, sweep, batch, reach, size=4, noise=noise)
    found = set(zip(at.tolist(), index.tolist(), strict=True))
    sure = {(i, int(rows[j])) for i, j in zip(*np.nonzero(d2 <= reach[:, None] - noise), strict=True)}
    maybe = {(i, int(rows[j])) for i, j in zip(*np.nonzero(d2 <= reach[:, None] + noise), strict=True)}
    assert len(sure) >= 2 * len(batch)  # the test has teeth: most targets have three pairs for sure
    assert sure <= found <= maybe
    pos = {int(c): j for j, c in enumerate(rows)}
    exact = [d2[a, pos[c]] for a, c in zip(at, index, strict=True)]
    np.testing.assert_allclose(got, exact, rtol=0, atol=noise)
