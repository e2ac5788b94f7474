"""Squared distances of given pairs of rows, summed from the rows' values (numpy only).

Where :mod:`~imputer_app.engine._distance` computes blocks of distances from matrix
products, the pairs here read ``p`` numbers per row instead of about ``5 p`` factors:
the search's checks of many scattered pairs (:meth:`RowPairs.search`, BLAS row sums)
and the exact distances of the chosen donors (:meth:`RowPairs.exact`, summed row by
row from ``x_j - y_j``: the same number for a pair whatever pairs come with it).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._bits import DISTINCT_TABLE, common_bits, distinct, packed_rows
from imputer_app.engine._dixon import product, ratio, row_sums, shifted
from imputer_app.work import WORKERS, row_slices

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

#: Pairs per batch (their temporaries stay in cache) ...
PAIR_BATCH = 4096
#: ... and at most this many values per temporary (a wide table takes fewer pairs per batch).
PAIR_VALUES = 2**16
#: Exact distances are worked out by WORKERS threads side by side (numpy lets go of the GIL)
#: when there are at least this many values (pairs x numeric columns) to go through.
THREADED_VALUES = 2**22
#: Pairs whose exact distances are worked out in one go: the steps over all of them (the
#: sort that finds repeated pairs among them) hold Python's lock now and then, for a time
#: that grows with their number (200 ms for 12 million pairs: the window stalls).
EXACT_SLICE = 1 << 20


class RowPairs:
    """Dixon's weighted distance with Gower's matching for given pairs of rows.

    The parameters are the arrays and numbers of
    :class:`~imputer_app.engine._distance.Features` (numbers with NaN gaps and their
    weights, class codes with -1 gaps and their weights, ``W_all`` and the mismatch).
    """

    def __init__(
        self,
        numbers: FloatArray,
        weights: FloatArray,
        codes: IntArray,
        code_weights: FloatArray,
        total_weight: float,
        mismatch: float,
    ) -> None:
        self._x, self._codes = numbers, codes
        self._p = numbers.shape[1]
        self._w = np.asarray(weights, dtype=np.float64)
        self._tw_w = self._w * total_weight
        self._cw = np.asarray(code_weights, dtype=np.float64)
        self._tw_cw = self._cw * (total_weight * mismatch)

    @cached_property
    def shifted_values(self) -> tuple[FloatArray, NDArray[np.bool_]]:
        """:func:`~imputer_app.engine._dixon.shifted` numbers of every column, and where they are observed.

        Kept here for the owner's factor products too: the shift is worked out once.
        """
        return shifted(self._x)

    @cached_property
    def _values(self) -> tuple[FloatArray, IntArray]:
        """Shifted numbers with NaN gaps and class codes, row-major, for :meth:`search`.

        Built on first use (a search whose head covers every candidate never needs them).
        """
        z, mask = self.shifted_values
        z = np.array(z, order="C")  # row-major: pairs gather rows
        z[~mask] = np.nan  # a difference with a gap is NaN
        return z, np.ascontiguousarray(self._codes, dtype=np.intp)

    def search(self, x: IntArray, y: IntArray) -> FloatArray:
        """The search's squared distances of the pairs (x[i], y[i]), shape (len(x),).

        Computed from the rows' values (``p`` numbers each) rather than their factors
        (about ``5 p``): the search calls this for many pairs, and reading fewer numbers
        per pair is what costs. Whole numbers with power-of-two weights give exactly the
        block's values (ties stay ties); otherwise they agree up to rounding.
        """
        x, y = np.asarray(x, dtype=np.intp), np.asarray(y, dtype=np.intp)
        out = np.empty(len(x))
        step = self._pair_batch()
        for start in range(0, len(x), step):  # batches small enough to stay in cache
            part = slice(start, start + step)
            out[part] = self._pairs(x[part], y[part])
        return out

    def exact(self, x: IntArray, y: IntArray) -> FloatArray:
        """Squared distances of the pairs (x[i], y[i]) from the rows' differences, shape (len(x),).

        Dixon's weighted form with Gower's matching, summed from ``x_j - y_j`` of the
        scaled values (not shifted, not from products): rows with equal values are at
        distance exactly 0, and the result depends only on the two rows. Used for the
        chosen candidates only, before ties, weights and the fill log. Each distinct pair
        is computed once, in either order (``x - y`` and ``y - x`` square to the same
        numbers): a row's cells in many fill columns share most of their donors (on a
        wide sheet, thousands of cells per pair of rows).
        """
        x, y = np.asarray(x, dtype=np.intp), np.asarray(y, dtype=np.intp)
        out = np.empty(len(x))
        # a long table's pairs are sorted to find the repeated ones: in slices (each pair's
        # number is its own); a short one's are marked in a table, all at once (a wide
        # sheet repeats its few pairs thousands of times)
        many = self._rows.shape[0] ** 2 > DISTINCT_TABLE
        for part in row_slices(len(x), EXACT_SLICE if many else max(len(x), 1)):
            out[part] = self._exact_distinct(x[part], y[part])
        return out

    def _exact_distinct(self, x: IntArray, y: IntArray) -> FloatArray:
        """:meth:`exact` of some pairs, each distinct pair once."""
        n = np.int64(self._rows.shape[0])
        low, high = np.minimum(x, y).astype(np.int64), np.maximum(x, y).astype(np.int64)
        pairs, back = distinct(low * n + high, int(n * n))
        ux, uy = (part.astype(np.intp) for part in np.divmod(pairs, n))
        out = np.empty(len(pairs))
        step = self._pair_batch()
        starts = np.arange(0, len(pairs), step)

        def run(some: IntArray) -> None:
            # two buffers for every batch: fresh temporaries this size cost their page faults
            buffers = np.empty((2, min(step, len(pairs)), self._p))
            for start in some.tolist():
                part = slice(start, start + step)
                out[part] = self._exact_pairs(ux[part], uy[part], buffers)

        if len(pairs) * max(self._p, 1) < THREADED_VALUES or len(starts) < WORKERS:
            run(starts)
        else:  # each pair's numbers are its own: threads may share the batches
            with ThreadPoolExecutor(WORKERS, thread_name_prefix="kinfill-exact") as pool:
                list(pool.map(run, np.array_split(starts, WORKERS)))
        return out[back]

    def _exact_pairs(self, x: IntArray, y: IntArray, buffers: FloatArray) -> FloatArray:
        """Exact squared distances of the pairs (x[i], y[i]), worked in ``buffers`` (2, >= len(x), p).

        Each pair's sums run over its own row of the buffers: the same numbers for a
        pair whatever pairs come with it.
        """
        sq, other = buffers[0, : len(x)], buffers[1, : len(x)]
        np.take(self._rows, x, axis=0, out=sq)
        np.take(self._rows, y, axis=0, out=other)
        sq -= other
        sq *= sq  # NaN where either row lacks the column
        bits = self._observed_bits
        if self._same_weight is not None and bits is not None:
            # equal power-of-two weights: every partial sum of the weights is exact, so
            # weight x (columns not shared) is the very number the row sum gives; the
            # columns shared are counted on the rows' packed masks
            lacking = self._same_weight * (self._p - common_bits(bits, x, y))
        else:
            lacking = row_sums(np.isnan(sq).astype(np.float64), self._w)
        # 0 exactly when no column is shared
        shared = self._w.sum() - lacking
        np.fmax(sq, 0.0, out=sq)  # a gap's NaN adds 0
        np.multiply(sq, self._tw_w, out=sq)
        total = sq.sum(axis=1)
        if self._codes.shape[1]:
            cx, cy = np.take(self._codes, x, axis=0), np.take(self._codes, y, axis=0)
            seen = (cx >= 0) & (cy >= 0)
            total += row_sums((seen & (cx != cy)).astype(np.float64), self._tw_cw)
            shared += row_sums(seen.astype(np.float64), self._cw)
        return ratio(total, shared)

    @cached_property
    def _observed_bits(self) -> NDArray[np.uint64] | None:
        """Each row's observed numeric columns packed in 64-bit words (None when a value is infinite).

        Where both rows' bits are set, their difference is a number; elsewhere it is
        NaN (an infinite value could make it NaN too: then the NaN are counted instead).
        """
        rows = self._rows
        return None if np.isinf(rows).any() else packed_rows(~np.isnan(rows))

    @cached_property
    def _same_weight(self) -> float | None:
        """The weight every numeric column has, when it is one power of two (else None)."""
        w = self._w
        if not len(w) or not (w == w[0]).all():
            return None
        mantissa = np.frexp(w[:1])[0]
        return float(w[0]) if w[0] > 0 and mantissa[0] == 0.5 else None

    @cached_property
    def _rows(self) -> FloatArray:
        """The scaled numbers, row-major (a table read from a DataFrame is column-major)."""
        return np.ascontiguousarray(self._x)

    def _pair_batch(self) -> int:
        return max(16, min(PAIR_BATCH, PAIR_VALUES // max(self._p, 1)))

    def _pairs(self, x: IntArray, y: IntArray) -> FloatArray:
        """The search's squared distances of pairs (BLAS products: fast, rounding varies)."""
        z, codes = self._values
        sq = np.take(z, x, axis=0)
        sq -= np.take(z, y, axis=0)
        sq *= sq
        # 0 exactly when no column is shared (a float mask: a bool matrix product skips BLAS)
        shared = self._w.sum() - product(np.isnan(sq).astype(np.float64), self._w)
        np.fmax(sq, 0.0, out=sq)  # a gap's NaN adds 0
        total = product(sq, self._tw_w)
        if codes.shape[1]:
            cx, cy = np.take(codes, x, axis=0), np.take(codes, y, axis=0)
            seen = (cx >= 0) & (cy >= 0)
            total += product((seen & (cx != cy)).astype(np.float64), self._tw_cw)
            shared += product(seen.astype(np.float64), self._cw)
        return ratio(total, shared)
