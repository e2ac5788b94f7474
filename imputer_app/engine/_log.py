"""Per-cell records behind the fill log and the table of cells left empty (numpy only).

Every value written (kNN fills of all fill columns at once, column means, censored
substitutions) is kept as a :class:`LogPiece` of arrays. :meth:`Records.log_table`
sorts all pieces by row and column once and turns the donor arrays into tuples in a
few passes, so that building the result only wraps finished columns in DataFrames.
"""

from __future__ import annotations

import gc
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from itertools import repeat
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._support import SUPPORT_WORDS
from imputer_app.work import row_slices

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]

#: Methods of the fill log (``LogPiece.method`` holds positions in this tuple).
METHODS = ("knn", "knn_capped", "column_mean", "limit", "half_limit", "limit_sqrt2", "ros")
KNN, KNN_CAPPED, COLUMN_MEAN = 0, 1, 2
#: Per method: does it fill a cell (the others substitute a censored entry's limit)?
FILLS = np.array([m in ("knn", "knn_capped", "column_mean") for m in METHODS])
#: Rows of tuples made in one go (:func:`tuples`): a few ms of Python's lock each.
TUPLE_ROWS = 32_768


def objects(values: NDArray[Any] | Sequence[Any]) -> NDArray[np.object_]:
    """A 1-D object array of ``values`` (tuples stay tuples)."""
    if isinstance(values, np.ndarray):
        return values.astype(object)
    return np.fromiter(values, dtype=object, count=len(values))


def repeated(word: str, n: int) -> NDArray[np.object_]:
    """Object array of ``n`` times ``word`` (``np.full`` with an object is many times slower)."""
    out = np.empty(n, dtype=object)
    out[:] = word
    return out


def _words(words: Sequence[str]) -> NDArray[np.object_]:
    """Object array of ``words``: picking by code shares the strings instead of making new ones."""
    out = np.empty(len(words), dtype=object)
    out[:] = list(words)
    return out


@dataclass(frozen=True)
class LogPiece:
    """Fill log rows of one kind as arrays: ``m`` cells with up to ``w`` donors each.

    Attributes
    ----------
    pos, column : ndarray of int, shape (m,)
        Row position and frame column position of each cell.
    value : ndarray of shape (m,)
        The value written (float, or object for classes).
    method : ndarray of int, shape (m,)
        Position in :data:`METHODS`.
    k : ndarray of int, shape (m,)
        Places filled by donors (``min(k, donors found)``): the log's ``k``.
    donors : ndarray of int, shape (m, w)
        Donor row positions, nearest first.
    distances, donor_values : ndarray of shape (m, w)
    spread : ndarray of float, shape (m,)
    support : ndarray of int, shape (m,)
        Position in :data:`~imputer_app.engine._support.SUPPORT_WORDS`.
    note : ndarray of object, shape (m,)
    listed : ndarray of int, shape (m,), optional
        Donors that took part (tied donors sharing the last places included); each
        cell's donor arrays are cut to this many. Default: ``k``.
    lower, upper : ndarray of float, shape (m,), or None
        The calibrated interval of each filled number (None: no interval, NaN in the log).
    """

    pos: IntArray
    column: IntArray
    value: NDArray[Any]
    method: IntArray
    k: IntArray
    donors: IntArray
    distances: FloatArray
    donor_values: NDArray[Any]
    spread: FloatArray
    support: IntArray
    note: NDArray[np.object_]
    listed: IntArray | None = None
    lower: FloatArray | None = None
    upper: FloatArray | None = None

    @classmethod
    def without_donors(
        cls,
        pos: IntArray,
        column: int,
        value: NDArray[Any] | Sequence[Any],
        method: NDArray[Any],
        notes: Sequence[str],
    ) -> LogPiece:
        """Values written without donors (column means, censored substitutions)."""
        n = len(pos)
        none = np.empty((n, 0))
        return cls(
            pos=np.asarray(pos, dtype=np.intp), column=np.full(n, column, dtype=np.intp),
            value=objects(value), method=np.asarray(method, dtype=np.intp), k=np.zeros(n, dtype=np.intp),
            donors=none.astype(np.intp), distances=none, donor_values=none, spread=np.full(n, np.nan),
            support=np.zeros(n, dtype=np.intp), note=objects(notes),
        )  # fmt: skip


@dataclass(frozen=True)
class LogTable:
    """The fill log as finished columns, sorted by row and then by column.

    Attributes
    ----------
    pos, column : ndarray of int, shape (rows,)
        Row position and frame column position of each log row.
    filled : ndarray of bool, shape (rows,)
        The row fills a cell (kNN or column mean) rather than substituting a limit.
    fields : dict of str to ndarray of shape (rows,)
        ``column`` (names), ``value``, ``method``, ``k``, ``donors`` (tuples of row
        labels), ``distances``, ``donor_values`` (tuples), ``spread``, ``support``, ``note``.
    """

    pos: IntArray
    column: IntArray
    filled: NDArray[np.bool_]
    fields: dict[str, NDArray[Any]]


@dataclass
class Records:
    """Fill log pieces and cells left empty, gathered as they are found.

    Attributes
    ----------
    columns : tuple of str
        The frame's columns (log pieces refer to them by position).
    """

    columns: tuple[str, ...]
    pieces: list[LogPiece] = field(default_factory=list)
    empty: dict[str, list[NDArray[Any]]] = field(
        default_factory=lambda: {"pos": [], "column": [], "reason": []}
    )
    _where: dict[str, int] = field(init=False, repr=False)

    def __post_init__(self) -> None:
        self._where = {c: j for j, c in enumerate(self.columns)}

    def position(self, column: str) -> int:
        """Position of ``column`` in the frame."""
        return self._where[column]

    def add_log(self, piece: LogPiece) -> None:
        """Append log rows."""
        if len(piece.pos):
            self.pieces.append(piece)

    def add_without_donors(
        self,
        rows: IntArray,
        column: str,
        value: NDArray[Any] | Sequence[Any],
        method: NDArray[Any],
        notes: Sequence[str],
    ) -> None:
        """Append log rows for values written without donors (column means, censored substitutions)."""
        self.add_log(LogPiece.without_donors(rows, self.position(column), value, method, notes))

    def add_empty(self, pos: NDArray[np.intp], column: str, reasons: list[str]) -> None:
        """Append cells left empty with their reasons."""
        self.empty["pos"].append(np.asarray(pos, dtype=np.intp))
        self.empty["column"].append(repeated(column, len(pos)))
        self.empty["reason"].append(objects(reasons))

    def empty_field(self, name: str) -> NDArray[Any]:
        """One field of the cells left empty (``pos``, ``column`` or ``reason``), all pieces joined."""
        return _join(self.empty[name], np.intp if name == "pos" else object)

    def log_table(self, row_labels: NDArray[Any]) -> LogTable:
        """Every log row, sorted by row then column, with donors as tuples of ``row_labels``."""
        pieces = self.pieces
        pos, col = _join([p.pos for p in pieces], np.intp), _join([p.column for p in pieces], np.intp)
        order = np.argsort(pos * len(self.columns) + col)  # a cell is written once: no ties
        pos, col = np.take(pos, order), np.take(col, order)
        method, places = _sorted(pieces, "method", order), _sorted(pieces, "k", order)
        used = np.take(_join([p.k if p.listed is None else p.listed for p in pieces], np.intp), order)
        # donors are sorted as numbers and only then made into tuples, in one pass per length
        width = max((p.donors.shape[1] for p in pieces), default=0)
        index = _sorted(pieces, "donors", order, width, -1)
        dist = _sorted(pieces, "distances", order, width, np.inf)
        same = _same_donors(pos, used, index, dist)
        fields = {
            "column": _words(self.columns)[col],
            "value": _sorted(pieces, "value", order).astype(object, copy=False),
            "method": _words(METHODS)[method],
            "k": places.astype(np.int64),
            "donors": tuples(row_labels[np.maximum(index, 0)] if width else index, used, same),
            "distances": tuples(dist, used, same),
            "donor_values": tuples(_sorted(pieces, "donor_values", order, width, np.nan), used),
            "spread": _sorted(pieces, "spread", order),
            "support": _words(SUPPORT_WORDS)[_sorted(pieces, "support", order)],
            "note": _sorted(pieces, "note", order),
            "lower": _sorted(pieces, "lower", order),
            "upper": _sorted(pieces, "upper", order),
        }
        return LogTable(pos, col, FILLS[method], fields)


def _sorted(
    pieces: Sequence[LogPiece], name: str, order: IntArray, width: int | None = None, fill: float = np.nan
) -> NDArray[Any]:
    """Field ``name`` of all ``pieces`` joined and put in ``order``.

    ``width`` given: a 2-D field, narrower pieces padded with ``fill``. ``np.take`` is
    several times faster than ``array[order]`` for rows.
    """
    parts = [_field(p, name) for p in pieces]
    if width is None:
        floats = {"spread": np.float64, "lower": np.float64, "upper": np.float64}
        joined = _join(parts, {**floats, "value": object, "note": object}.get(name, np.intp))
    elif not parts:
        joined = np.empty((0, width))
    elif len(parts) == 1 and parts[0].shape[1] == width:
        joined = parts[0]
    else:
        joined = np.vstack([np.hstack([p, np.full((len(p), width - p.shape[1]), fill)]) for p in parts])
    return np.take(joined, order, axis=0)


def _field(piece: LogPiece, name: str) -> NDArray[Any]:
    """Field ``name`` of ``piece``; an interval the piece does not have is NaN."""
    value = getattr(piece, name)
    return np.full(len(piece.pos), np.nan) if value is None else value


def _join(parts: Sequence[NDArray[Any]], dtype: Any) -> NDArray[Any]:
    """``parts`` end to end (not copied when there is one); empty of ``dtype`` when there are none."""
    if len(parts) == 1:
        return parts[0]
    return np.concatenate(parts) if parts else np.empty(0, dtype=dtype)


def _same_donors(pos: IntArray, used: IntArray, index: IntArray, dist: FloatArray) -> NDArray[np.bool_]:
    """True where a log row has the same donors and distances as the row before it, in the same row."""
    same = np.zeros(len(pos), dtype=bool)
    if len(pos) > 1 and index.shape[1]:
        same[1:] = (
            (pos[1:] == pos[:-1])
            & (used[1:] == used[:-1])
            & (index[1:] == index[:-1]).all(axis=1)
            & (dist[1:] == dist[:-1]).all(axis=1)
        )
    return same


@contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while many tuples are made.

    Every few hundred new tuples would start a collection pass (measured on their own,
    75,000 tuples of five took 33 ms with the passes and 16 ms without; inside a whole
    fill the gain is smaller). Tuples of numbers hold no cycles, so nothing is left for
    the collector to find; :func:`_settle` lets it see each slice of them once.
    """
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()


def _settle() -> None:
    """Let the collector look at the youngest objects once (a few ms a slice of tuples).

    Its first look stops tracking every tuple that holds only numbers and texts, so no
    later pass walks them. Left to the collector's own passes, half a million tuples made
    with it paused were walked in one go when it resumed, or by the next full pass:
    50-280 ms during which the window's thread could not run.
    """
    gc.collect(0)


def tuples(
    matrix: NDArray[Any], used: IntArray, same: NDArray[np.bool_] | None = None
) -> NDArray[np.object_]:
    """Row ``i`` of ``matrix`` cut to its first ``used[i]`` entries, as tuples (object array).

    Parameters
    ----------
    matrix : ndarray of shape (m, w)
        Donor labels, distances or values, nearest donor first.
    used : ndarray of int, shape (m,)
        Entries kept per row (<= w).
    same : ndarray of bool, shape (m,), optional
        Rows equal to the row before them: they share its tuple instead of a new one.

    Returns
    -------
    ndarray of object, shape (m,)
        Tuples of Python scalars (``tolist``), in one pass per distinct length.
    """
    m = len(used)
    build = np.ones(m, dtype=bool) if same is None else ~same
    out = np.empty(m, dtype=object)
    with _collector_paused():
        for u in np.flatnonzero(np.bincount(used[build])).tolist():  # the distinct lengths
            every = np.flatnonzero(build & (used == u))
            # in slices: tolist and fromiter hold Python's lock from start to end
            for part in row_slices(len(every), TUPLE_ROWS):
                rows = every[part]
                made: Iterable[tuple[Any, ...]] = repeat((), len(rows))
                if u:  # zip over the columns' lists: the fastest way to many tuples
                    made = zip(*np.take(matrix[:, :u], rows, axis=0).T.tolist(), strict=True)
                out[rows] = np.fromiter(made, dtype=object, count=len(rows))
                _settle()
    if same is not None and same.any():
        out = out[np.maximum.accumulate(np.where(build, np.arange(m), 0))]
    return out
