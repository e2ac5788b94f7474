"""Per-cell records behind the fill log and the table of cells left empty (numpy only).

The adapter turns these column-wise records into DataFrames; here every value,
donor tuple, note and reason is worked out from the arrays of the search.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._combine import Finish, Stack, spread, vote_with_share
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._support import support_flags
from imputer_app.engine._table import PreparedTable

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


LOG_FIELDS = ("pos", "column", "value", "method", "k", "donors", "distances", "donor_values", "spread",
              "support", "note")  # fmt: skip


def objects(values: Any) -> NDArray[np.object_]:
    """A 1-D object array of ``values`` (tuples stay tuples)."""
    if isinstance(values, np.ndarray):
        return values.astype(object)
    return np.fromiter(values, dtype=object, count=len(values))


@dataclass
class Records:
    """Fill log rows and cells left empty, gathered in pieces (row positions, not labels)."""

    log: dict[str, list[NDArray[Any]]] = field(default_factory=lambda: {name: [] for name in LOG_FIELDS})
    empty: dict[str, list[NDArray[Any]]] = field(
        default_factory=lambda: {"pos": [], "column": [], "reason": []}
    )

    def add_log(self, **columns: Any) -> None:
        """Append one piece (equal-length arrays or sequences) to every log field."""
        for name, values in columns.items():
            self.log[name].append(np.asarray(values) if name in ("pos", "k", "spread") else objects(values))

    def add_empty(self, pos: NDArray[np.intp], column: str, reasons: list[str]) -> None:
        """Append cells left empty with their reasons."""
        self.empty["pos"].append(np.asarray(pos, dtype=np.intp))
        self.empty["column"].append(np.full(len(pos), column, dtype=object))
        self.empty["reason"].append(objects(reasons))

    def field(self, name: str, part: str = "log") -> NDArray[Any]:
        """One field, all pieces joined."""
        pieces = (self.log if part == "log" else self.empty)[name]
        if not pieces:
            return np.empty(0, dtype=np.intp if name == "pos" else object)
        return np.concatenate(pieces)


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


def _tuples(matrix: NDArray[Any], used: NDArray[np.intp]) -> list[tuple[Any, ...]]:
    """Row ``i`` of ``matrix`` cut to its first ``used[i]`` entries, as tuples."""
    width = int(used.max(initial=0))
    if width == 0:
        return [()] * len(used)
    out = list(zip(*matrix[:, :width].T.tolist(), strict=True))  # fastest way to many tuples
    for i in np.flatnonzero(used < width).tolist():
        out[i] = out[i][: used[i]]
    return out


def fill_records(
    table: PreparedTable, donors: Mapping[str, ColumnDonors], values: Mapping[str, NDArray[Any]],
    threshold: float, out: Records,
) -> None:  # fmt: skip
    """Add the log rows and the empty cells of every fill column to ``out``.

    Parameters
    ----------
    table : PreparedTable
        The prepared table the donors were searched in.
    donors : mapping of str to ColumnDonors
        Searched with kmax = the plan's k.
    values : mapping of str to ndarray of shape (m,)
        From :func:`~imputer_app.engine.combine` at the plan's k.
    threshold : float
        Weak-support distance.
    out : Records
        Receives the rows.
    """
    numbers = [c for c in table.fill_columns if table.kinds[c] == "number"]
    if numbers:
        stack = Stack.of(donors, numbers)
        written = np.concatenate([np.asarray(values[c], dtype=np.float64) for c in numbers])
        shown = stack.gather(np.column_stack([table.values[c] for c in numbers]))
        _stack_records(
            table, stack, written, shown, spread(shown, stack.donors, table.plan.k), threshold, out
        )
    for col in (c for c in table.fill_columns if table.kinds[c] != "number"):
        stack = Stack.of(donors, [col])
        labels = np.empty(
            len(table.categories[col]) + 1, dtype=object
        )  # the extra last entry: code -1 -> None
        labels[:-1] = table.categories[col]
        codes = np.asarray(table.values[col], dtype=np.intp)
        shown = labels[stack.gather(codes[:, None], fill=-1).astype(np.intp)]
        share = vote_with_share(codes, stack.donors, [table.plan.k])[table.plan.k][1]
        written = labels[np.asarray(values[col], dtype=np.intp)]
        _stack_records(table, stack, written, shown, share, threshold, out)


def _stack_records(
    table: PreparedTable,
    stack: Stack,
    written: NDArray[Any],
    shown: NDArray[Any],
    spreads: NDArray[np.float64],
    threshold: float,
    out: Records,
) -> None:
    found = stack.donors
    used = np.minimum(table.plan.k, found.count)
    has = np.flatnonzero(used > 0)
    capped = Finish.of(table, stack) if table.cap_upper or table.cap_lower else None
    is_capped = (
        np.isfinite(capped.cap_lower) | np.isfinite(capped.cap_upper) if capped else np.zeros(len(used), bool)
    )
    names = np.asarray(stack.columns, dtype=object)
    out.add_log(
        pos=found.rows[has],
        column=names[stack.col[has]],
        value=written[has],
        method=np.where(is_capped[has], "knn_capped", "knn"),
        k=used[has],
        donors=_tuples(table.row_labels[np.maximum(found.index[has], 0)], used[has]),
        distances=_tuples(found.distance[has], used[has]),
        donor_values=_tuples(shown[has], used[has]),
        spread=spreads[has],
        support=support_flags(found, threshold)[has],
        note=_notes(table, stack, used, capped)[has],
    )
    for i, col in enumerate(stack.columns):
        cells = slice(stack.offsets[i], stack.offsets[i + 1])
        none = found.rows[cells][used[cells] == 0]
        if len(none):
            _no_donor(table, col, none, out)


def _notes(
    table: PreparedTable, stack: Stack, used: NDArray[np.intp], capped: Finish | None
) -> NDArray[np.object_]:
    k = table.plan.k
    parts: dict[int, list[str]] = {}
    for i in np.flatnonzero((used < k) & (used > 0)).tolist():
        parts.setdefault(i, []).append(f"only {used[i]} donor{'s' if used[i] != 1 else ''} (k={k})")
    if capped is not None:
        for limits, word in ((capped.cap_upper, "below"), (capped.cap_lower, "above")):
            for i in np.flatnonzero(np.isfinite(limits)).tolist():
                parts.setdefault(i, []).append(
                    f"censored entry {word} {limits[i]:g}; kNN value kept on that side of the limit"
                )
    for j, col in enumerate(stack.columns):
        unknown = table.unknown_limit.get(col)
        if unknown is not None:
            start = int(stack.offsets[j])
            rows = stack.donors.rows[start : stack.offsets[j + 1]]
            for i in (np.flatnonzero(unknown[rows]) + start).tolist():
                parts.setdefault(i, []).append("censored entry with unknown limit; filled by kNN")
    notes = np.full(len(used), "", dtype=object)
    for i, words in parts.items():
        notes[i] = "; ".join(words)
    return notes


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
        out, rows, col, value, ["column_mean"] * len(rows), [f"no donor: {r}; {how}" for r in reasons]
    )


def _without_donors(
    out: Records, rows: NDArray[np.intp], col: str, value: list[Any], method: list[str], notes: list[str]
) -> None:
    """Log rows for values written without donors (column means, censored substitutions)."""
    n = len(rows)
    nothing = [()] * n
    out.add_log(
        pos=rows, column=[col] * n, value=value, method=method, k=np.zeros(n, dtype=np.intp), donors=nothing,
        distances=nothing, donor_values=nothing, spread=np.full(n, np.nan), support=[""] * n, note=notes,
    )  # fmt: skip


def substitution_records(col: str, cen: Censored, mode: str, out: Records) -> None:
    """Log every censored cell of ``col`` replaced by a number under ``mode``."""
    value = cen.substitute(mode)
    rows = np.flatnonzero(cen.mask & np.isfinite(value))
    if not len(rows):
        return
    above = cen.side[rows] == ">"
    method = np.where(above, "limit", mode).tolist()
    notes = [
        f"above-range entry {t!r} stands for its limit" if a
        else f"below-limit entry {t!r} stands for {CENSORED_WORDS[mode]} (Hornung & Reed 1990)"
        for t, a in zip(cen.text[rows].tolist(), above.tolist(), strict=True)
    ]  # fmt: skip
    _without_donors(out, rows, col, value[rows].tolist(), method, notes)
