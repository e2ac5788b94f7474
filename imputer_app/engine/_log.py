"""Per-cell records behind the fill log and the table of cells left empty (numpy only).

Every value written (kNN fills of all fill columns at once, column means, censored
substitutions) is kept as a :class:`LogPiece` of arrays. :meth:`Records.log_table`
sorts all pieces by row and column once and turns the donor arrays into tuples in a
few passes, so the adapter only wraps finished columns in DataFrames.
"""

from __future__ import annotations

import gc
import math
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from itertools import repeat
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._combine import Finish, number_values, spread, stack_values, vote_with_share
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._stack import Stack
from imputer_app.engine._support import SUPPORT_WORDS, support_levels
from imputer_app.engine._table import PreparedTable

IntArray = NDArray[np.intp]
FloatArray = NDArray[np.float64]

#: Factor applied to a below-limit entry's limit, per censored mode (Hornung & Reed 1990).
CENSORED_FACTORS = {"limit": 1.0, "half_limit": 0.5, "limit_sqrt2": 1.0 / math.sqrt(2.0)}
CENSORED_WORDS = {"limit": "the limit", "half_limit": "limit/2", "limit_sqrt2": "limit/sqrt(2)"}


@dataclass(frozen=True)
class Censored:
    """Censored cells of one column.

    Attributes
    ----------
    mask : ndarray of bool, shape (n_rows,)
    side : ndarray of str, shape (n_rows,)
        ``"<"`` (below a limit), ``">"`` (above a range) or ``""`` (unknown).
    limit : ndarray of float, shape (n_rows,)
        NaN when unknown.
    text : ndarray of object, shape (n_rows,)
        The entry as written ("<0.05").
    """

    mask: NDArray[np.bool_]
    side: NDArray[np.str_]
    limit: NDArray[np.float64]
    text: NDArray[np.object_]

    def substitute(self, mode: str) -> NDArray[np.float64]:
        """Value each censored cell stands for under ``mode``; NaN where it is filled instead.

        A below-limit entry stands for limit x factor (:data:`CENSORED_FACTORS`), an
        above-range entry for its limit; with ``fill_capped`` or an unknown limit the
        cell is filled by kNN.
        """
        out = np.full(len(self.mask), np.nan)
        if mode == "fill_capped":
            return out
        known = self.mask & np.isfinite(self.limit)
        below, above = known & (self.side != ">"), known & (self.side == ">")
        out[below] = self.limit[below] * CENSORED_FACTORS[mode]
        out[above] = self.limit[above]
        return out


#: Methods of the fill log (``LogPiece.method`` holds positions in this tuple).
METHODS = ("knn", "knn_capped", "column_mean", "limit", "half_limit", "limit_sqrt2")
KNN, KNN_CAPPED, COLUMN_MEAN = 0, 1, 2
#: Per method: does it fill a cell (the others substitute a censored entry's limit)?
FILLS = np.array([m in ("knn", "knn_capped", "column_mean") for m in METHODS])


def objects(values: Any) -> NDArray[np.object_]:
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
        Donors used; each cell's donor arrays are cut to this many.
    donors : ndarray of int, shape (m, w)
        Donor row positions, nearest first.
    distances, donor_values : ndarray of shape (m, w)
    spread : ndarray of float, shape (m,)
    support : ndarray of int, shape (m,)
        Position in :data:`~imputer_app.engine._support.SUPPORT_WORDS`.
    note : ndarray of object, shape (m,)
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

    @classmethod
    def without_donors(
        cls, pos: IntArray, column: int, value: Any, method: Any, notes: Sequence[str]
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
        method, used = _sorted(pieces, "method", order), _sorted(pieces, "k", order)
        # donors are sorted as numbers and only then made into tuples, in one pass per length
        width = max((p.donors.shape[1] for p in pieces), default=0)
        index = _sorted(pieces, "donors", order, width, -1)
        dist = _sorted(pieces, "distances", order, width, np.inf)
        same = _same_donors(pos, used, index, dist)
        fields = {
            "column": _words(self.columns)[col],
            "value": _sorted(pieces, "value", order).astype(object, copy=False),
            "method": _words(METHODS)[method],
            "k": used.astype(np.int64),
            "donors": tuples(row_labels[np.maximum(index, 0)] if width else index, used, same),
            "distances": tuples(dist, used, same),
            "donor_values": tuples(_sorted(pieces, "donor_values", order, width, np.nan), used),
            "spread": _sorted(pieces, "spread", order),
            "support": _words(SUPPORT_WORDS)[_sorted(pieces, "support", order)],
            "note": _sorted(pieces, "note", order),
        }
        return LogTable(pos, col, FILLS[method], fields)


def _sorted(
    pieces: Sequence[LogPiece], name: str, order: IntArray, width: int | None = None, fill: float = np.nan
) -> NDArray[Any]:
    """Field ``name`` of all ``pieces`` joined and put in ``order``.

    ``width`` given: a 2-D field, narrower pieces padded with ``fill``. ``np.take`` is
    several times faster than ``array[order]`` for rows.
    """
    parts = [getattr(p, name) for p in pieces]
    if width is None:
        joined = _join(parts, {"spread": np.float64, "value": object, "note": object}.get(name, np.intp))
    elif not parts:
        joined = np.empty((0, width))
    elif len(parts) == 1 and parts[0].shape[1] == width:
        joined = parts[0]
    else:
        joined = np.vstack([np.hstack([p, np.full((len(p), width - p.shape[1]), fill)]) for p in parts])
    return np.take(joined, order, axis=0)


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
    the collector to find.
    """
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()


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
            rows = np.flatnonzero(build & (used == u))
            made: Iterable[tuple[Any, ...]] = repeat((), len(rows))
            if u:  # zip over the columns' lists: the fastest way to many tuples
                picked = matrix[:, :u] if len(rows) == m else np.take(matrix[:, :u], rows, axis=0)
                made = zip(*picked.T.tolist(), strict=True)
            out[rows] = np.fromiter(made, dtype=object, count=len(rows))
    if same is not None and same.any():
        out = out[np.maximum.accumulate(np.where(build, np.arange(m), 0))]
    return out


def no_donor_reasons(table: PreparedTable, col: str, rows: NDArray[np.intp]) -> list[str]:
    """Plain-words reason why each of ``rows`` has no donor in ``col``."""
    ok = table.observed[col].copy()
    groups = table.groups
    if groups is not None:
        ok &= groups >= 0
    present = table.features.present()
    by_group = np.bincount(groups[ok], minlength=len(table.group_labels)) if groups is not None else None
    out = []
    for r in rows.tolist():
        if not ok.any():
            out.append(f"column {col!r} has no value to copy from")
        elif table.features.total_weight <= 0:
            out.append("no similarity column can compare rows (all are constant, empty or weighted 0)")
        elif groups is not None and groups[r] < 0:
            out.append(f"group column {table.plan.group_column!r} is empty in this row")
        elif by_group is not None and groups is not None and by_group[groups[r]] == 0:
            out.append(f"no row of group {table.group_labels[groups[r]]!r} has a value in {col!r}")
        elif not present[r]:
            out.append("every similarity column is empty in this row")
        else:
            out.append(f"no row with a value in {col!r} shares a similarity column with this row")
    return out


def fill_records(table: PreparedTable, stack: Stack, threshold: float, out: Records) -> None:
    """Work out the kNN value of every target cell and add its log row (or empty cell) to ``out``.

    Parameters
    ----------
    table : PreparedTable
        The prepared table the donors were searched in.
    stack : Stack
        Every target cell of the fill columns with its donors (kmax = the plan's k).
    threshold : float
        Weak-support distance.
    out : Records
        Receives the rows: all numeric fill columns as one piece, then each category column.
    """
    k = table.plan.k
    numbers = [c for c in stack.columns if table.kinds[c] == "number"]
    if numbers:
        part = stack.select(numbers)
        shown = stack_values(table, part)
        written = number_values(table, part, [k], v=shown)[k]
        _knn_records(table, part, written, shown, spread(shown, part.donors, k), threshold, out)
    for col in (c for c in stack.columns if table.kinds[c] != "number"):
        part = stack.select([col])
        # the extra last entry: code -1 -> None
        labels = np.empty(len(table.categories[col]) + 1, dtype=object)
        labels[:-1] = table.categories[col]
        codes = np.asarray(table.values[col], dtype=np.intp)
        shown = labels[part.gather([codes], fill=-1).astype(np.intp)]
        win, share = vote_with_share(codes, part.donors, [k])[k]
        _knn_records(table, part, labels[win], shown, share, threshold, out)


def _knn_records(
    table: PreparedTable,
    stack: Stack,
    written: NDArray[Any],
    shown: NDArray[Any],
    spreads: FloatArray,
    threshold: float,
    out: Records,
) -> None:
    found = stack.donors
    k = table.plan.k
    used = np.minimum(k, found.count)
    has = used > 0
    capped = Finish.of(table, stack) if table.cap_upper or table.cap_lower else None
    method = np.full(len(used), KNN, dtype=np.intp)
    if capped is not None:
        method[np.isfinite(capped.cap_lower) | np.isfinite(capped.cap_upper)] = KNN_CAPPED
    columns = np.array([out.position(c) for c in stack.columns], dtype=np.intp)
    width = min(k, found.index.shape[1])
    at: slice | IntArray = slice(None) if has.all() else np.flatnonzero(has)  # views when all have donors
    piece = LogPiece(
        pos=found.rows[at], column=columns[stack.col[at]], value=written[at], method=method[at],
        k=used[at], donors=found.index[at, :width], distances=found.distance[at, :width],
        donor_values=shown[at, :width], spread=spreads[at], support=support_levels(found, threshold)[at],
        note=_notes(table, stack, used, capped, written)[at],
    )  # fmt: skip
    out.add_log(piece)
    none = np.flatnonzero(~has)
    for j in np.flatnonzero(np.bincount(stack.col[none])).tolist():
        _no_donor(table, stack.columns[j], found.rows[none[stack.col[none] == j]], out)


def _notes(
    table: PreparedTable, stack: Stack, used: NDArray[np.intp], capped: Finish | None, written: NDArray[Any]
) -> NDArray[np.object_]:
    k = table.plan.k
    parts: dict[int, list[str]] = {}
    for i in np.flatnonzero((used < k) & (used > 0)).tolist():
        parts.setdefault(i, []).append(f"only {used[i]} donor{'s' if used[i] != 1 else ''} (k={k})")
    unknown = _unknown_limit_cells(table, stack, len(used))
    noted = np.zeros(len(used), dtype=bool)
    if capped is not None:
        sides = ((capped.cap_upper, "below", "lowest"), (capped.cap_lower, "above", "highest"))
        for limits, word, side in sides:
            for i in np.flatnonzero(np.isfinite(limits)).tolist():
                note = _cap_note(float(limits[i]), written[i], word, side, bool(unknown[i]))
                parts.setdefault(i, []).append(note)
                noted[i] = True
    for i in np.flatnonzero(unknown & ~noted).tolist():  # no measured value to cap with
        parts.setdefault(i, []).append("censored entry with no limit written; filled by kNN")
    notes = repeated("", len(used))
    for i, words in parts.items():
        notes[i] = "; ".join(words)
    return notes


def _unknown_limit_cells(table: PreparedTable, stack: Stack, n: int) -> NDArray[np.bool_]:
    """True for the stacked cells that are censored entries with no limit written."""
    unknown = np.zeros(n, dtype=bool)
    for j, col in enumerate(stack.columns):
        mask = table.unknown_limit.get(col)
        if mask is not None and mask.any():
            start, stop = int(stack.offsets[j]), int(stack.offsets[j + 1])
            unknown[start:stop] = mask[stack.donors.rows[start:stop]]
    return unknown


def _cap_note(limit: float, value: Any, word: str, side: str, unknown: bool) -> str:
    """Say how a censored cell's kNN value relates to the limit that capped it."""
    if unknown:
        where = f"kept at or {word} the {side} measured value of the column ({limit:g})"
        return f"censored entry with no limit written; filled by kNN, {where}"
    if isinstance(value, float) and value == limit:
        return f"censored entry {word} {limit:g}; the kNN value lay beyond it, so the limit was used"
    return f"censored entry {word} {limit:g}; kNN value kept on that side of the limit"


def _no_donor(table: PreparedTable, col: str, rows: NDArray[np.intp], out: Records) -> None:
    reasons = no_donor_reasons(table, col, rows)
    if table.plan.no_donor != "column_mean":
        out.add_empty(rows, col, reasons)
        return
    raw = np.asarray(table.values[col])
    ok = table.observed[col]
    if not ok.any():
        out.add_empty(rows, col, reasons)
        return
    if table.kinds[col] == "number":
        mean = float(np.mean(raw[ok].astype(np.float64)))
        cells = ColumnDonors(
            rows, np.full((len(rows), 0), -1), np.full((len(rows), 0), np.inf), np.zeros(len(rows), int)
        )
        finish = Finish.of(table, Stack.of({col: cells}, [col]))
        value: list[Any] = finish.apply(np.full(len(rows), mean)).tolist()
        how = "filled with the column mean"
    else:
        counts = np.bincount(raw[ok].astype(np.intp))
        value = [table.categories[col][int(np.argmax(counts))]] * len(rows)
        how = "filled with the most common class"
    _without_donors(
        out, rows, col, value, np.full(len(rows), COLUMN_MEAN), [f"no donor: {r}; {how}" for r in reasons]
    )


def _without_donors(
    out: Records, rows: NDArray[np.intp], col: str, value: Any, method: Any, notes: list[str]
) -> None:
    """Log rows for values written without donors (column means, censored substitutions)."""
    out.add_log(LogPiece.without_donors(rows, out.position(col), value, method, notes))


def substitution_records(col: str, cen: Censored, mode: str, out: Records) -> None:
    """Log every censored cell of ``col`` replaced by a number under ``mode``."""
    value = cen.substitute(mode)
    rows = np.flatnonzero(cen.mask & np.isfinite(value))
    if not len(rows):
        return
    above = cen.side[rows] == ">"
    method = np.where(above, METHODS.index("limit"), METHODS.index(mode))
    notes = [
        f"above-range entry {t!r} stands for its limit" if a
        else f"below-limit entry {t!r} stands for {CENSORED_WORDS[mode]} (Hornung & Reed 1990)"
        for t, a in zip(cen.text[rows].tolist(), above.tolist(), strict=True)
    ]  # fmt: skip
    _without_donors(out, rows, col, value[rows].tolist(), method, notes)
