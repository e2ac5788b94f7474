"""The tree path's search for target rows of rare gap patterns: candidates in boxes (numpy only).

A target pattern too rare for trees of its own (they would be built for a few rows)
meets every candidate through boxes instead. Each candidate pattern's rows are split at
the median of their widest column until at most :data:`BOX` rows are left, and each box
keeps its rows' least and greatest value per column. For a target ``t`` and a box of
pattern ``C`` with shared columns ``S``, every candidate in the box is at least
``f x sum_{j in S} gap_j^2`` away (``gap_j`` how far ``t_j`` lies outside the box's
range, ``f = W_all / W_S``): a lower bound of Dixon's distance. Each target first
measures the candidates of the :data:`SEED` boxes whose mean is nearest to it, whose
``size``-th distance bounds its ``size``-th nearest from above; then only the boxes
whose lower bound is within that reach are compared, one matrix product per box for all
the targets it may serve (the product form of the direct comparison, gaps 0). Pruning
boxes by lower bounds is the principle of every k-d tree (common practice, no source);
flat boxes serve targets of any gap pattern at once, which no tree over fixed columns does.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from imputer_app.engine._patterns import BoolArray, FloatArray, IntArray, Layout
from imputer_app.engine._tree_direct import ROUGH_MAX, Single, joined, rough_hits, rough_slack

#: Most candidate rows per box. Measured on 1,048,576 x 10 normal columns with 5 % gaps, CPU
#: time a rare row before the single-precision pass: 1.5 ms at 512, 1.2 at 1,024, 0.9-1.0 at
#: 2,048 (the whole search the same at 1,024 and 2,048), 0.95 at 4,096; smaller boxes bound
#: closer on smaller sheets.
BOX = 1024
#: Boxes whose mean is nearest, measured first by each target for its reach.
SEED = 16
#: Target rows taken together (their bounds to every box are held at once).
ROWS = 1024


@dataclass(frozen=True)
class Boxes:
    """Candidate rows in boxes, each of one gap pattern."""

    rows: IntArray  # candidate rows, box after box
    starts: IntArray  # each box's first position in ``rows``, and the end
    lo: FloatArray  # (boxes, p): least coordinate per column (0 where the pattern has a gap)
    hi: FloatArray  # (boxes, p): greatest
    mask: BoolArray  # (boxes, p): the box's pattern
    middle_side: FloatArray  # (boxes, 3p): the mean of its rows as a candidate's side of the product
    right: FloatArray  # (rows, 3p): the candidates' side of the product, [m | -2c | c^2]
    rough: Single | None  # ``right`` in single precision for a first pass (None: too large)
    most: FloatArray  # (boxes, 3p): the largest ``|right|`` per column in each box
    place: IntArray  # each sheet row's position in ``rows``, or -1


def boxes_of(lay: Layout, parts: list[IntArray]) -> Boxes:
    """The rows of each candidate pattern (``parts``, one each) in boxes of :data:`BOX` rows at most."""
    rows, starts = [], [0]
    for part in parts:
        order, cuts = _median_boxes(lay.x[np.ix_(part, lay.columns(int(lay.pattern[part[0]])))])
        rows.append(part[order])
        starts += (starts[-1] + cuts[1:]).tolist()
    at = np.concatenate(rows)
    cut = np.asarray(starts, dtype=np.intp)
    c, m = lay.x[at], lay.mask[at]
    place = np.full(len(lay.x), -1, dtype=np.intp)
    place[at] = np.arange(len(at))
    right, first = _side(m, c), cut[:-1]
    lo, hi, mask = np.minimum.reduceat(c, first, axis=0), np.maximum.reduceat(c, first, axis=0), m[first]
    size = np.maximum(np.abs(lo), np.abs(hi))
    most = np.hstack([mask, 2.0 * size, size * size])  # the largest |right| per column and box
    return Boxes(
        rows=at,
        starts=cut,
        lo=lo,
        hi=hi,
        mask=mask,
        middle_side=_side(mask, np.add.reduceat(c, first, axis=0) / np.diff(cut)[:, None]),
        right=right,
        rough=right.astype(np.float32) if most.max(initial=0.0) <= ROUGH_MAX else None,
        most=most,
        place=place,
    )


def _side(m: BoolArray, c: FloatArray) -> FloatArray:
    """Candidates' side of the product form of ``d^2 / f``, ``[m | -2c | c^2]`` (gaps 0).

    Written in place, part by part: for a million candidates the side is 240 MB.
    """
    p = c.shape[1]
    side = np.empty((len(c), 3 * p))
    side[:, :p] = m
    np.multiply(c, -2.0, out=side[:, p : 2 * p])
    np.multiply(c, c, out=side[:, 2 * p :])
    return side


def _median_boxes(coords: FloatArray) -> tuple[IntArray, IntArray]:
    """An order of ``coords`` in boxes of at most :data:`BOX` rows, and the boxes' bounds in it."""
    order = np.arange(len(coords))
    cuts, stack = [len(coords)], [(0, len(coords))]
    while stack:
        a, b = stack.pop()
        if b - a <= BOX:
            cuts.append(a)
            continue
        seg = order[a:b]
        pts = coords[seg]
        dim = int(np.argmax(pts.max(axis=0) - pts.min(axis=0)))
        half = (b - a) // 2
        order[a:b] = seg[np.argpartition(pts[:, dim], half)]
        stack += [(a, a + half), (a + half, b)]
    return order, np.unique(np.asarray(cuts, dtype=np.intp))


def scan_hits(
    lay: Layout, boxes: Boxes, batch: IntArray, size: int, noise: float
) -> tuple[IntArray, IntArray, FloatArray]:
    """The pairs of ``batch`` (target rows of any pattern) and candidates within each target's reach.

    A target's reach is the ``size``-th least ``d^2`` among the candidates of the
    :data:`SEED` boxes whose mean is nearest to it, plus ``noise`` (the rounding allowance
    of the product form); ``inf`` when there are no more than ``size`` candidates. Every
    candidate within reach is returned, so the target's ``size`` nearest are among them.

    Returns
    -------
    at, index, d2 : ndarray
        Target position in ``batch``, candidate row and ``d^2`` (product form, at least
        0) of each pair kept; never a row with itself.
    """
    return joined([_scan_rows(lay, boxes, batch, part, size, noise) for part in _chunks(len(batch))])


def _chunks(n: int) -> Iterator[IntArray]:
    """Positions ``0..n-1`` in runs of :data:`ROWS`."""
    for i in range(0, n, ROWS):
        yield np.arange(i, min(i + ROWS, n))


def _scan_rows(
    lay: Layout, boxes: Boxes, batch: IntArray, part: IntArray, size: int, noise: float
) -> tuple[IntArray, IntArray, FloatArray]:
    """:func:`scan_hits` for the targets at positions ``part`` of ``batch``."""
    rows = batch[part]
    t, m = lay.x[rows], lay.mask[rows]
    # every array here is (targets x boxes), made in place: a few of them bound the memory
    shared = (m * lay.weights) @ boxes.mask.T  # W_S of every target and box
    factor = np.divide(lay.total, shared, out=np.zeros_like(shared), where=shared > 0)  # 0: none shared
    del shared
    bound, gap, out = np.zeros(factor.shape), np.empty(factor.shape), np.empty(factor.shape)
    for j in range(t.shape[1]):  # how far each target lies outside each box, column by column
        np.subtract(boxes.lo[:, j], t[:, j, None], out=gap)
        np.maximum(gap, np.subtract(t[:, j, None], boxes.hi[:, j], out=out), out=gap)
        np.maximum(gap, 0.0, out=gap)
        gap *= gap
        gap *= m[:, j, None] & boxes.mask[:, j]
        bound += gap
    bound *= factor
    bound[factor == 0] = np.inf
    del gap, out
    left = np.hstack([t * t, t, m.astype(np.float64)])
    # the seeds are the boxes whose mean is nearest (in the product form, as the distances)
    near = left @ boxes.middle_side.T
    np.maximum(near, 0.0, out=near)
    near *= factor
    near[factor == 0] = np.inf
    r, b = _seed_pairs(near, np.diff(boxes.starts), size)
    del near
    reach = _seed_reach(boxes, left, rows, factor, r, b, size) + noise
    # a box is compared with a target only if its bound is within the target's reach
    r, b = np.nonzero((bound <= reach[:, None] * (1 + 1e-9)) & (bound < np.inf))
    return _products(boxes, left, rows, factor, r, b, reach, part)


def _seed_pairs(bound: FloatArray, sizes: IntArray, size: int) -> tuple[IntArray, IntArray]:
    """(target, box) pairs that first set each target's reach.

    ``bound`` ranks the boxes; a target takes its :data:`SEED` first among those of more
    than ``size`` rows, or, where none shares a column with it, its boxes in order until they
    hold more than ``size`` rows (one may be the target itself).
    """
    m, seed = bound.shape[0], min(SEED, bound.shape[1])
    big = np.where(sizes > size, bound, np.inf)
    first = np.argpartition(big, seed - 1, axis=1)[:, :seed]
    r, b = np.repeat(np.arange(m), seed), first.ravel()
    has = np.isfinite(big[r, b])
    lone = np.flatnonzero(~has.reshape(m, seed).any(axis=1))
    r, b = r[has], b[has]
    if len(lone):
        order = np.argsort(bound[lone], axis=1, kind="stable")
        held = np.where(np.isfinite(np.take_along_axis(bound[lone], order, axis=1)), sizes[order], 0)
        take = (np.cumsum(held, axis=1) - held <= size) & (held > 0)
        i, j = np.nonzero(take)
        r, b = np.concatenate([r, lone[i]]), np.concatenate([b, order[i, j]])
    return r, b


def _seed_reach(
    boxes: Boxes, left: FloatArray, rows: IntArray, factor: FloatArray, r: IntArray, b: IntArray, size: int
) -> FloatArray:
    """Each target's ``size``-th least ``d^2`` among the candidates of its seed boxes (``inf``: fewer)."""
    order = np.argsort(r, kind="stable")
    r, b = r[order], b[order]
    slot = (np.arange(len(r)) - np.searchsorted(r, r)) * size
    best = np.full((len(rows), int(slot.max(initial=0)) + size), np.inf)
    for who, box in _by_box(r, b):
        d2 = _box_d2(boxes, left, rows, factor, r[who], box)
        keep = min(size, d2.shape[1])
        if keep < d2.shape[1]:
            d2 = np.partition(d2, keep - 1, axis=1)
        best[r[who][:, None], slot[who][:, None] + np.arange(keep)] = d2[:, :keep]
    return np.partition(best, size - 1, axis=1)[:, size - 1]


def _products(
    boxes: Boxes,
    left: FloatArray,
    rows: IntArray,
    factor: FloatArray,
    r: IntArray,
    b: IntArray,
    reach: FloatArray,
    part: IntArray,
) -> tuple[IntArray, IntArray, FloatArray]:
    """The pairs within reach among the (target ``r``, box ``b``) pairs: one product per box."""
    found = []
    for who, box in _by_box(r, b):
        if boxes.rough is not None and np.isfinite(reach[r[who]]).all():
            hits = _rough_products(boxes, left, rows, factor, r[who], box, reach)
            if hits is not None:
                found.append((part[hits[0]], *hits[1:]))
                continue
        d2 = _box_d2(boxes, left, rows, factor, r[who], box)
        near = d2 <= reach[r[who], None]
        if not np.isfinite(reach[r[who]]).all():  # no reach: all but the row itself
            near &= d2 < np.inf
        i, k = np.divmod(np.flatnonzero(near), d2.shape[1])
        if len(i):
            found.append((part[r[who][i]], boxes.rows[boxes.starts[box] + k], np.maximum(d2[i, k], 0.0)))
    return joined(found)


def _rough_products(
    boxes: Boxes,
    left: FloatArray,
    rows: IntArray,
    factor: FloatArray,
    who: IntArray,
    box: int,
    reach: FloatArray,
) -> tuple[IntArray, IntArray, FloatArray] | None:
    """:func:`_products` for one box with a first pass in single precision (None: values too large).

    The pairs that pass are measured again in double precision and kept only within reach.
    """
    assert boxes.rough is not None
    side = left[who] * factor[who, box][:, None]
    if np.abs(side).max(initial=0.0) > ROUGH_MAX:
        return None
    lo, hi = boxes.starts[box], boxes.starts[box + 1]
    sides = (side, side.astype(np.float32), boxes.right[lo:hi], boxes.rough[lo:hi])
    cand = boxes.rows[lo:hi]
    i, k, d2 = rough_hits(*sides, reach[who], rough_slack(side, boxes.most[box]), rows[who], cand)
    return who[i], cand[k], d2


def _by_box(r: IntArray, b: IntArray) -> Iterator[tuple[IntArray, int]]:
    """Positions of the pairs ``(r, b)`` box by box, and the box."""
    order = np.argsort(b, kind="stable")
    cuts = np.flatnonzero(np.diff(b[order])) + 1
    for who in np.split(order, cuts):
        if len(who):
            yield who, int(b[who[0]])


def _box_d2(
    boxes: Boxes, left: FloatArray, rows: IntArray, factor: FloatArray, who: IntArray, box: int
) -> FloatArray:
    """``d^2`` (product form) of the targets ``who`` and the candidates of ``box`` (a row itself: inf).

    Every target shares a column with the box (the callers leave out pairs of factor 0).
    """
    lo, hi = boxes.starts[box], boxes.starts[box + 1]
    # the factor goes on the targets' side: one pass over the product fewer
    d2 = (left[who] * factor[who, box][:, None]) @ boxes.right[lo:hi].T
    own = boxes.place[rows[who]] - lo
    mine = np.flatnonzero((own >= 0) & (own < hi - lo))
    d2[mine, own[mine]] = np.inf
    return d2
