"""Suggested weights: learn each similarity column's weight from the sheet's own cells.

:func:`suggest_weights` runs a coordinate search over a small grid of weights
(:data:`WEIGHT_GRID`): one similarity column at a time, every grid value is tried and
the one with the lowest recovery score on a fixed set of hidden known cells is kept;
the sweep over all columns is repeated while it still helps (at most
:data:`MAX_SWEEPS`). Coordinate search over feature weights for nearest-neighbour
methods is one of the wrapper methods reviewed by Wettschereck, Aha & Mohri 1997,
Artificial Intelligence Review 11:273-314 (reference quoted from memory).

Weights are relative (multiplying all of them by one number changes no fill), so the
result is scaled so that the median weight of the columns kept is 1. The search is
nested so that the gain it reports is honest: weights are fitted on one
set of hidden cells and judged, before and after, on a second, disjoint set that the
search never used.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from imputer_app.engine import SheetLike
from imputer_app.errors import KinfillError
from imputer_app.plan import FillPlan
from imputer_app.validation._masking import random_mask
from imputer_app.validation._recovery import RecoveryBase, fill_hidden, prepare_base
from imputer_app.validation._scoring import column_score, score_repeat
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: Weights tried for every similarity column (0 drops it from the distance).
WEIGHT_GRID = (0.0, 0.5, 1.0, 2.0, 4.0)
#: Sweeps over all columns, at most; the search stops early when a sweep changes nothing.
MAX_SWEEPS = 1
#: Share of each fill column's known cells hidden for fitting, and for judging.
FIT_FRACTION = 0.2
HIDE_FRACTION = 0.1
#: A change of weight is kept only when it lowers the score by more than this share.
MIN_GAIN = 1e-3
#: ... and by more than this many standard errors of the paired per-cell gain.
SE_FACTOR = 0.0


@dataclass(frozen=True)
class WeightSuggestion:
    """Weights learned from the sheet, with their honest effect.

    Attributes
    ----------
    weights : dict of str to float
        Suggested weight of every similarity column (0 drops it from the distance).
    score_before, score_after : float
        Overall recovery score (mean NRMSE over number fill columns; error rate when
        all are categories) with the plan's weights and with the suggested ones, both
        on judging cells the search never used.
    table : DataFrame
        Indexed by column: ``weight_before``, ``weight_after``, ``score_before``,
        ``score_after`` (the column's own score on the judging cells; NaN for a column
        that is not filled).
    plan : FillPlan
        The plan with the suggested weights (nothing else changed).
    settings : dict
        ``seed``, ``k``, ``fit_fraction``, ``judge_fraction``, ``grid``, ``sweeps`` (sweeps run) and
        ``fills`` (recovery fills made), enough to repeat the search.
    """

    weights: dict[str, float]
    score_before: float
    score_after: float
    table: pd.DataFrame
    plan: FillPlan
    settings: dict[str, Any]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form (NaN becomes None)."""

        def plain(x: Any) -> Any:
            return None if isinstance(x, float) and not math.isfinite(x) else x

        rows = {str(c): {k: plain(float(v)) for k, v in row.items()} for c, row in self.table.iterrows()}
        return {
            "weights": dict(self.weights),
            "score_before": plain(self.score_before),
            "score_after": plain(self.score_after),
            "columns": rows,
            "settings": dict(self.settings),
        }


def suggest_weights(
    data: pd.DataFrame | SheetLike,
    plan: FillPlan,
    *,
    seed: int = 0,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> WeightSuggestion:
    """Suggest a weight for every similarity column from the sheet's own known cells.

    Parameters
    ----------
    data : DataFrame or SheetLike
        The sheet, never modified.
    plan : FillPlan
        The plan whose weights are the starting point; its ``k`` is used for every fill.
    seed : int, default=0
        Seed of the two hidings (fitting and judging).
    progress : callable(done, total), optional
        Called after every recovery fill.
    cancel : Event-like or callable, optional
        Checked before every recovery fill.

    Returns
    -------
    WeightSuggestion

    Raises
    ------
    KinfillError
        When the sheet has too few known cells to hide, or no similarity column.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> sheet = pd.DataFrame(rng.normal(size=(80, 3)), columns=list("abc"))
    >>> suggest_weights(sheet, FillPlan(k=3)).weights.keys() == {"a", "b", "c"}
    True
    """
    base = prepare_base(data, plan)
    table = base.table
    columns = list(table.similarity_columns)
    if not columns:
        raise KinfillError("suggest weights needs at least one similarity column")
    rng = np.random.default_rng(seed)
    fit = random_mask(base.layout, FIT_FRACTION, rng)
    rest = dataclasses.replace(base.layout, hideable=base.layout.hideable & ~fit)
    judge = random_mask(rest, HIDE_FRACTION, rng)
    if not fit.any() or not judge.any():
        raise KinfillError("the sheet has too few known cells to suggest weights")
    k = table.plan.k
    start = {c: table.plan.weight(c) for c in columns}
    total = len(columns) * (1 + (len(WEIGHT_GRID) - 1) * MAX_SWEEPS) + 3
    done = [0]

    def errors(weights: dict[str, float]) -> np.ndarray:
        raise_if_cancelled(cancel)
        got = _cell_errors(data, base, weights, fit, k)
        done[0] += 1
        report(progress, min(done[0], total), total)
        return got

    weights, sweeps = dict(start), 0
    current = errors(weights)

    def tried(column: str, w: float) -> bool:
        """Try weight ``w`` for ``column``; keep it when it clearly helps."""
        nonlocal weights, current
        if w == 0 and _only_one_left(weights, column):
            return False
        trial = {**weights, column: w}
        got = errors(trial)
        if _better(got, current):
            weights, current = trial, got
            return True
        return False

    # first a pass that tries to drop each column: one that only adds noise is best left
    # out, and dropping it before other weights grow shows its harm most clearly
    for column in columns:
        tried(column, 0.0)
    for _ in range(MAX_SWEEPS):
        sweeps += 1
        changed = False
        for column in columns:
            down, up = _paths(weights[column])
            # lower weights first, then higher weights while they keep helping
            if any(tried(column, w) for w in down):
                changed = True
                continue
            for w in up:
                if not tried(column, w):
                    break
                changed = True
        if not changed:
            break

    weights = _rescaled(weights)

    def score(weights: dict[str, float], mask: np.ndarray) -> tuple[float, pd.Series]:
        done[0] += 1
        return _score(data, base, weights, mask, k)

    before, per_before = score(start, judge)
    after, per_after = score(weights, judge)
    report(progress, total, total)
    names = list(dict.fromkeys([*columns, *table.fill_columns]))
    frame = pd.DataFrame(
        {
            "weight_before": [start.get(c, np.nan) for c in names],
            "weight_after": [weights.get(c, np.nan) for c in names],
            "score_before": per_before.reindex(names).to_numpy(dtype=float),
            "score_after": per_after.reindex(names).to_numpy(dtype=float),
        },
        index=pd.Index(names, name="column"),
    )
    settings = {
        "seed": int(seed),
        "k": int(k),
        "fit_fraction": FIT_FRACTION,
        "judge_fraction": HIDE_FRACTION,
        "grid": list(WEIGHT_GRID),
        "sweeps": sweeps,
        "fills": done[0],
    }
    return WeightSuggestion(weights, before, after, frame, _plan_like(plan, weights), settings)


def _rescaled(weights: dict[str, float]) -> dict[str, float]:
    """``weights`` divided by the (lower) median of the weights above 0.

    Multiplying every weight by one number changes no donor and no filled value (the
    distance only scales), so weights are relative; scaled this way a typical column
    counts 1 and a weight reads as "counts this much more or less than a typical one".
    """
    kept = np.sort([w for w in weights.values() if w > 0])
    if not len(kept):
        return dict(weights)
    middle = float(kept[(len(kept) - 1) // 2])
    return {c: w / middle for c, w in weights.items()}


def _paths(weight: float) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Grid values below ``weight`` (0 first, then the nearest), and above it (nearest first)."""
    below = sorted((w for w in WEIGHT_GRID if w < weight), reverse=True)
    down = tuple(sorted(below, key=lambda w: (w != 0, -w)))
    up = tuple(sorted(w for w in WEIGHT_GRID if w > weight))
    return down, up


def _better(trial: np.ndarray, current: np.ndarray) -> bool:
    """True when ``trial`` lowers the mean error by more than one standard error of the paired gain.

    The per-cell gains are paired (same hidden cells), so their standard error measures
    how much of the gain could be chance; demanding one SE keeps the search from chasing
    noise, in the spirit of the one-standard-error rule (ESL 2nd ed., sec. 7.10).
    """
    ok = np.isfinite(trial) & np.isfinite(current)
    gain = current[ok] - trial[ok]
    if gain.size < 2:
        return False
    se = float(np.std(gain, ddof=1) / np.sqrt(gain.size))
    return float(gain.mean()) > max(SE_FACTOR * se, MIN_GAIN * float(np.mean(current[ok])))


def _cell_errors(
    data: pd.DataFrame | SheetLike, base: RecoveryBase, weights: dict[str, float], mask: np.ndarray, k: int
) -> np.ndarray:
    """Per hidden cell, its error: squared error over the column's variance, or 0/1 for a class.

    Each cell is weighted so that every fill column counts the same in the mean.
    """
    parts = []
    outcomes = fill_hidden(data, _with_weights(base, weights), mask, [k])
    for out in outcomes:
        if out.kind == "number":
            scale = out.spread**2 if out.spread > 0 else np.nan
            err = (np.asarray(out.filled[0], dtype=float) - np.asarray(out.truth, dtype=float)) ** 2 / scale
        else:
            err = (out.filled[0] != out.truth).astype(float)
        parts.append(err * (len(outcomes) / max(len(out.truth), 1)))
    return np.concatenate(parts) if parts else np.empty(0)


def _with_weights(base: RecoveryBase, weights: dict[str, float]) -> RecoveryBase:
    plan = base.table.plan.replace(weights=weights)
    return dataclasses.replace(base, table=dataclasses.replace(base.table, plan=plan))


def _plan_like(plan: FillPlan, weights: dict[str, float]) -> FillPlan:
    """The user's plan with the suggested weights (weight 1 left out, as a plan writes it)."""
    kept = {c: w for c, w in weights.items() if w != 1.0}
    return plan.replace(weights=kept)


def _only_one_left(weights: dict[str, float], column: str) -> bool:
    """True when ``column`` is the last similarity column with a weight above 0."""
    return all(w == 0 for c, w in weights.items() if c != column)


def _score(
    data: pd.DataFrame | SheetLike, base: RecoveryBase, weights: dict[str, float], mask: np.ndarray, k: int
) -> tuple[float, pd.Series]:
    """Overall recovery score at one k with ``weights``, and each fill column's score."""
    outcomes = fill_hidden(data, _with_weights(base, weights), mask, [k])
    scores, _ = score_repeat(outcomes, [k], 0)
    kinds = {o.column: o.kind for o in outcomes}
    per_column = scores.assign(score=column_score(scores, kinds)).set_index("column")["score"]
    numbers = [c for c, kind in kinds.items() if kind == "number"]
    part = per_column[numbers] if numbers else per_column
    overall = float(np.nanmean(part.to_numpy(dtype=float))) if len(part) else float("nan")
    return (overall if math.isfinite(overall) else float("inf")), per_column
