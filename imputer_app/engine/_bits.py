"""Rows of a bool mask packed into 64-bit words, and distinct codes (numpy only).

Two rows' masks ANDed word by word and their bits counted (``np.bitwise_count``) give
the number of columns both rows have: whole numbers, the same however the pairs are
grouped, at a 64th of the reads of the mask itself.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from imputer_app.work import row_slices

IntArray = NDArray[np.intp]

#: :func:`distinct` marks codes in a table instead of sorting them when there are at most
#: this many possible codes per code given (the table is scanned once) ...
DISTINCT_SPARSITY = 8
#: ... and at most this many in all.
DISTINCT_TABLE = 2**24


def packed_rows(mask: NDArray[np.bool_]) -> NDArray[np.uint64]:
    """``mask`` (n, p) packed row by row into ``ceil(p / 64)`` words of 64 bits, zero padded."""
    n_bytes = -(-mask.shape[1] // 8)
    words = np.zeros((len(mask), 8 * -(-n_bytes // 8)), dtype=np.uint8)
    for part in row_slices(len(mask)):  # packbits holds Python's lock: a long mask in slices
        words[part, :n_bytes] = np.packbits(mask[part], axis=1)
    return words.view(np.uint64)


def count_distinct(*rows: IntArray) -> int:
    """How many distinct row numbers (0 or more) the arrays ``rows`` hold together.

    ``len(np.union1d(a, b))`` by marking a table: the same count, without the hashed
    unique that holds Python's lock for a tenth of a second at a million rows.
    """
    seen = np.zeros(max((int(r.max(initial=-1)) for r in rows), default=-1) + 1, dtype=bool)
    for r in rows:
        seen[r] = True
    return int(np.count_nonzero(seen))


def common_bits(words: NDArray[np.uint64], rows: IntArray, others: IntArray) -> IntArray:
    """Bits set in both ``words[rows]`` and ``words[others]``: shape of ``others``.

    ``rows`` has one dimension fewer than ``others`` (each row against its others) or
    the same shape (pair by pair).
    """
    if others.ndim > rows.ndim:
        rows = rows[..., None]
    if words.shape[1] == 1:  # up to 64 columns: one word a row
        return np.bitwise_count(words[rows, 0] & words[others, 0]).astype(np.intp)
    return np.bitwise_count(words[rows] & words[others]).sum(axis=-1, dtype=np.intp)


def distinct(codes: NDArray[np.int64], bound: int) -> tuple[NDArray[np.int64], IntArray]:
    """``np.unique(codes, return_inverse=True)`` for codes in ``0..bound-1``.

    When ``bound`` is small next to the number of codes, they are marked in a table
    and numbered in order: the same result without sorting (a wide sheet asks for
    hundreds of thousands of codes that hold a few thousand distinct pairs).
    """
    if bound > min(DISTINCT_TABLE, DISTINCT_SPARSITY * len(codes)):
        # np.unique's own steps, spelled out: np.unique(return_inverse=True) held Python's
        # lock for 60-70 ms on 4,000,000 codes (the window stalls); these steps each let go
        # of it, in about the same time (measured side by side: 0.25-0.31 s against 0.25-0.43 s)
        order = np.argsort(codes)
        ordered = codes[order]
        first = np.empty(len(codes), dtype=bool)
        first[:1] = True
        np.not_equal(ordered[1:], ordered[:-1], out=first[1:])
        back = np.empty(len(codes), dtype=np.intp)
        back[order] = np.cumsum(first) - 1
        return ordered[first], back
    seen = np.zeros(int(bound), dtype=bool)
    seen[codes] = True
    pairs = np.flatnonzero(seen).astype(np.int64)
    number = np.empty(int(bound), dtype=np.intp)
    number[pairs] = np.arange(len(pairs))
    return pairs, number[codes]
