"""Fill decisions: the value written into each target cell, and what happens without donors (numpy only).

:func:`fill_records` combines every target cell's k donors into a value (mean,
median, weighted mean or vote), keeps capped censored cells on their side of the
limit, and applies the plan's no-donor rule (leave empty, or the column mean / most
common class). Each decision goes to :class:`~imputer_app.engine._log.Records` with
its reason; the log itself is only stored there.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._combine import (
    Finish,
    donor_shares,
    number_values,
    spread,
    stack_values,
    vote_with_share,
)
from imputer_app.engine._group_fill import group_fill
from imputer_app.engine._log import (
    COLUMN_MEAN,
    KNN,
    KNN_CAPPED,
    FloatArray,
    IntArray,
    LogPiece,
    Records,
    repeated,
)
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._stack import Stack
from imputer_app.engine._support import support_levels
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._ties import share_notes


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
        elif not present[r] and table.measured is not None and table.measured[r]:
            out.append("this row's similarity values are all in constant columns (left out of the distance)")
        elif not present[r]:
            out.append("every similarity column is empty in this row")
        else:
            out.append(f"no row with a value in {col!r} shares a similarity column with this row")
    return out


def fill_records(
    table: PreparedTable,
    stack: Stack,
    k: int,
    threshold: float,
    out: Records,
    k_by_column: Mapping[str, int] | None = None,
) -> None:
    """Work out the kNN value of every target cell and add its log row (or empty cell) to ``out``.

    Parameters
    ----------
    table : PreparedTable
        The prepared table the donors were searched in.
    stack : Stack
        Every target cell of the fill columns with its donors (kmax >= every k used).
    k : int
        Donors combined per cell (the plan's k).
    threshold : float
        Weak-support distance.
    out : Records
        Receives the rows: the numeric fill columns sharing a k as one piece, then
        each category column.
    k_by_column : mapping of str to int, optional
        Columns combined with their own k instead of ``k``.
    """
    own = dict(k_by_column or {})
    numbers = [c for c in stack.columns if table.kinds[c] == "number"]
    for kc in sorted({own.get(c, k) for c in numbers}):
        part = stack.select([c for c in numbers if own.get(c, k) == kc])
        shown = stack_values(table, part)
        written = number_values(table, part, [kc], v=shown)[kc]
        _knn_records(table, part, kc, written, shown, spread(shown, part.donors, kc), threshold, out)
    for col in (c for c in stack.columns if table.kinds[c] != "number"):
        kc = own.get(col, k)
        part = stack.select([col])
        # the extra last entry: code -1 -> None
        labels = np.empty(len(table.categories[col]) + 1, dtype=object)
        labels[:-1] = table.categories[col]
        codes = np.asarray(table.values[col], dtype=np.intp)
        shown = labels[part.gather([codes], fill=-1).astype(np.intp)]
        win, share = vote_with_share(codes, part.donors, [kc])[kc]
        _knn_records(table, part, kc, labels[win], shown, share, threshold, out)


def _knn_records(
    table: PreparedTable,
    stack: Stack,
    k: int,
    written: NDArray[Any],
    shown: NDArray[Any],
    spreads: FloatArray,
    threshold: float,
    out: Records,
) -> None:
    found = stack.donors
    used = np.minimum(k, found.count)
    has = used > 0
    capped = Finish.of(table, stack) if table.cap_upper or table.cap_lower else None
    method = np.full(len(used), KNN, dtype=np.intp)
    if capped is not None:
        method[np.isfinite(capped.cap_lower) | np.isfinite(capped.cap_upper)] = KNN_CAPPED
    columns = np.array([out.position(c) for c in stack.columns], dtype=np.intp)
    weights, taken = donor_shares(found, k)  # tied donors all take part: list every one
    width = int(taken.max(initial=0))
    notes = _notes(table, stack, k, used, capped, written)
    for i, text in share_notes(weights, used):
        notes[i] = f"{notes[i]}; {text}" if notes[i] else text
    at: slice | IntArray = slice(None) if has.all() else np.flatnonzero(has)  # views when all have donors
    piece = LogPiece(
        pos=found.rows[at], column=columns[stack.col[at]], value=written[at], method=method[at],
        k=used[at], donors=found.index[at, :width], distances=found.distance[at, :width],
        donor_values=shown[at, :width], spread=spreads[at], support=support_levels(found, threshold)[at],
        note=notes[at], listed=taken[at],
    )  # fmt: skip
    out.add_log(piece)
    none = np.flatnonzero(~has)
    for j in np.flatnonzero(np.bincount(stack.col[none])).tolist():
        _no_donor(table, stack.columns[j], found.rows[none[stack.col[none] == j]], out)


def _notes(
    table: PreparedTable,
    stack: Stack,
    k: int,
    used: NDArray[np.intp],
    capped: Finish | None,
    written: NDArray[Any],
) -> NDArray[np.object_]:
    """Per stacked cell, the fill log's note: fewer donors than k, capping, unknown limit."""
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


def _cap_note(limit: float, value: object, word: str, side: str, unknown: bool) -> str:
    """Say how a censored cell's kNN value relates to the limit that capped it."""
    if unknown:
        where = f"kept at or {word} the {side} measured value of the column ({limit:g})"
        return f"censored entry with no limit written; filled by kNN, {where}"
    if isinstance(value, float) and value == limit:
        return f"censored entry {word} {limit:g}; the kNN value lay beyond it, so the limit was used"
    return f"censored entry {word} {limit:g}; kNN value kept on that side of the limit"


def _no_donor(table: PreparedTable, col: str, rows: NDArray[np.intp], out: Records) -> None:
    """Apply the plan's no-donor rule to ``rows`` of ``col``: leave them empty or write the column mean.

    With a group column the mean (or most common class) is that of the row's own group;
    a row whose group cell is empty, or whose group has no value in ``col``, stays empty.
    """
    reasons = no_donor_reasons(table, col, rows)
    if table.plan.no_donor != "column_mean":
        out.add_empty(rows, col, reasons)
        return
    found, usable = group_fill(table, col, rows)
    mine = table.groups[rows] if table.groups is not None else np.zeros(len(rows), dtype=np.intp)
    lacking = [_no_group_mean(table, col, g, r) for r, g in zip(reasons, mine.tolist(), strict=True)]
    out.add_empty(rows[~usable], col, [why for why, u in zip(lacking, usable.tolist(), strict=True) if not u])
    kept = [r for r, u in zip(reasons, usable.tolist(), strict=True) if u]
    rows, mine, value = rows[usable], mine[usable], found[usable]
    if not len(rows):
        return
    number = table.kinds[col] == "number"
    if number:
        cells = ColumnDonors(
            rows, np.full((len(rows), 0), -1), np.full((len(rows), 0), np.inf), np.zeros(len(rows), int)
        )
        value = Finish.of(table, Stack.of({col: cells}, [col])).apply(value.astype(float))
    what = "column mean" if number else "most common class"
    group = table.group_labels if table.groups is not None else None
    notes = [
        f"no donor: {r}; filled with the {what}" + (f" of group {group[g]!r}" if group is not None else "")
        for r, g in zip(kept, mine.tolist(), strict=True)
    ]
    out.add_without_donors(rows, col, value.tolist(), np.full(len(rows), COLUMN_MEAN), notes)


def _no_group_mean(table: PreparedTable, col: str, group: int, reason: str) -> str:
    """Why a row without donor gets no group mean either, added to its no-donor reason."""
    if table.groups is None:
        return reason
    if group < 0:
        own = f"group column {table.plan.group_column!r} is empty in this row"
    else:
        own = f"no row of group {table.group_labels[group]!r} has a value in {col!r}"
    return reason if own in reason else f"{reason}; no group mean either: {own}"
