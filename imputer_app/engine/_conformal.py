"""Calibrate an interval for every filled value on hidden known cells (numpy only).

Split conformal prediction (Vovk, Gammerman & Shafer 2005, *Algorithmic Learning in a
Random World*; Lei, G'Sell, Rinaldo, Tibshirani & Wasserman 2018, JASA 113:1094-1111):
a share of the known cells of each fill column is hidden, filled with the same search
and the column's k, and each hidden cell gets a score. Numbers use the locally weighted
score ``|truth - fill| / (donor SD + floor)``, so that a cell whose donors disagree gets
a wider interval and one whose donors agree a narrower one; the floor (the median
donor SD of the hidden cells, at least a tenth of the column's SD: Kinfill's own
choice) keeps a cell with identical donors from getting an interval of width 0.
Categories use ``1 - share of the donors voting for the true class``. The
``ceil((n + 1) * level)``-th smallest score is the column's quantile; with
fewer hidden cells than ``1 / (1 - level) - 1`` there is no honest quantile and no
interval is given.

Hidden cells copy the sheet's own gap patterns where it has them: each calibration row
also loses the similarity values that a randomly drawn row with a real gap in that
column lacks (Zaffran, Dieuleveut, Josse & Romano 2023, ICML, "Conformal prediction
with missing values"), so the hidden cells look like the cells being filled.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._combine import combine, donor_values, spread
from imputer_app.engine._search import ColumnDonors, nearest_donors
from imputer_app.engine._table import PreparedTable
from imputer_app.work import CancelFlag

BoolArray = NDArray[np.bool_]
FloatArray = NDArray[np.float64]

#: A donor search per fill column, called like :func:`~imputer_app.engine.nearest_donors`
#: (``search(table, kmax=..., targets=..., cancel=...)``).
ColumnSearch = Callable[..., Mapping[str, ColumnDonors]]

#: Share of a column's known cells hidden for calibration, and the bounds on the count.
CAL_SHARE = 0.25
CAL_MAX = 400
#: Rows given a scored cell per round, as a share of all rows, and the most rounds.
ROUND_ROWS = 0.3
MAX_ROUNDS = 8
#: Floor added to the donors' SD, as a share of the column's SD (Kinfill's own choice).
FLOOR_SHARE = 0.1
#: Seed of the calibration hiding: the same sheet and plan give the same intervals.
CAL_SEED = 0


@dataclass(frozen=True)
class ColumnCalibration:
    """The calibrated rule of one fill column.

    Attributes
    ----------
    column : str
    kind : {"number", "category"}
    k : int
        Donors combined per cell (the column's k).
    n_hidden : int
        Hidden known cells that were filled and scored.
    quantile : float
        The conformal quantile of the scores; NaN when there were too few cells.
    floor : float
        Added to the donors' SD in the score (numbers; NaN for categories).
    column_sd : float
        SD of the column's known values (numbers), the yardstick of "wide".
    coverage : float
        Share of the hidden cells inside their own interval (at least the level by
        construction; a check, not a test on fresh cells).
    """

    column: str
    kind: str
    k: int
    n_hidden: int
    quantile: float
    floor: float
    column_sd: float
    coverage: float

    @property
    def usable(self) -> bool:
        """True when the column has a quantile (enough hidden cells for the level)."""
        return math.isfinite(self.quantile)

    def note(self, level: float) -> str:
        """The fill log's words on this column's interval."""
        if self.usable:
            return f"{level:.0%} interval calibrated on {self.n_hidden} hidden known cells"
        need = needed_cells(level)
        return f"no interval: only {self.n_hidden} hidden known cells, {need} needed for {level:.0%}"


@dataclass(frozen=True)
class Calibration:
    """Per fill column, the calibrated interval rule of a fill.

    Attributes
    ----------
    level : float
        Nominal coverage (``plan.interval_level``).
    columns : dict of str to ColumnCalibration
    masking : str
        ``"gap patterns"`` when hidden rows copied the sheet's gap patterns, else ``"random"``.
    """

    level: float
    columns: dict[str, ColumnCalibration]
    masking: str

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (NaN becomes None)."""

        def plain(x: float) -> float | None:
            return float(x) if math.isfinite(x) else None

        return {
            "level": self.level,
            "masking": self.masking,
            "seed": CAL_SEED,
            "columns": {
                c: {
                    "kind": cal.kind,
                    "k": cal.k,
                    "n_hidden": cal.n_hidden,
                    "quantile": plain(cal.quantile),
                    "floor": plain(cal.floor),
                    "coverage_on_hidden": plain(cal.coverage),
                    "interval": cal.usable,
                }
                for c, cal in self.columns.items()
            },
        }


def needed_cells(level: float) -> int:
    """Fewest scored cells that give a finite quantile at ``level``: ceil((n+1)·level) <= n."""
    return max(1, math.ceil(level / (1.0 - level) - 1e-9))


def conformal_quantile(scores: FloatArray, level: float) -> float:
    """The ``ceil((n + 1) * level)``-th smallest of ``scores``; NaN when that exceeds n.

    Examples
    --------
    >>> conformal_quantile(np.arange(1.0, 20.0), 0.9)
    18.0
    """
    n = len(scores)
    rank = math.ceil((n + 1) * level - 1e-9)
    if n == 0 or rank > n:
        return float("nan")
    return float(np.partition(scores, rank - 1)[rank - 1])


def calibration_masks(
    table: PreparedTable, gaps: BoolArray, keep: Mapping[str, BoolArray], rng: np.random.Generator
) -> tuple[list[tuple[BoolArray, dict[str, BoolArray]]], bool]:
    """Rounds of cells to hide for calibration, with per fill column the cells to score.

    A row gives at most one scored cell per round (a row with two hidden fill cells is
    rarer among the real gaps than that), so the cells are spread over a few rounds.

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
    visible_sim = ~gaps[:, sim]
    n_visible = visible_sim.sum(axis=1)
    in_sim = set(sim.tolist())
    usable = {
        c: _usable(table, c, where[c], gaps, keep, n_visible, where[c] in in_sim) for c in table.fill_columns
    }
    totals = {c: _cell_count(table, c, known, ok) for c, (known, ok) in usable.items()}
    wanted = sum(totals.values()) / max(ROUND_ROWS * table.n_rows, 1.0)
    n_rounds = int(min(MAX_ROUNDS, max(1, math.ceil(wanted))))
    # scored cells a row may hold per round: 1, unless the sheet is wide (many fill
    # columns for its rows), where one per row would leave most columns without cells
    per_row = max(1, math.floor(wanted / n_rounds))
    rounds: list[tuple[BoolArray, dict[str, BoolArray]]] = [
        (np.zeros(gaps.shape, dtype=bool), {}) for _ in range(n_rounds)
    ]
    patterned = False
    busy = np.zeros((n_rounds, table.n_rows), dtype=np.intp)
    for col in (table.fill_columns[i] for i in rng.permutation(len(table.fill_columns))):
        j = where[col]
        own = sim == j
        total = totals[col]
        other = n_visible - (own.any() & ~gaps[:, j]) >= 1  # keeps another similarity value
        sources = np.flatnonzero(gaps[:, j] & other)
        taken = np.zeros(table.n_rows, dtype=bool)
        for r, (hide, chosen) in enumerate(rounds):
            free = np.flatnonzero(usable[col][1] & (busy[r] < per_row) & ~taken)
            n = min(len(free), total // n_rounds + (1 if r < total % n_rounds else 0))
            pick = np.sort(rng.choice(free, size=n, replace=False)) if n > 0 else free[:0]
            busy[r, pick] += 1
            taken[pick] = True
            chosen[col] = np.zeros(table.n_rows, dtype=bool)
            chosen[col][pick] = True
            hide[pick, j] = True
            # a row holding several scored cells would collect several patterns and lose
            # nearly all its similarity values: wide sheets hide the scored cells only
            if per_row == 1 and len(sources) and len(pick):
                patterned |= _copy_patterns(
                    hide, pick, sim, own, gaps[rng.choice(sources, size=len(pick))][:, sim], visible_sim
                )
    return rounds, patterned


def _usable(
    table: PreparedTable,
    col: str,
    column: int,
    gaps: BoolArray,
    keep: Mapping[str, BoolArray],
    n_visible: NDArray[np.intp],
    is_similarity: bool,
) -> tuple[BoolArray, BoolArray]:
    """Known cells of ``col``, and those whose row keeps another similarity value."""
    known = np.asarray(table.observed[col], dtype=bool)
    if col in keep:
        known = known & ~np.asarray(keep[col], dtype=bool)
    own = (~gaps[:, column]).astype(np.intp) if is_similarity else np.zeros(len(known), dtype=np.intp)
    return known, np.asarray(known & (n_visible - own >= 1), dtype=bool)


def _cell_count(table: PreparedTable, col: str, known: BoolArray, usable: BoolArray) -> int:
    """Cells of ``col`` to score: a share of its known cells, capped, leaving k donors."""
    share = int(CAL_SHARE * int(known.sum()) + 0.5)
    return min(CAL_MAX, share, max(int(usable.sum()) - table.plan.k_for(col), 0))


def _copy_patterns(
    hide: BoolArray,
    pick: NDArray[np.intp],
    sim: NDArray[np.intp],
    own: BoolArray,
    pattern: BoolArray,
    visible: BoolArray,
) -> bool:
    """Hide in rows ``pick`` the similarity values the pattern rows lack; never a row's last one."""
    pattern = pattern & ~own
    ok = (visible[pick] & ~pattern & ~own).any(axis=1)
    rows = pick[ok]
    if len(rows):
        hide[np.ix_(rows, sim)] |= pattern[ok]
    return bool(len(rows))


def round_scores(
    table: PreparedTable,
    hidden: PreparedTable,
    chosen: Mapping[str, BoolArray],
    cancel: CancelFlag | None = None,
    search: ColumnSearch = nearest_donors,
) -> dict[str, FloatArray]:
    """Fill one round's chosen cells with each column's k and score them, per column.

    ``search`` finds the donors (a :class:`~imputer_app.engine.NeighbourCache` passes
    its own, which reuses the lists of an earlier search of the same hidden table).
    """
    plan = table.plan
    ks = {c: plan.k_for(c) for c in table.fill_columns}
    targets = {c: m for c, m in chosen.items() if m.any()}
    if not targets:
        return {}
    donors = search(hidden, kmax=max(ks.values()), targets=targets, cancel=cancel)
    values = combine(hidden, donors, sorted(set(ks.values())))
    out: dict[str, FloatArray] = {}
    for col, d in donors.items():
        if not len(d.rows):
            continue
        if table.kinds[col] == "number":
            out[col] = _number_scores(table, hidden, col, ks[col], d, values[ks[col]][col])
        else:
            out[col] = _category_scores(table, hidden, col, ks[col], d)
    return out


def column_rule(table: PreparedTable, col: str, found: FloatArray, level: float) -> ColumnCalibration:
    """The calibrated rule of ``col`` from its pooled round results (see :func:`round_scores`).

    For numbers the floor is the median donor SD of the hidden cells (at least a tenth
    of the column's SD): it shrinks each cell's own, noisy, donor SD towards the
    column's typical one, so that a chance agreement of five donors does not give a
    cell a needlessly narrow interval nor a chance disagreement a needlessly wide one.
    """
    kind = table.kinds[col]
    sd_col = column_sd(table, col)
    if kind == "number":
        floor = max(float(np.median(found[1])) if found.shape[1] else 0.0, _floor(sd_col))
        scores = found[0] / (found[1] + floor)
    else:
        floor, scores = float("nan"), found[0]
    q = conformal_quantile(scores, level)
    coverage = float(np.mean(scores <= q)) if math.isfinite(q) else float("nan")
    return ColumnCalibration(col, kind, table.plan.k_for(col), len(scores), q, floor, sd_col, coverage)


def _floor(sd_col: float) -> float:
    return FLOOR_SHARE * sd_col if sd_col > 0 else 1e-12


def column_sd(table: PreparedTable, col: str) -> float:
    """SD (ddof=1) of a number column's known values; NaN for categories or < 2 values."""
    if table.kinds[col] != "number":
        return float("nan")
    known = np.asarray(table.values[col], dtype=np.float64)[np.asarray(table.observed[col], dtype=bool)]
    return float(np.std(known, ddof=1)) if len(known) >= 2 else float("nan")


def _number_scores(
    table: PreparedTable, hidden: PreparedTable, col: str, k: int, d: ColumnDonors, fill: NDArray[Any]
) -> FloatArray:
    """Rows: each cell's absolute error and its donors' SD (cells without a value dropped)."""
    truth = np.asarray(table.values[col], dtype=np.float64)[d.rows]
    sd = np.nan_to_num(spread(donor_values(np.asarray(hidden.values[col], dtype=np.float64), d), d, k))
    error = np.abs(truth - np.asarray(fill, dtype=np.float64))
    keep = np.isfinite(error)
    return np.vstack([error[keep], sd[keep]])


def _category_scores(
    table: PreparedTable, hidden: PreparedTable, col: str, k: int, d: ColumnDonors
) -> FloatArray:
    labels = np.asarray(table.categories[col], dtype=object)
    truth = labels[np.asarray(table.values[col], dtype=np.intp)[d.rows]]
    hidden_labels = np.empty(len(hidden.categories[col]) + 1, dtype=object)  # last entry: code -1 -> None
    hidden_labels[:-1] = hidden.categories[col]
    codes = np.asarray(hidden.values[col], dtype=np.intp)
    got = hidden_labels[np.where(d.index >= 0, codes[np.maximum(d.index, 0)], -1)]
    used = np.minimum(k, d.count)
    first = np.arange(got.shape[1])[None, :] < used[:, None]
    share = ((got == truth[:, None]) & first).sum(axis=1) / np.maximum(used, 1)
    return np.asarray((1.0 - share)[used > 0], dtype=np.float64)[None, :]
