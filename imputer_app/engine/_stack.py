"""Target cells of several fill columns as one flat set of donors (numpy only).

The search finds donors for every fill column at once; a :class:`Stack` keeps them
that way (one row per target cell, column after column), so that combining donors and
writing the fill log work on all columns together instead of column by column.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._search import ColumnDonors

IntArray = NDArray[np.intp]


@dataclass(frozen=True)
class Stack:
    """The target cells of several fill columns as one flat set of donors.

    Attributes
    ----------
    columns : tuple of str
    donors : ColumnDonors
        All cells, column after column (``rows`` ascending within a column).
    col : ndarray of int, shape (cells,)
        Position in ``columns`` of each cell's column.
    offsets : ndarray of int, shape (len(columns) + 1,)
        Cells of column ``i`` are ``offsets[i]:offsets[i + 1]``.
    """

    columns: tuple[str, ...]
    donors: ColumnDonors
    col: IntArray
    offsets: IntArray

    @classmethod
    def of(cls, donors: Mapping[str, ColumnDonors], columns: Sequence[str]) -> Stack:
        """Stack ``donors[c]`` for ``c`` in ``columns``."""
        parts = [donors[c] for c in columns]
        sizes = np.array([len(p.rows) for p in parts], dtype=np.intp)
        kmax = max((p.index.shape[1] for p in parts), default=0)
        flat = ColumnDonors(
            rows=np.concatenate([p.rows for p in parts]) if parts else np.empty(0, dtype=np.intp),
            index=np.vstack([p.index for p in parts]) if parts else np.empty((0, kmax), dtype=np.intp),
            distance=np.vstack([p.distance for p in parts]) if parts else np.empty((0, kmax)),
            count=np.concatenate([p.count for p in parts]) if parts else np.empty(0, dtype=np.intp),
        )
        return cls(tuple(columns), flat, np.repeat(np.arange(len(parts)), sizes), _offsets(sizes))

    @classmethod
    def of_cells(cls, columns: Sequence[str], donors: ColumnDonors, col: IntArray) -> Stack:
        """A stack from flat cells sorted by column (``col``: position in ``columns``)."""
        bounds = np.searchsorted(col, np.arange(len(columns) + 1)).astype(np.intp)
        return cls(tuple(columns), donors, np.asarray(col, dtype=np.intp), bounds)

    def per_column(self) -> dict[str, ColumnDonors]:
        """The donors of each column's cells (the inverse of :meth:`of`)."""
        d, bounds = self.donors, self.offsets
        return {
            c: ColumnDonors(d.rows[a:b], d.index[a:b], d.distance[a:b], d.count[a:b])
            for c, a, b in zip(self.columns, bounds[:-1], bounds[1:], strict=True)
        }

    def split(self, values: NDArray[Any]) -> dict[str, NDArray[Any]]:
        """Per column, the part of a per-cell array that belongs to it."""
        return {
            c: values[a:b] for c, a, b in zip(self.columns, self.offsets[:-1], self.offsets[1:], strict=True)
        }

    def select(self, columns: Sequence[str]) -> Stack:
        """The cells of ``columns`` only (kept in this stack's column order)."""
        wanted = set(columns)
        chosen = np.fromiter((c in wanted for c in self.columns), dtype=bool, count=len(self.columns))
        if chosen.all():
            return self
        keep = chosen[self.col]
        d = self.donors
        flat = ColumnDonors(d.rows[keep], d.index[keep], d.distance[keep], d.count[keep])
        names = tuple(c for c, ok in zip(self.columns, chosen.tolist(), strict=True) if ok)
        renumber = np.cumsum(chosen) - 1
        return Stack(names, flat, renumber[self.col[keep]], _offsets(np.diff(self.offsets)[chosen]))

    def gather(self, vectors: Sequence[NDArray[Any]], fill: float = np.nan) -> NDArray[Any]:
        """Donors' entries of per-column vectors, shape (cells, kmax); ``fill`` pads.

        Parameters
        ----------
        vectors : sequence of ndarray of shape (n_rows,)
            One per column of the stack, in order (values or class codes).
        fill : float
            Written where there is no donor.
        """
        index = self.donors.index
        if not len(vectors) or not len(index):
            return np.full(index.shape, fill)
        n = len(vectors[0])
        flat = np.concatenate(vectors)  # one flat copy beats an (n_rows, columns) matrix
        got = flat[self.col[:, None] * n + np.maximum(index, 0)]
        return np.where(index >= 0, got, fill)


def _offsets(sizes: IntArray) -> IntArray:
    return np.concatenate([[0], np.cumsum(sizes)]).astype(np.intp)
