"""Weighted missing-aware distance between rows (numpy only).

Dixon's (1979) distance for rows with gaps, weighted per column, with Gower's (1971)
matching rule for categorical columns::

    d^2(x, y) = (W_all / W_shared) * sum over shared columns j of w_j * delta_j^2

where ``W_all`` is the total weight of the similarity columns, ``W_shared`` the
weight of the columns both rows have, ``delta_j = x_j - y_j`` for numbers (already
scaled) and ``delta_j^2 = c [x_j != y_j]`` for categories, ``c`` the mismatch factor
(:attr:`Features.mismatch`). Rows sharing no column have
no distance (``inf`` here, NaN in :func:`~imputer_app.engine._pairwise.pairwise_distances`).

With all weights 1 and numeric columns only this is scikit-learn's
``nan_euclidean_distances``. Every term is computed from matrix products (BLAS) of
per-row factor matrices built once, so a block of ``m`` rows against all ``n`` rows
costs two products of shape (m, K) x (K, n).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._dixon import ratio, shifted
from imputer_app.engine._row_pairs import RowPairs

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

#: Numeric columns per slab in :meth:`DistanceModel.gram` (bounds its temporaries).
SLAB = 1024
#: Relative size of the rounding noise allowed for in a product-form squared distance.
NOISE = 1e-11
#: More different column weights than this: :meth:`DistanceModel.gram` weighs per column.
WEIGHT_GROUPS = 4


@dataclass(frozen=True)
class Features:
    """The similarity columns of a table as arrays.

    Attributes
    ----------
    numbers : ndarray of shape (n_rows, n_numeric)
        Scaled numeric similarity columns, NaN for gaps.
    number_weights : ndarray of shape (n_numeric,)
    codes : ndarray of int, shape (n_rows, n_categorical)
        Class codes 0..n_classes-1 of categorical similarity columns, -1 for gaps.
    code_weights : ndarray of shape (n_categorical,)
    total_weight : float
        Sum of the weights of all similarity columns used in the distance.
    mismatch : float, default=1
        What a category mismatch adds to ``delta^2`` (before its column's weight):
        Gower's matching rule gives 1; :func:`~imputer_app.engine._columns.scaled_features`
        sets the mean squared difference of a numeric column under the plan's scaling.
    """

    numbers: FloatArray
    number_weights: FloatArray
    codes: IntArray
    code_weights: FloatArray
    total_weight: float
    mismatch: float = 1.0

    @property
    def n_rows(self) -> int:
        """Number of rows."""
        return int(self.numbers.shape[0])

    def present(self) -> NDArray[np.bool_]:
        """Bool (n_rows,): the row has at least one similarity value."""
        return np.asarray(np.isfinite(self.numbers).any(axis=1) | (self.codes >= 0).any(axis=1), dtype=bool)


@dataclass(frozen=True)
class Candidates:
    """Right-hand factors of the rows that may be donors.

    Attributes
    ----------
    index : ndarray of int, shape (n_candidates,)
        Row positions, ascending.
    right : ndarray of shape (n_candidates, K + K_shared)
        The distance factors followed by the shared-weight factors.
    """

    index: IntArray
    right: FloatArray

    def __len__(self) -> int:
        return len(self.index)


@dataclass(frozen=True)
class Targets:
    """Target rows and their left-hand factors (computed once per chunk).

    Attributes
    ----------
    rows : ndarray of int, shape (m,)
    left : ndarray of shape (m, K + K_shared)
    """

    rows: IntArray
    left: FloatArray

    def subset(self, sel: IntArray) -> Targets:
        """The targets ``sel`` (positions within this chunk)."""
        return Targets(self.rows[sel], self.left[sel])


class DistanceModel:
    """Factor matrices from which distance blocks are matrix products.

    Parameters
    ----------
    features : Features
        The rows to compare.

    Notes
    -----
    ``sum_j w m_x m_y (x - y)^2 = (w x^2) . m_y + m_x . (w y^2) - 2 (w x) . y`` with
    ``x, y`` zero-filled and ``m`` the observed masks; the categorical mismatch is
    ``sum_j w_j m_x m_y - sum_j w_j [x_j == y_j]`` with one-hot class indicators; the
    shared weight is ``(w m_x) . m_y``. The total weight is folded into the left
    factors. Each column is first shifted (:func:`~imputer_app.engine._dixon.shifted`).
    The factors are built on first use: when targets and candidates are the same rows,
    :meth:`gram` works from the numbers slab by slab instead.
    """

    def __init__(self, features: Features) -> None:
        self._x = x = features.numbers
        n, p = x.shape
        self._onehot, self._cmask = _onehot(features.codes)
        tw = float(features.total_weight)
        w, cw = features.number_weights, features.code_weights
        q, h = self._cmask.shape[1], self._onehot.shape[1]
        self.width = 3 * p + q + h  # distance factors; the shared-weight factors follow
        self.factor_width = self.width + p + q
        self._p = p
        self._codes = features.codes
        self._w = np.asarray(w, dtype=np.float64)
        mis = float(features.mismatch)
        self._cw, self._tw_cw = np.asarray(cw, dtype=np.float64), cw * (tw * mis)
        self._mis = mis
        self._tw = tw
        # left: w z^2 | w m | w z | cw cmask | -cw onehot (all x W_all) || w m | cw cmask, which is
        # right with the first two blocks swapped, times a scale per column: built per chunk
        self._scale = np.concatenate(
            [w * tw, w * tw, w * (-tw / 2), self._tw_cw, -_expand(self._tw_cw, features.codes), w, cw]
        )
        self.n_rows = int(n)
        z2 = float(np.fmax.reduce(np.abs(x), axis=None, initial=0.0)) ** 2 if x.size else 0.0
        # bound on the rounding of a product-form d^2 (its terms are at most tw x max z^2 each,
        # shifted values are smaller still); the exact form decides, this only says how far to look
        self.noise = NOISE * tw * max(z2, mis, 1e-300)
        self._row_pairs = RowPairs(x, w, features.codes, cw, tw, mis)

    @property
    def _shifted(self) -> tuple[FloatArray, NDArray[np.bool_]]:
        """Shifted numbers of every column and where they are observed (worked out once, by the pairs)."""
        return self._row_pairs.shifted_values

    @cached_property
    def right(self) -> FloatArray:
        """Right-hand factors of every row: ``m | z^2 | -2z | cmask | onehot || m | cmask``.

        Built on first use: a search that only needs :meth:`square` never pays for them
        (``5 p`` numbers per row).
        """
        p, k = self._p, self.width
        (z, mask), q = self._shifted, self._cmask.shape[1]
        right = np.empty((self.n_rows, self.factor_width))
        # written in place: no temporaries
        right[:, :p] = mask
        np.multiply(z, z, out=right[:, p : 2 * p])
        np.multiply(z, -2.0, out=right[:, 2 * p : 3 * p])
        right[:, 3 * p : 3 * p + q] = self._cmask
        right[:, 3 * p + q : k] = self._onehot
        right[:, k : k + p] = mask
        right[:, k + p :] = self._cmask
        return right

    def targets(self, rows: IntArray) -> Targets:
        """``rows`` with their left-hand factors."""
        rows = np.asarray(rows, dtype=np.intp)
        right, p = self.right[rows], self._p
        left = np.empty_like(right)
        left[:, :p], left[:, p : 2 * p], left[:, 2 * p :] = (
            right[:, p : 2 * p],
            right[:, :p],
            right[:, 2 * p :],
        )
        left *= self._scale
        return Targets(rows, left)

    def candidates(self, index: IntArray | None = None) -> Candidates:
        """Right-hand factors of the rows ``index`` (all rows when None), copied once."""
        if index is None or len(index) == self.n_rows:
            return Candidates(np.arange(self.n_rows), self.right)
        return Candidates(np.asarray(index, dtype=np.intp), np.ascontiguousarray(self.right[index]))

    def products(
        self, targets: Targets, cand: Candidates, part: slice = slice(None)
    ) -> tuple[FloatArray, FloatArray]:
        """The two matrix products behind a distance block.

        Returns
        -------
        total : ndarray of shape (m, n_part)
            ``W_all x sum_j w_j delta_j^2`` over the shared columns (exactly 0 when none).
        shared : ndarray of shape (m, n_part)
            ``W_shared``, the weight of the shared columns.
        """
        left, right, k = targets.left, cand.right[part], self.width
        return left[:, :k] @ right[:, :k].T, left[:, k:] @ right[:, k:].T

    def excess(
        self,
        targets: Targets,
        bound: FloatArray,
        cand: Candidates,
        part: slice,
        out: FloatArray | None = None,
    ) -> FloatArray:
        """``total - bound x shared`` per pair in one product: negative where d^2 < bound.

        Parameters
        ----------
        targets : Targets
            The target rows.
        bound : ndarray of shape (m,)
            Finite squared distance per target row.
        cand : Candidates
            The candidate rows' factors.
        part : slice
            A contiguous run of the candidates.
        out : ndarray of shape (m, n_part), optional
            C-contiguous array to write into (a buffer reused tile after tile: a fresh
            block per tile costs its page faults, measured about a third of the product).

        Returns
        -------
        ndarray of shape (m, n_part)
            0 where the rows share no column.
        """
        left = targets.left.copy()
        left[:, self.width :] *= -bound[:, None]
        return np.matmul(left, cand.right[part].T, out=out)

    def pairs(self, targets: Targets, which: IntArray, others: IntArray) -> FloatArray:
        """Squared distances of the pairs (targets.rows[which[i]], others[i]), shape (len(which),).

        From the rows' values (:meth:`~imputer_app.engine._row_pairs.RowPairs.search`):
        whole numbers with power-of-two weights give exactly the block's values (ties
        stay ties); otherwise they agree up to rounding.
        """
        return self._row_pairs.search(targets.rows[which], others)

    def exact(self, x: IntArray, y: IntArray) -> FloatArray:
        """Exact squared distances of the pairs (x[i], y[i]), shape (len(x),).

        Summed from the rows' differences (:meth:`~imputer_app.engine._row_pairs.RowPairs.exact`):
        rows with equal values are at distance exactly 0 and the result depends only on
        the two rows. Used for the chosen candidates only.
        """
        return self._row_pairs.exact(x, y)

    def block(self, targets: Targets, cand: Candidates, part: slice = slice(None)) -> FloatArray:
        """Squared distances from ``rows`` to the candidates ``cand.index[part]``.

        Parameters
        ----------
        targets : Targets
            The target rows.
        cand : Candidates
            The candidate rows' factors.
        part : slice, default=all
            A contiguous run of the candidates.

        Returns
        -------
        ndarray of shape (m, n_part)
            Squared distances clipped at 0; ``inf`` where the rows share no column.
        """
        total, shared = self.products(targets, cand, part)
        return ratio(total, shared, out=total)

    def slabs(self, parts: int = 1) -> list[tuple[IntArray, float | None]]:
        """Numeric columns in runs at most :data:`SLAB` wide, for :meth:`gram`.

        Columns are grouped by weight (when there are at most :data:`WEIGHT_GROUPS`
        different weights; otherwise one group with ``None``: a weight per column). Each
        group is cut into a multiple of ``parts`` runs of near-equal width, so that
        ``parts`` workers taking every ``parts``-th run share the work evenly. Columns
        of weight 0 add nothing and are left out.
        """
        w = self._w
        weights = np.unique(w[w > 0])
        groups: list[tuple[IntArray, float | None]] = [(np.flatnonzero(w == v), float(v)) for v in weights]
        if len(weights) > WEIGHT_GROUPS:
            groups = [(np.flatnonzero(w > 0), None)]
        out: list[tuple[IntArray, float | None]] = []
        for cols, weight in groups:
            runs = parts * math.ceil(len(cols) / (SLAB * parts))
            out += [(run, weight) for run in np.array_split(cols, runs) if len(run)]
        return out

    def gram(self, rows: IntArray, cols: IntArray, weight: float | None) -> tuple[FloatArray, FloatArray]:
        """The numeric columns ``cols`` among ``rows``, symmetric.

        ``sum_j m_x m_y (x - y)^2 = S + S^T - 2 z z^T`` with ``S = z^2 . m^T``: one general
        product and two symmetric ones (``a @ a.T``, which BLAS does in half the work),
        where :meth:`products` needs four general products against other rows. With a
        weight per column (``weight`` None) the two are general products of ``w z`` and
        ``w m``: three products in all.

        Parameters
        ----------
        rows : ndarray of int, shape (m,)
            Row positions, ascending.
        cols : ndarray of int
            Numeric column positions.
        weight : float or None
            The weight every column of ``cols`` has, or None to use each column's own.

        Returns
        -------
        total : ndarray of shape (m, m)
            ``sum_j w_j delta_j^2`` over the columns both rows have.
        shared : ndarray of shape (m, m)
            ``sum_j w_j`` over the columns both rows have.
        """
        # per slab, on the worker that asks: no full copy; any whole shift keeps the differences
        every = len(rows) == self.n_rows
        z, seen = shifted(self._x[:, cols] if every else self._x[np.ix_(rows, cols)])
        mask = seen.astype(np.float64)
        if weight is None:
            w = self._w[cols]
            total = np.matmul(z * z * w, mask.T)
            total += total.T.copy()
            total -= 2.0 * ((z * w) @ z.T)
            return total, (mask * w) @ mask.T
        total = np.matmul(z * z, mask.T)
        total += total.T.copy()
        total -= 2.0 * (z @ z.T)  # the same array on both sides: numpy asks BLAS for syrk
        # counts up to SLAB are exact in float32, whose product is twice as fast
        count = seen.astype(np.float32)
        shared = np.asarray(count @ count.T, dtype=np.float64)
        total *= weight
        shared *= weight
        return total, shared

    def gram_categories(self, rows: IntArray) -> tuple[FloatArray, FloatArray]:
        """:meth:`gram` for the categorical columns: mismatch weight and shared weight."""
        cmask, onehot = self._cmask[rows], self._onehot[rows]
        shared = (cmask * self._cw) @ cmask.T
        total = shared - (onehot * _expand(self._cw, self._codes)) @ onehot.T
        return total * self._mis, shared

    def square(self, rows: IntArray, total: FloatArray, shared: FloatArray) -> FloatArray:
        """Squared distances among ``rows`` from the summed :meth:`gram` parts (written into ``total``).

        Parameters
        ----------
        rows : ndarray of int, shape (m,)
            The rows the parts were summed over.
        total, shared : ndarray of shape (m, m)
            Sums of :meth:`gram` over :meth:`slabs`, without the categorical part.

        Returns
        -------
        ndarray of shape (m, m)
            Symmetric; ``inf`` where two rows share no column.
        """
        if self._codes.shape[1]:
            cat_total, cat_shared = self.gram_categories(rows)
            total += cat_total
            shared += cat_shared
        total *= self._tw
        return ratio(total, shared, out=total)

    def squared(self, rows: IntArray) -> tuple[FloatArray, NDArray[np.bool_]]:
        """Squared distances from ``rows`` to every row, and where rows share a column.

        Returns
        -------
        d2 : ndarray of shape (m, n_rows)
            ``inf`` where two rows share no column.
        shared : ndarray of bool, shape (m, n_rows)
        """
        d2 = self.block(self.targets(rows), self.candidates())
        return d2, np.isfinite(d2)


def _onehot(codes: IntArray) -> tuple[FloatArray, FloatArray]:
    """One-hot class indicators (n, sum of classes) and the observed mask (n, q)."""
    n, q = codes.shape
    cmask = (codes >= 0).astype(np.float64)
    if q == 0:
        return np.zeros((n, 0)), cmask
    sizes = np.maximum(codes.max(axis=0) + 1, 0)
    offsets = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    onehot = np.zeros((n, int(sizes.sum())))
    rows, cols = np.nonzero(codes >= 0)
    onehot[rows, offsets[cols] + codes[rows, cols]] = 1.0
    return onehot, cmask


def _expand(weights: FloatArray, codes: IntArray) -> FloatArray:
    """Repeat each categorical column's weight once per class (for the one-hot columns)."""
    if codes.shape[1] == 0:
        return np.zeros(0)
    sizes = np.maximum(codes.max(axis=0) + 1, 0)
    return np.repeat(weights, sizes)
