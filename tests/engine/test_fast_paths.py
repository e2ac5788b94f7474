"""The engine's shortcuts give the very numbers of their plain forms (to the last bit).

Packed bit masks, a table of codes instead of a sort, threads sharing the exact
distances, lists re-sorted only when out of order: each is checked against the plain
numpy computation it replaces.
"""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app import work
from imputer_app.engine import _row_pairs, _shared
from imputer_app.engine._bits import common_bits, count_distinct, distinct, packed_rows
from imputer_app.engine._distance import DistanceModel, Features
from imputer_app.engine._exact import sort_order
from imputer_app.engine._row_pairs import RowPairs


def _features(n: int, p: int, seed: int, weights: np.ndarray | None = None, cats: int = 0) -> Features:
    rng = np.random.default_rng(seed)
    x = np.round(rng.normal(size=(n, p)), 2)  # rounded: equal values and ties happen
    x[rng.random(x.shape) < 0.2] = np.nan
    codes = rng.integers(-1, 3, size=(n, cats))
    w = np.ones(p) if weights is None else weights
    cw = np.ones(cats)
    return Features(x, w, codes, cw, float(w.sum() + cw.sum()))


@pytest.mark.parametrize(("n", "p", "seed"), [(7, 3, 0), (40, 64, 1), (25, 65, 2), (9, 200, 3)])
def test_common_bits_count_the_columns_both_rows_have(n: int, p: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    mask = rng.random((n, p)) < 0.6
    rows, others = rng.integers(0, n, 11), rng.integers(0, n, (11, 4))
    plain = (mask[rows][:, None, :] & mask[others]).sum(axis=2)
    assert np.array_equal(common_bits(packed_rows(mask), rows, others), plain)
    assert np.array_equal(common_bits(packed_rows(mask), rows, others[:, 0]), plain[:, 0])


@pytest.mark.parametrize("slice_rows", [1, 3, 100])
@pytest.mark.parametrize(("n", "p"), [(10, 3), (9, 64), (25, 130), (4, 0), (0, 5)])
def test_packed_rows_in_slices_as_packbits(
    monkeypatch: pytest.MonkeyPatch, slice_rows: int, n: int, p: int
) -> None:
    # a long mask is packed slice by slice (other threads get a turn between slices):
    # the same words as numpy's packbits of the whole mask, zero padded to 64 bits
    monkeypatch.setattr(work, "SLICE_ROWS", slice_rows)
    mask = np.random.default_rng(n + p).random((n, p)) < 0.5
    plain = np.packbits(mask, axis=1)
    expected = np.zeros((n, 8 * -(-plain.shape[1] // 8)), dtype=np.uint8)
    expected[:, : plain.shape[1]] = plain
    assert np.array_equal(packed_rows(mask), expected.view(np.uint64))


@pytest.mark.parametrize(("a", "b"), [([3, 1, 3], [0, 1, 7]), ([], [2, 2]), ([], []), ([5], [])])
def test_count_distinct_as_numpy_union(a: list[int], b: list[int]) -> None:
    rows, others = np.array(a, dtype=np.intp), np.array(b, dtype=np.intp)
    assert count_distinct(rows, others) == len(np.union1d(rows, others))


@pytest.mark.parametrize(
    ("bound", "size", "seed"), [(50, 400, 0), (10**6, 300, 1), (1, 5, 2), (10**6, 0, 3), (10**6, 1, 4)]
)
def test_distinct_codes_as_numpy_unique(bound: int, size: int, seed: int) -> None:
    codes = np.random.default_rng(seed).integers(0, bound, size).astype(np.int64)
    got, back = distinct(codes, bound)
    want, inverse = np.unique(codes, return_inverse=True)
    assert np.array_equal(got, want) and np.array_equal(back, inverse.reshape(-1))
    assert got.dtype == np.int64 and back.dtype == np.intp


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_sort_order_as_lexsort(seed: int) -> None:
    rng = np.random.default_rng(seed)
    d2 = np.sort(rng.integers(0, 4, (30, 6)).astype(float), axis=1)  # mostly in order, with ties
    d2[::5] = rng.permutation(d2[::5].T).T  # some lines out of order
    index = rng.permutation(30 * 6).reshape(30, 6)
    order = sort_order(d2, index)
    want = np.lexsort((index, d2), axis=-1)
    got = np.broadcast_to(np.arange(6), d2.shape) if order is None else order
    assert np.array_equal(got, want)
    assert sort_order(np.sort(d2, axis=1), np.broadcast_to(np.arange(6), d2.shape)) is None


@pytest.mark.parametrize(
    ("weights", "cats"), [(None, 0), (np.full(12, 2.0), 2), (np.full(12, 0.3), 0), (np.arange(1.0, 13.0), 1)]
)
def test_exact_distances_the_same_by_every_path(
    weights: np.ndarray | None, cats: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    features = _features(60, 12, 4, weights, cats)
    rng = np.random.default_rng(5)
    x, y = rng.integers(0, 60, 3000), rng.integers(0, 60, 3000)
    fast = DistanceModel(features).exact(x, y)
    # by the row sums of NaN masks, one pair at a time, on one thread
    plain = DistanceModel(features)
    monkeypatch.setattr(RowPairs, "_same_weight", None)
    monkeypatch.setattr(_row_pairs, "THREADED_VALUES", 2**62)
    one = np.concatenate([plain.exact(x[i : i + 1], y[i : i + 1]) for i in range(len(x))])
    assert np.array_equal(fast, one)
    monkeypatch.setattr(_row_pairs, "THREADED_VALUES", 1)  # threads sharing many small batches
    monkeypatch.setattr(_row_pairs, "PAIR_BATCH", 64)
    assert np.array_equal(DistanceModel(features).exact(x, y), one)
    # a long table's pairs in slices (here every table counts as long), the threads too
    monkeypatch.setattr(_row_pairs, "DISTINCT_TABLE", 1)
    monkeypatch.setattr(_row_pairs, "EXACT_SLICE", 257)
    assert np.array_equal(DistanceModel(features).exact(x, y), one)


@pytest.mark.parametrize("weights", [None, np.array([1.0, 2.0, 0.5, 1.0, 2.0, 1.0]), np.arange(1.0, 7.0)])
def test_shared_weights_the_same_on_short_and_long_sheets(
    weights: np.ndarray | None, monkeypatch: pytest.MonkeyPatch
) -> None:
    features = _features(80, 6, 6, weights, 2)
    rng = np.random.default_rng(7)
    rows, others = rng.integers(0, 80, 50), rng.integers(-1, 80, (50, 5))
    pairs = _shared.shared_weights(features, rows, others)
    monkeypatch.setattr(_shared, "PAIR_ROWS", 10)  # packed bit masks instead of one product
    assert np.array_equal(_shared.shared_weights(features, rows, others), pairs)
    seen = np.hstack([np.isfinite(features.numbers), features.codes >= 0])
    w = np.concatenate([features.number_weights, features.code_weights])
    plain = (seen[rows][:, None, :] & seen[np.maximum(others, 0)]) @ w
    np.testing.assert_allclose(pairs, plain, rtol=1e-15)
