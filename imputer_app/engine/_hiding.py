"""Which known cells the interval calibration hides, and the table with them hidden (numpy only).

:func:`calibration_masks` chooses, per fill column, a share of its known cells to hide
and score, spread over a few rounds. A sheet with few fill cells per row gets up to
:data:`MAX_ROUNDS` rounds, each row holding at most one scored cell per round, and the
hidden rows copy the sheet's own gap patterns (Zaffran, Dieuleveut, Josse & Romano 2023,
ICML, "Conformal prediction with missing values"). A wide sheet (many fill columns for
its rows) would need many rounds, each as costly as the fill's own search: it gets
:data:`WIDE_ROUNDS` round of :data:`WIDE_CELLS` cells per column drawn at random, so
that the calibration costs no more than the fill (its intervals rest on fewer cells per
column, but the coverage measured over all columns rests on many).

:func:`hidden_table` hides cells in an already prepared table (the fill's own scaling
is kept), which is much cheaper than preparing the sheet again.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._table import PreparedTable

BoolArray = NDArray[np.bool_]
IntArray = NDArray[np.intp]

#: Share of a column's known cells hidden for calibration, and the bounds on the count.
CAL_SHARE = 0.25
CAL_MAX = 400
#: Rows given a scored cell per round, as a share of all rows, and the most rounds.
ROUND_ROWS = 0.3
MAX_ROUNDS = 8
#: Rounds of a wide sheet: one where ``MAX_ROUNDS`` rounds would need this many cells a row.
WIDE_FROM = 4.0 * MAX_ROUNDS
WIDE_ROUNDS = 1
#: Cells scored per column of a wide sheet: enough for a 95 % quantile (19) with room.
WIDE_CELLS = 24

Rounds = list[tuple[BoolArray, dict[str, BoolArray]]]


def calibration_masks(
    table: PreparedTable, gaps: BoolArray, keep: Mapping[str, BoolArray], rng: np.random.Generator
) -> tuple[Rounds, bool]:
    """Rounds of cells to hide for calibration, with per fill column the cells to score.

    Parameters
    ----------
    table : PreparedTable
        The sheet prepared for the fill.
    gaps : bool ndarray of shape (n_rows, n_frame_columns)
        Real gaps of the sheet (the source of patterns).
    keep : mapping of str to bool ndarray of shape (n_rows,)
        Per fill column, cells that must never be hidden (censored entries).
    rng : numpy.random.Generator
        Source of the choice of cells and of the copied patterns.

    Returns
    -------
    rounds : list of (hide, chosen)
        ``hide``: bool ndarray of shape (n_rows, n_frame_columns); ``chosen``: per fill
        column, bool ndarray of shape (n_rows,) of the cells to score.
    patterned : bool
        True when some hidden rows copied a real gap pattern.
    """
    where = {c: j for j, c in enumerate(table.columns)}
    sim = np.array([where[c] for c in table.similarity_columns if table.plan.weight(c) > 0], dtype=np.intp)
    fill = np.array([where[c] for c in table.fill_columns], dtype=np.intp)
    visible_sim = ~gaps[:, sim]
    n_visible = np.count_nonzero(visible_sim, axis=1)
    usable, totals = _usable(table, fill, sim, gaps, keep, n_visible)
    wanted = int(totals.sum()) / max(ROUND_ROWS * table.n_rows, 1.0)
    if wanted > WIDE_FROM:
        totals = np.minimum(totals, WIDE_CELLS)
        return _wide_rounds(table, fill, sim, gaps, usable, totals, rng), False
    n_rounds = int(min(MAX_ROUNDS, max(1, math.ceil(wanted))))
    # scored cells a row may hold per round: 1, unless there are many fill columns for
    # the rows, where one per row would leave most columns without cells
    per_row = max(1, math.floor(wanted / n_rounds))
    rounds: Rounds = [(np.zeros(gaps.shape, dtype=bool), {}) for _ in range(n_rounds)]
    patterned = False
    busy = np.zeros((n_rounds, table.n_rows), dtype=np.intp)
    # a column at a time, read in place
    gaps_by_column, usable_by_column = np.ascontiguousarray(gaps.T), np.ascontiguousarray(usable.T)
    seen = n_visible >= 1
    columns = _as_run(sim)
    for i in rng.permutation(len(table.fill_columns)).tolist():
        col, j, total = table.fill_columns[i], int(fill[i]), int(totals[i])
        own = sim == j
        # rows whose gap pattern may be copied: a gap in this column and a similarity value
        sources = np.flatnonzero(gaps_by_column[j] & seen)
        taken = np.zeros(table.n_rows, dtype=bool)
        for r, (hide, chosen) in enumerate(rounds):
            free = np.flatnonzero(usable_by_column[i] & (busy[r] < per_row) & ~taken)
            n = min(len(free), total // n_rounds + (1 if r < total % n_rounds else 0))
            pick = np.sort(rng.choice(free, size=n, replace=False)) if n > 0 else free[:0]
            busy[r, pick] += 1
            taken[pick] = True
            chosen[col] = np.zeros(table.n_rows, dtype=bool)
            chosen[col][pick] = True
            hide[pick, j] = True
            # a row holding several scored cells would collect several patterns and lose
            # nearly all its similarity values: then only the scored cells are hidden
            if per_row == 1 and len(sources) and len(pick):
                patterned |= _copy_patterns(
                    hide, pick, columns, own, gaps[rng.choice(sources, size=len(pick))][:, sim], visible_sim
                )
    return rounds, patterned


def _usable(
    table: PreparedTable,
    fill: IntArray,
    sim: IntArray,
    gaps: BoolArray,
    keep: Mapping[str, BoolArray],
    n_visible: IntArray,
) -> tuple[BoolArray, IntArray]:
    """Per fill column (as columns of a matrix): cells that may be scored, and how many to score.

    A cell may be scored when it is known (not censored) and its row keeps another
    similarity value once it is hidden. The count is a share of the column's known
    cells, capped, leaving the column's k donors.
    """
    n, p = table.n_rows, len(table.fill_columns)
    known = np.zeros((n, p), dtype=bool)
    for i, col in enumerate(table.fill_columns):
        known[:, i] = table.observed[col]
        if col in keep:
            known[:, i] &= ~np.asarray(keep[col], dtype=bool)
    own = ~gaps[:, fill] & np.isin(fill, sim)[None, :]
    # another similarity value once the cell is hidden: two, or one that is not the cell's
    usable = known & ((n_visible >= 2)[:, None] | ((n_visible >= 1)[:, None] & ~own))
    ks = np.array([table.plan.k_for(c) for c in table.fill_columns], dtype=np.intp)
    share = np.floor(CAL_SHARE * np.count_nonzero(known, axis=0) + 0.5).astype(np.intp)
    totals = np.minimum(np.minimum(CAL_MAX, share), np.maximum(np.count_nonzero(usable, axis=0) - ks, 0))
    return usable, totals.astype(np.intp)


def _wide_rounds(
    table: PreparedTable,
    fill: IntArray,
    sim: IntArray,
    gaps: BoolArray,
    usable: BoolArray,
    totals: IntArray,
    rng: np.random.Generator,
) -> Rounds:
    """:data:`WIDE_ROUNDS` rounds of cells drawn at random per column, all columns at once."""
    n, p = usable.shape
    keys = np.where(usable, rng.random((n, p)), np.inf)
    rank = np.empty((n, p), dtype=np.intp)
    order = np.argsort(keys, axis=0, kind="stable")
    rank[order, np.arange(p)[None, :]] = np.arange(n)[:, None]
    scored = rank < totals[None, :]
    which = rank % WIDE_ROUNDS  # each column's cells split evenly over the rounds
    is_sim = np.zeros(gaps.shape[1], dtype=bool)
    is_sim[sim] = True
    rounds: Rounds = []
    for r in range(WIDE_ROUNDS):
        pick = scored & (which == r)
        hide = np.zeros(gaps.shape, dtype=bool)
        hide[:, fill] = pick
        # never a row's last similarity value: such a row keeps its cells this round
        bare = ~(~gaps[:, is_sim] & ~hide[:, is_sim]).any(axis=1)
        pick[bare] = False
        hide[bare] = False
        rounds.append((hide, {c: pick[:, i] for i, c in enumerate(table.fill_columns)}))
    return rounds


def _as_run(columns: IntArray) -> IntArray | slice:
    """``columns`` as a slice when they are a run of consecutive positions (cheaper to index)."""
    if len(columns) and (np.diff(columns) == 1).all():
        return slice(int(columns[0]), int(columns[-1]) + 1)
    return columns


def _copy_patterns(
    hide: BoolArray,
    pick: IntArray,
    sim: IntArray | slice,
    own: BoolArray,
    pattern: BoolArray,
    visible: BoolArray,
) -> bool:
    """Hide in rows ``pick`` the similarity values the pattern rows lack; never a row's last one."""
    pattern = pattern & ~own
    ok = (visible[pick] & ~pattern & ~own).any(axis=1)
    rows = pick[ok]
    if len(rows):
        if isinstance(sim, slice):
            hide[rows, sim] |= pattern[ok]
        else:
            hide[np.ix_(rows, sim)] |= pattern[ok]
    return bool(len(rows))


def hidden_table(table: PreparedTable, hide: BoolArray) -> PreparedTable | None:
    """``table`` with the cells ``hide`` treated as gaps, keeping the fill's scaling.

    Returns None when the table's similarity arrays cannot be matched to its columns
    (a similarity column left out of the distance as constant): then the caller
    prepares the sheet again with the cells hidden.
    """
    where = {c: j for j, c in enumerate(table.columns)}
    sim = [c for c in table.similarity_columns if table.plan.weight(c) > 0]
    num = np.array([where[c] for c in sim if table.kinds[c] == "number"], dtype=np.intp)
    cat = np.array([where[c] for c in sim if table.kinds[c] != "number"], dtype=np.intp)
    f = table.features
    if f.numbers.shape[1] != len(num) or f.codes.shape[1] != len(cat):
        return None
    features = dataclasses.replace(
        f,
        numbers=np.where(hide[:, num], np.nan, f.numbers) if hide[:, num].any() else f.numbers,
        codes=np.where(hide[:, cat], -1, f.codes) if hide[:, cat].any() else f.codes,
    )
    values, observed = dict(table.values), dict(table.observed)
    for col in table.fill_columns:
        h = hide[:, where[col]]
        if h.any():
            observed[col] = observed[col] & ~h
            gap = np.nan if table.kinds[col] == "number" else -1
            values[col] = np.where(h, gap, values[col]).astype(values[col].dtype)
    return dataclasses.replace(table, features=features, values=values, observed=observed)
