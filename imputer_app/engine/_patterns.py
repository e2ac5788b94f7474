"""Gap patterns of the similarity columns, and whether k-d trees pay (numpy only).

The tree path (:mod:`~imputer_app.engine._tree_search`) groups rows by gap pattern and
by group: :class:`Layout` holds the coordinates (each column times ``sqrt(weight)``,
so that Euclidean distance in a pattern's columns is Dixon's weighted sum) and
:func:`tree_pays` estimates its cost against the block search's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._distance import Features

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

#: More numeric similarity columns than this: a k-d tree no longer pays.
MAX_COLUMNS = 15
#: Fewer candidate rows than this: the block search is quick anyway.
MIN_ROWS = 20_000
#: A target pattern with fewer rows (in its group) goes to the block search.
MIN_TARGETS = 256
#: A candidate pattern with fewer rows is compared directly (a sweep along one column and
#: small matrix products for all of them) instead of through a tree of its own. Measured on
#: 300,000 x 10 with 5 % gaps: the station log's search took 0.8x the CPU time at 4,096 as
#: at 256 (bounded queries of a few hundred rows' tree cost about 1 us per target row
#: however little they find); normal columns took the same time at both.
MIN_TREE = 4096
#: Work of one tree query in the block search's pair comparisons, per power of two of the
#: dimension. Measured on normal columns, 9 shared, in one run: a query among 628,000 rows
#: stored in leaf order 0.22 ms, the block search 3.8 ns per pair (CPU time).
QUERY = 110
#: A bounded query of a further tree costs this fraction of the first (measured on the
#: same rows: nine trees of 33,000 rows, 0.02 ms a query each).
FURTHER = 0.1
#: Work of one direct comparison, in the block search's pair comparisons (measured on the
#: same rows, where the sweep saves nothing: about 4-6 ns a pair).
DIRECT_PAIR = 1.3


@dataclass(frozen=True)
class Layout:
    """The similarity columns as tree coordinates.

    Attributes
    ----------
    x : ndarray of shape (n_rows, p)
        Values times ``sqrt(weight)``, 0 in gaps (positive weights only).
    mask : ndarray of bool, shape (n_rows, p)
    weights : ndarray of shape (p,)
    total : float
        ``W_all``, the weight of all similarity columns.
    pattern : ndarray of int, shape (n_rows,)
        The observed columns as bits.
    group : ndarray of int, shape (n_rows,)
        Group codes (-1: no group), all 0 without a group column.
    """

    x: FloatArray
    mask: BoolArray
    weights: FloatArray
    total: float
    pattern: IntArray
    group: IntArray

    def columns(self, bits: int) -> IntArray:
        """Column positions of a pattern."""
        return np.flatnonzero((bits >> np.arange(self.x.shape[1])) & 1)

    def factor(self, bits: int) -> float:
        """``W_all / W_S`` for the shared columns ``bits``."""
        return self.total / float(self.weights[self.columns(bits)].sum())


def layout(features: Features, groups: IntArray | None) -> Layout | None:
    """The tree coordinates, or None when the trees cannot serve (categories, too many columns)."""
    if features.codes.shape[1]:
        return None  # Gower's matching rule: left to the block search
    keep = features.number_weights > 0
    p = int(keep.sum())
    if p == 0 or p > MAX_COLUMNS:
        return None
    numbers, weights = features.numbers[:, keep], features.number_weights[keep]
    mask = np.isfinite(numbers)
    x = np.where(mask, numbers, 0.0) * np.sqrt(weights)
    pattern = (mask.astype(np.intp) << np.arange(p)).sum(axis=1)
    group = np.zeros(len(x), dtype=np.intp) if groups is None else np.asarray(groups, dtype=np.intp)
    return Layout(
        x, mask, np.asarray(weights, dtype=np.float64), float(features.total_weight), pattern, group
    )


def _keys(lay: Layout, rows: IntArray) -> NDArray[np.int64]:
    """One integer per row of ``rows`` for its (group, pattern)."""
    return lay.group[rows].astype(np.int64) * (1 << 20) + lay.pattern[rows]


def _pair(key: int) -> tuple[int, int]:
    """The (group, pattern) of a key of :func:`_keys`."""
    return key >> 20, key & ((1 << 20) - 1)


def by_pattern(lay: Layout, rows: IntArray) -> dict[tuple[int, int], IntArray]:
    """``rows`` by (group, pattern), each ascending."""
    if not len(rows):
        return {}
    key = _keys(lay, rows)
    order = np.argsort(key, kind="stable")
    uniq, start = np.unique(key[order], return_index=True)
    parts = np.split(rows[order], start[1:])
    return {_pair(u): part for u, part in zip(uniq.tolist(), parts, strict=True)}


def tree_pays(lay: Layout, want: BoolArray, candidates: BoolArray) -> bool:
    """Whether the trees are estimated to cost less than half the block search.

    Costs are counted in the block search's pair comparisons: it compares every target
    row with every candidate. The trees cost, per target row of a common pattern ``T``,
    one query of its largest candidate pattern's tree (about ``QUERY x 2^|T|``, no more
    than its rows), a bounded query of every further tree (:data:`FURTHER` of that) and
    :data:`DIRECT_PAIR` per row of the small candidate patterns compared directly; rows
    of rare target patterns are counted as compared with every candidate either way (the
    boxes of the tree path compare them with fewer, which the estimate leaves out).
    """
    n_cand = int(candidates.sum())
    rows = np.flatnonzero(want.any(axis=1))
    if n_cand < MIN_ROWS or not len(rows):
        return False
    # (group, pattern) counted by a sort: a Counter over a million pairs holds Python's lock
    keys, counts = np.unique(_keys(lay, np.flatnonzero(candidates)), return_counts=True)
    by_cand = {_pair(u): n for u, n in zip(keys.tolist(), counts.tolist(), strict=True)}
    cost = 0.0
    for (g, bits), part in by_pattern(lay, rows).items():
        if len(part) < MIN_TARGETS:
            cost += len(part) * n_cand
            continue
        query = QUERY * 2.0 ** bin(bits).count("1")
        sizes = [n for (gc, cb), n in by_cand.items() if gc == g and cb & bits]
        trees = sorted((n for n in sizes if n >= MIN_TREE), reverse=True)
        small = sum(n for n in sizes if n < MIN_TREE)
        tree_cost = sum(min(n, query if i == 0 else query * FURTHER) for i, n in enumerate(trees))
        cost += len(part) * (tree_cost + DIRECT_PAIR * small)
    return cost < 0.5 * len(rows) * n_cand
