"""Give every kNN-filled value its calibrated interval, and judge its support (numpy only).

:func:`calibrate` hides known cells (or reuses a recovery test's) and calibrates each
fill column (:mod:`~imputer_app.engine._conformal`); :func:`add_intervals` then writes
``lower`` and ``upper`` (numbers) or the class set (categories, in the note) into the
fill log's records, and sets the support word by an absolute rule. A kNN value with a
calibrated rule is ``weak`` when

* (numbers) its interval is wider than :data:`WIDE_RANGE` times the width of the
  column's 5-95 % range of known values (the fill says no more than "somewhere in the
  column's usual range");
* its nearest donor is more than :data:`FAR` times as far as the median nearest-donor
  distance of the column's hidden known cells (it rests on rows much less like it than
  the cells the interval was calibrated on);
* its donors share on average less than :data:`FEW_SHARED` of the similarity weight
  that the cell itself has, i.e. the donors were compared on few columns.

A number without an interval, and a category, keeps the distance rule of
:mod:`~imputer_app.engine._support` besides these. The thresholds are Kinfill's own
choices, stated in README.md.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._conformal import (
    CAL_SEED,
    OWN_CELLS,
    TEST_CELLS,
    Calibration,
    ColumnCalibration,
    build_calibration,
    score_cells,
)
from imputer_app.engine._distance import Features
from imputer_app.engine._hiding import calibration_masks, hidden_table
from imputer_app.engine._input import Input
from imputer_app.engine._log import KNN, KNN_CAPPED, LogPiece, Records
from imputer_app.engine._prepare import prepare_input
from imputer_app.engine._reuse import HiddenCells
from imputer_app.engine._search import ColumnDonors, nearest_donors
from imputer_app.engine._shared import shared_weights
from imputer_app.engine._table import PreparedTable
from imputer_app.work import CancelFlag, raise_if_cancelled

BoolArray = NDArray[np.bool_]
FloatArray = NDArray[np.float64]

#: An interval wider than this share of the column's 5-95 % range makes a number weak.
WIDE_RANGE = 1.5
#: A nearest donor farther than this many times the hidden cells' median: weak.
FAR = 3.0
#: Donors sharing on average less than this share of the cell's similarity weight: weak.
FEW_SHARED = 0.5
#: A donor search per fill column, called like :func:`~imputer_app.engine.nearest_donors`
#: (``search(table, kmax=..., targets=..., cancel=...)``).
ColumnSearch = Callable[..., Mapping[str, ColumnDonors]]


def calibrate(
    inp: Input,
    table: PreparedTable,
    censored_masks: Mapping[str, BoolArray],
    gaps: BoolArray,
    cancel: CancelFlag | None = None,
    reuse: HiddenCells | None = None,
    search: ColumnSearch = nearest_donors,
) -> Calibration | None:
    """Calibrate the plan's interval on hidden known cells; None when intervals are off.

    Parameters
    ----------
    inp : Input
        The checked input (prepared again with the calibration cells hidden when the
        prepared table cannot be masked directly).
    table : PreparedTable
        The sheet prepared for the fill.
    censored_masks : mapping of str to bool ndarray of shape (n_rows,)
        Censored cells per column; never hidden.
    gaps : bool ndarray of shape (n_rows, n_frame_columns)
        The sheet's gaps, whose patterns the hidden rows copy.
    cancel : Event-like or callable, optional
        Checked between the rounds of hiding.
    reuse : HiddenCells, optional
        A recovery test's hidden cells: used instead of hiding cells again when the
        test's plan matches the fill's (but for k) and it tried each column's k;
        otherwise :attr:`Calibration.remark` says why not.
    search : callable, default=nearest_donors
        The donor search of the hidden tables, called like
        :func:`~imputer_app.engine.nearest_donors`.
    """
    level = table.plan.interval_level
    if level is None or not table.fill_columns:
        return None
    remark = ""
    if reuse is not None:
        found, remark = reuse.at_k(table)
        if found is not None:
            return build_calibration(table, found, level, reuse.masking, TEST_CELLS)
        remark = f"recovery test cells not used: {remark}"
    rng = np.random.default_rng(CAL_SEED)
    rounds, patterned = calibration_masks(table, gaps, censored_masks, rng)
    pooled: dict[str, list[FloatArray]] = {c: [] for c in table.fill_columns}
    for hide, chosen in rounds:
        raise_if_cancelled(cancel)
        hidden = hidden_table(table, hide)
        if hidden is None:
            hidden = prepare_input(inp, table.plan, hide=hide, cancel=cancel)[0]
        for col, scores in round_scores(table, hidden, chosen, cancel, search).items():
            pooled[col].append(scores)
    found = {c: np.concatenate(parts, axis=1) for c, parts in pooled.items() if parts}
    masking = "gap patterns" if patterned else "random"
    return build_calibration(table, found, level, masking, OWN_CELLS, remark)


def round_scores(
    table: PreparedTable,
    hidden: PreparedTable,
    chosen: Mapping[str, BoolArray],
    cancel: CancelFlag | None = None,
    search: ColumnSearch = nearest_donors,
) -> dict[str, FloatArray]:
    """Fill one round's chosen cells with each column's k (one search) and score them.

    ``search`` finds the donors (a :class:`~imputer_app.engine.NeighbourCache` passes its
    own, which reuses the lists of an earlier search of the same hidden table). Returns
    per column an array of shape (3, cells): see
    :func:`~imputer_app.engine._conformal.score_cells`.
    """
    ks = {c: table.plan.k_for(c) for c in table.fill_columns}
    targets = {c: m for c, m in chosen.items() if m.any()}
    if not targets:
        return {}
    donors = search(hidden, kmax=max(ks[c] for c in targets), targets=targets, cancel=cancel)
    out: dict[str, FloatArray] = {}
    for k in sorted({ks[c] for c in targets}):
        group = {c: d for c, d in donors.items() if c in targets and ks[c] == k}
        out.update({c: s[0] for c, s in score_cells(table, hidden, group, [k]).items()})
    return out


def add_intervals(records: Records, table: PreparedTable, calibration: Calibration) -> None:
    """Replace ``records``' kNN pieces by copies with intervals, notes and support set."""
    by_position = {records.position(c): cal for c, cal in calibration.columns.items()}
    records.pieces[:] = [
        _with_interval(p, table, calibration, by_position) if _is_knn(p) else p for p in records.pieces
    ]


def _is_knn(piece: LogPiece) -> bool:
    return bool(np.isin(piece.method, (KNN, KNN_CAPPED)).all()) and len(piece.pos) > 0


def _per_cell(
    column: NDArray[np.intp], by_position: Mapping[int, ColumnCalibration], name: str
) -> FloatArray:
    lookup = np.full(int(column.max()) + 1, np.nan)
    for j, cal in by_position.items():
        if j < len(lookup):
            lookup[j] = getattr(cal, name)
    return lookup[column]


def _with_interval(
    piece: LogPiece,
    table: PreparedTable,
    calibration: Calibration,
    by_position: Mapping[int, ColumnCalibration],
) -> LogPiece:
    first = by_position.get(int(piece.column[0]))
    if first is None:
        return piece
    level = calibration.level
    weak = (_shared_share(table.features, piece) < FEW_SHARED) | _far(piece, by_position)
    support = piece.support.copy()
    nan = np.full(len(piece.pos), np.nan)
    if first.kind == "number":
        lower, upper, wide = _number_interval(piece, table, by_position)
        has = np.isfinite(lower)
        support[has] = np.where(wide[has], 2, 1)
        extra = _column_words(piece, by_position, calibration)
    else:
        lower, upper = nan, nan.copy()
        extra = _class_sets(piece, table, first, level, calibration.source)
    support[weak] = 2
    support[piece.k == 0] = 0
    note = np.array(extra, dtype=object)  # joined only where the cell has a note already
    has = piece.note != ""
    note[has] = piece.note[has] + "; " + note[has]
    return dataclasses.replace(piece, lower=lower, upper=upper, support=support, note=note)


def _far(piece: LogPiece, by_position: Mapping[int, ColumnCalibration]) -> BoolArray:
    """Cells whose nearest donor is :data:`FAR` times farther than the hidden cells' median."""
    if not piece.distances.shape[1]:
        return np.zeros(len(piece.pos), dtype=bool)
    typical = _per_cell(piece.column, by_position, "typical_distance")
    with np.errstate(invalid="ignore"):
        return np.asarray((piece.k > 0) & (piece.distances[:, 0] > FAR * typical), dtype=bool)


def _number_interval(
    piece: LogPiece, table: PreparedTable, by_position: Mapping[int, ColumnCalibration]
) -> tuple[FloatArray, FloatArray, BoolArray]:
    q = _per_cell(piece.column, by_position, "quantile")
    floor = _per_cell(piece.column, by_position, "floor")
    span = _per_cell(piece.column, by_position, "column_range")
    value = np.asarray(piece.value, dtype=np.float64)
    half = q * (np.nan_to_num(piece.spread) + floor)
    lower, upper = value - half, value + half
    lo = np.array([_bound(table, c, 0) for c in table.columns])[piece.column]
    hi = np.array([_bound(table, c, 1) for c in table.columns])[piece.column]
    with np.errstate(invalid="ignore"):
        lower = np.where(lower < lo, lo, lower)
        upper = np.where(upper > hi, hi, upper)
        wide = (upper - lower) > WIDE_RANGE * span
    return lower, upper, wide


def _bound(table: PreparedTable, column: str, side: int) -> float:
    value = table.plan.bounds.get(column, (None, None))[side]
    return float("nan") if value is None else float(value)


def _column_words(
    piece: LogPiece, by_position: Mapping[int, ColumnCalibration], calibration: Calibration
) -> NDArray[np.object_]:
    words = np.empty(int(piece.column.max()) + 1, dtype=object)
    words[:] = ""
    for j, cal in by_position.items():
        if j < len(words):
            words[j] = cal.note(calibration.level, calibration.source)
    return words[piece.column]


def _class_sets(
    piece: LogPiece, table: PreparedTable, cal: ColumnCalibration, level: float, source: str
) -> NDArray[np.object_]:
    """Per cell the note on its class set: classes whose donor share reaches the threshold."""
    out = np.empty(len(piece.pos), dtype=object)
    if not cal.usable:
        out[:] = cal.note(level, source)
        return out
    classes = list(table.categories[cal.column])
    width = piece.donor_values.shape[1]
    first = np.arange(width)[None, :] < piece.k[:, None]
    used = np.maximum(piece.k, 1)
    share = np.stack(
        [((piece.donor_values == c) & first).sum(axis=1) / used for c in classes], axis=1
    ) if classes else np.zeros((len(piece.pos), 0))  # fmt: skip
    keep = share >= (1.0 - cal.quantile) - 1e-12
    kinds, which = np.unique(keep, axis=0, return_inverse=True)
    where = " of the recovery test" if source == TEST_CELLS else ""
    head = f"{level:.0%} set calibrated on {cal.n_hidden} hidden known cells{where}: "
    texts = [head + ", ".join(str(c) for c, ok in zip(classes, row, strict=True) if ok) for row in kinds]
    out[:] = np.asarray(texts, dtype=object)[np.ravel(which)] if len(texts) else ""
    return out


def _shared_share(features: Features, piece: LogPiece) -> FloatArray:
    """Per cell, the mean share of all similarity weight that it and a used donor both have."""
    out = np.ones(len(piece.pos))
    width = piece.donors.shape[1]
    if not width or not len(piece.pos) or not features.numbers.shape[1] + features.codes.shape[1]:
        return out
    total = features.total_weight if features.total_weight > 0 else 1.0
    first = np.arange(width)[None, :] < piece.k[:, None]
    shared = shared_weights(features, piece.pos, piece.donors)
    return np.asarray((shared * first).sum(axis=1) / np.maximum(piece.k, 1) / total)
