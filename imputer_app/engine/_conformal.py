"""Calibrate an interval for every filled value on hidden known cells (numpy only).

Split conformal prediction (Vovk, Gammerman & Shafer 2005, *Algorithmic Learning in a
Random World*; Lei, G'Sell, Rinaldo, Tibshirani & Wasserman 2018, JASA 113:1094-1111):
known cells of each fill column are hidden (:mod:`~imputer_app.engine._hiding`, or the
cells of a recovery test, :mod:`~imputer_app.engine._reuse`), filled with the same
search and the column's k, and each hidden cell gets a score. Numbers use the locally
weighted score ``|truth - fill| / (donor SD + floor)``, so that a cell whose donors
disagree gets a wider interval and one whose donors agree a narrower one; the floor
(the median donor SD of the hidden cells, at least a tenth of the column's SD:
Kinfill's own choice) keeps a cell with identical donors from getting an interval of
width 0. Categories use ``1 - share of the donors voting for the true class``. The
``ceil((n + 1) * level)``-th smallest score is the column's quantile; with fewer hidden
cells than ``1 / (1 - level) - 1`` there is no honest quantile and no interval is given.

Every column's rule is worked out at once on padded arrays, and so is the coverage
measured by cross-fitting (:mod:`~imputer_app.engine._coverage`).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._combine import number_values, spread, stack_values
from imputer_app.engine._coverage import (
    COVERAGE_SEED,
    CoverageChecks,
    crossfit,
    levels_with,
    row_quantile,
    row_quantiles,
)
from imputer_app.engine._search import ColumnDonors
from imputer_app.engine._stack import Stack
from imputer_app.engine._table import PreparedTable

BoolArray = NDArray[np.bool_]
FloatArray = NDArray[np.float64]

#: Floor added to the donors' SD, as a share of the column's SD (Kinfill's own choice).
FLOOR_SHARE = 0.1
#: Seed of the calibration hiding: the same sheet and plan give the same intervals.
CAL_SEED = 0
#: Where the hidden cells came from.
OWN_CELLS = "hidden by the fill"
TEST_CELLS = "hidden by the recovery test"


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
        SD of the column's known values (numbers).
    coverage : float
        Share of the hidden cells inside their own interval (at least the level by
        construction; a check of the arithmetic, not of the interval: the measured
        coverage is :attr:`Calibration.checks`).
    column_range : float
        Width of the 5-95 % range of the column's known values (numbers), the
        yardstick of a "wide" interval.
    typical_distance : float
        Median distance from a hidden cell to its nearest donor, the yardstick of a
        "far" cell.
    """

    column: str
    kind: str
    k: int
    n_hidden: int
    quantile: float
    floor: float
    column_sd: float
    coverage: float
    column_range: float = float("nan")
    typical_distance: float = float("nan")

    @property
    def usable(self) -> bool:
        """True when the column has a quantile (enough hidden cells for the level)."""
        return math.isfinite(self.quantile)

    def note(self, level: float, source: str = OWN_CELLS) -> str:
        """The fill log's words on this column's interval."""
        where = " of the recovery test" if source == TEST_CELLS else ""
        if self.usable:
            return f"{level:.0%} interval calibrated on {self.n_hidden} hidden known cells{where}"
        need = needed_cells(level)
        return f"no interval: only {self.n_hidden} hidden known cells{where}, {need} needed for {level:.0%}"


@dataclass(frozen=True)
class Calibration:
    """Per fill column, the calibrated interval rule of a fill.

    Attributes
    ----------
    level : float
        Nominal coverage (``plan.interval_level``).
    columns : dict of str to ColumnCalibration
    masking : str
        ``"gap patterns"`` when hidden rows copied the sheet's gap patterns, else ``"random"``
        (for a recovery test's cells: its own hiding, ``"random"`` or ``"pattern"``).
    source : str
        :data:`OWN_CELLS` or :data:`TEST_CELLS`.
    checks : CoverageChecks or None
        Nominal against observed coverage on hidden cells scored against quantiles
        they did not help compute.
    remark : str
        Why a recovery test's cells were not used, when one was given ("" otherwise).
    """

    level: float
    columns: dict[str, ColumnCalibration]
    masking: str
    source: str = OWN_CELLS
    checks: CoverageChecks | None = None
    remark: str = ""

    @property
    def from_test(self) -> bool:
        """True when the hidden cells were a recovery test's."""
        return self.source == TEST_CELLS

    @property
    def n_hidden(self) -> int:
        """Hidden known cells scored over every column."""
        return sum(c.n_hidden for c in self.columns.values())

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (NaN becomes None)."""

        def plain(x: float) -> float | None:
            return float(x) if math.isfinite(x) else None

        out: dict[str, Any] = {
            "level": self.level,
            "source": self.source,
            "n_hidden": self.n_hidden,
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
        if self.remark:
            out["remark"] = self.remark
        if self.checks is not None:
            out["coverage"] = coverage_dict(self.checks)
        return out


def coverage_dict(checks: CoverageChecks) -> dict[str, dict[str, list[Any]]]:
    """The coverage table in short form: per column (first ``(all)``) levels, observed shares, cells."""
    observed, scored = checks.overall()
    rows = [("(all)", observed, scored)]
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(checks.scored > 0, checks.inside / np.maximum(checks.scored, 1), np.nan)
    rows += [(c, share[i], checks.scored[i]) for i, c in enumerate(checks.columns)]
    out: dict[str, dict[str, list[Any]]] = {}
    for name, obs, n in rows:
        keep = np.flatnonzero(n > 0)
        if len(keep):
            out[name] = {
                "level": [float(checks.levels[i]) for i in keep],
                "observed": [float(obs[i]) for i in keep],
                "n_cells": [int(n[i]) for i in keep],
            }
    return out


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


def score_cells(
    table: PreparedTable, hidden: PreparedTable, donors: Mapping[str, ColumnDonors], ks: Sequence[int]
) -> dict[str, FloatArray]:
    """Scores of hidden known cells for each k, per fill column.

    Parameters
    ----------
    table : PreparedTable
        The sheet with nothing hidden (the true values).
    hidden : PreparedTable
        The sheet with the cells hidden.
    donors : mapping of str to ColumnDonors
        The hidden cells' donors (from a search of ``hidden``).
    ks : sequence of int
        k values to fill with.

    Returns
    -------
    dict of str to ndarray of shape (len(ks), 3, cells)
        Per column and k: the error (numbers: ``|truth - fill|``; categories: 1 - the
        donors' share for the true class), the donors' SD (0 for categories) and the
        distance to the nearest donor, of every hidden cell that got a donor (same
        cells for every k), in the order of ``donors[col].rows``, which are returned
        in :func:`cell_rows`.
    """
    out: dict[str, FloatArray] = {}
    numbers = [c for c, d in donors.items() if table.kinds[c] == "number" and len(d.rows)]
    if numbers:
        stack = Stack.of(donors, numbers)
        v = stack_values(hidden, stack)
        n = table.n_rows
        truth = np.concatenate([np.asarray(table.values[c], dtype=np.float64) for c in stack.columns])
        truth = truth[stack.col * n + stack.donors.rows]
        filled = number_values(hidden, stack, ks, v)
        parts = [
            np.stack(
                [np.abs(truth - filled[k]), np.nan_to_num(spread(v, stack.donors, k)), _nearest(stack.donors)]
            )
            for k in ks
        ]
        both = np.stack(parts)  # (ks, 3, cells)
        for c, a, b in zip(stack.columns, stack.offsets[:-1], stack.offsets[1:], strict=True):
            out[c] = both[:, :, a:b]
    for col in (c for c, d in donors.items() if table.kinds[c] != "number" and len(d.rows)):
        out[col] = _category_scores(table, hidden, col, ks, donors[col])
    return out


def cell_rows(
    donors: Mapping[str, ColumnDonors], scores: Mapping[str, FloatArray]
) -> dict[str, NDArray[np.intp]]:
    """Row positions of the scored cells of :func:`score_cells`, per column."""
    return {c: np.asarray(donors[c].rows, dtype=np.intp) for c in scores}


def _nearest(donors: ColumnDonors) -> FloatArray:
    if not donors.distance.shape[1]:
        return np.full(len(donors.rows), np.nan)
    return np.where(donors.count > 0, donors.distance[:, 0], np.nan)


def _category_scores(
    table: PreparedTable, hidden: PreparedTable, col: str, ks: Sequence[int], d: ColumnDonors
) -> FloatArray:
    labels = np.asarray(table.categories[col], dtype=object)
    truth = labels[np.asarray(table.values[col], dtype=np.intp)[d.rows]]
    hidden_labels = np.empty(len(hidden.categories[col]) + 1, dtype=object)  # last entry: code -1 -> None
    hidden_labels[:-1] = hidden.categories[col]
    codes = np.asarray(hidden.values[col], dtype=np.intp)
    got = hidden_labels[np.where(d.index >= 0, codes[np.maximum(d.index, 0)], -1)]
    match = got == truth[:, None]
    out = []
    for k in ks:
        used = np.minimum(k, d.count)
        first = np.arange(got.shape[1])[None, :] < used[:, None]
        share = (match & first).sum(axis=1) / np.maximum(used, 1)
        miss = np.where(used > 0, 1.0 - share, np.nan)
        out.append(np.stack([miss, np.zeros(len(miss)), _nearest(d)]))
    return np.stack(out)


def only_scored(found: FloatArray) -> FloatArray:
    """The cells of a (3, cells) or (ks, 3, cells) score array that got a donor (finite error)."""
    finite = np.isfinite(found[..., 0, :])
    ok = np.asarray(finite.all(axis=0) if found.ndim == 3 else finite, dtype=bool)
    return found[..., ok]


def build_calibration(
    table: PreparedTable,
    found: Mapping[str, FloatArray],
    level: float,
    masking: str,
    source: str = OWN_CELLS,
    remark: str = "",
) -> Calibration:
    """Every fill column's rule and the measured coverage, from its hidden cells' scores.

    Parameters
    ----------
    table : PreparedTable
        The sheet prepared for the fill.
    found : mapping of str to ndarray of shape (3, cells)
        Per fill column, its hidden cells' error, donors' SD and nearest-donor distance
        at the column's k (see :func:`score_cells`); a column absent has no cell.
    level : float
        Nominal coverage of the intervals.
    masking, source, remark : str
        Recorded in the :class:`Calibration`.
    """
    columns = tuple(table.fill_columns)
    err, sds, dist = _padded([only_scored(np.asarray(found[c])) if c in found else None for c in columns])
    sd_col, span = _column_spread(table, columns)
    is_cat = np.array([table.kinds[c] != "number" for c in columns], dtype=bool)
    floor_min = np.where(is_cat, np.nan, np.where(sd_col > 0, FLOOR_SHARE * sd_col, 1e-12))
    counts = np.isfinite(err).sum(axis=1)
    median_sd = row_quantile(np.where(np.isfinite(err), sds, np.nan), 0.5)
    typical = row_quantile(np.where(np.isfinite(err), dist, np.nan), 0.5)
    floor = np.where(is_cat, np.nan, np.fmax(np.nan_to_num(median_sd), floor_min))
    scores = err / (sds + np.where(is_cat, 1.0, floor)[:, None])
    ordered = np.sort(np.where(np.isfinite(err), scores, np.inf), axis=1)
    want = np.ceil((counts + 1) * level - 1e-9).astype(np.intp)
    ok = (counts > 0) & (want <= counts)
    width = ordered.shape[1]
    q = (
        np.where(ok, ordered[np.arange(len(columns)), np.clip(want - 1, 0, max(width - 1, 0))], np.nan)
        if width
        else np.full(len(columns), np.nan)
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        own = np.where(ok, (scores <= q[:, None]).sum(axis=1) / np.maximum(counts, 1), np.nan)
    rules = {
        c: ColumnCalibration(
            c,
            "category" if is_cat[i] else "number",
            table.plan.k_for(c),
            int(counts[i]),
            float(q[i]),
            float(floor[i]),
            float(sd_col[i]),
            float(own[i]),
            float(span[i]),
            float(typical[i]),
        )
        for i, c in enumerate(columns)
    }
    levels = levels_with(level)
    inside, scored = crossfit(err, sds, floor_min, levels, np.random.default_rng(COVERAGE_SEED))
    checks = CoverageChecks(levels, columns, inside, scored)
    return Calibration(level, rules, masking, source, checks, remark)


def _padded(parts: Iterable[FloatArray | None]) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Errors, SDs and distances of every column as (columns, most cells) arrays, NaN padded."""
    parts = list(parts)
    width = max((p.shape[1] for p in parts if p is not None), default=0)
    out = np.full((3, len(parts), width), np.nan)
    for i, p in enumerate(parts):
        if p is not None and p.shape[1]:
            out[:, i, : p.shape[1]] = p
    return out[0], np.nan_to_num(out[1]), out[2]


def _column_spread(table: PreparedTable, columns: Sequence[str]) -> tuple[FloatArray, FloatArray]:
    """SD (ddof=1) and 5-95 % range width of each number column's known values; NaN otherwise."""
    sd, span = np.full(len(columns), np.nan), np.full(len(columns), np.nan)
    numbers = [i for i, c in enumerate(columns) if table.kinds[c] == "number"]
    if not numbers:
        return sd, span
    block = np.column_stack(
        [
            np.where(
                table.observed[columns[i]], np.asarray(table.values[columns[i]], dtype=np.float64), np.nan
            )
            for i in numbers
        ]
    )
    n = np.isfinite(block).sum(axis=0)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # columns without values: NaN, said later
        sd[numbers] = np.where(n >= 2, np.nanstd(block, axis=0, ddof=1), np.nan)
    lo, hi = row_quantiles(block.T, (0.05, 0.95))  # one sort for both
    span[numbers] = np.where(n >= 2, hi - lo, np.nan)
    return sd, span


def column_sd(table: PreparedTable, col: str) -> float:
    """SD (ddof=1) of a number column's known values; NaN for categories or < 2 values."""
    return float(_column_spread(table, (col,))[0][0])
