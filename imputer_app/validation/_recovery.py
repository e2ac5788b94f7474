"""The recovery test: hide known cells, fill them for every k, score the fills.

Each repeat splits the hideable cells into folds (:mod:`~imputer_app.validation._masking`)
and fills each fold once; means are over all folds, standard errors across the folds
of a repeat, averaged over repeats (ESL 2nd ed., sec. 7.10), so more repeats sharpen
the mean without shrinking the standard error.

One neighbour search per fold serves every k: the engine sorts each hidden cell's
donors once up to ``max(ks)`` (:func:`imputer_app.engine.nearest_donors`) and
:func:`imputer_app.engine.combine` turns them into a value for every k from prefix
sums, so testing thirty values of k costs about as much as testing one.
"""

from __future__ import annotations

import dataclasses
import numbers
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from imputer_app import engine
from imputer_app.engine import ColumnDonors, PreparedTable, SheetLike
from imputer_app.errors import KinfillError
from imputer_app.plan import DEFAULT_KS, FillPlan
from imputer_app.validation._baseline import baseline_values
from imputer_app.validation._hidden_cells import HiddenCellCollector
from imputer_app.validation._masking import MASKINGS, CellLayout, fold_count, hide_folds, resolve_masking
from imputer_app.validation._report import RecoveryReport, build_report
from imputer_app.validation._scoring import ColumnOutcome, score_repeat
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: Largest share of a column's known cells a test may hide.
MAX_HIDE_FRACTION = 0.5

#: Progress units per repeat; the neighbour search takes most of each repeat.
_STEPS = 100
_SEARCH_STEPS = 90


def recovery_test(
    frame: pd.DataFrame | SheetLike,
    plan: FillPlan,
    ks: Iterable[int] | None = None,
    hide_fraction: float = 0.1,
    repeats: int = 5,
    seed: int | None = 0,
    masking: str = "auto",
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> RecoveryReport:
    """Hide known cells, fill them with the plan for every k, and score each k.

    Parameters
    ----------
    frame : DataFrame or SheetLike
        The sheet (``DataFrame`` of shape (n_rows, n_columns), or a read sheet,
        :class:`imputer_app.engine.SheetLike`). Never modified. NaN cells are gaps;
        censored cells (from a Sheet's ``states``) are never hidden.
    plan : FillPlan
        The fill plan to test; its ``k`` is ignored. When it names no fill columns and
        the sheet has no gaps, every similarity column is tested.
    ks : iterable of int or None, default=None
        k values to test; ``None`` means 1..30. Values above the number of donors are
        dropped (listed in ``warnings``).
    hide_fraction : float, default=0.1
        Share of each fill column's observed cells hidden per fold (0 < f <= 0.5):
        each repeat fills ``round(1 / hide_fraction)`` folds, hiding every hideable
        cell once.
    repeats : int, default=5
        Number of independent fold splits; means are over every fold of every repeat,
        standard errors across the folds of a repeat, averaged over repeats.
    seed : int or None, default=0
        Seed of the hiding; the same seed gives the same cells and the same report.
        ``None`` draws a fresh seed, recorded in ``settings``.
    masking : {"auto", "random", "pattern"}, default="auto"
        ``random`` hides cells completely at random; ``pattern`` copies the gap
        patterns of the sheet's incomplete rows onto complete rows; ``auto`` uses
        ``pattern`` when the sheet has enough incomplete and complete rows (see
        :func:`~imputer_app.validation._masking.resolve_masking`), else ``random``.
        The hiding used is ``RecoveryReport.masking``.
    progress : callable(done, total) or None
        Called per fold and during each neighbour search.
    cancel : Event-like, callable or None
        When set, :class:`~imputer_app.errors.Cancelled` is raised promptly.

    Returns
    -------
    RecoveryReport

    Raises
    ------
    KinfillError
        For a bad setting, or when no known cell can be hidden or scored.
    PlanError
        When the plan does not fit the sheet.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> rng = np.random.default_rng(1)
    >>> sheet = pd.DataFrame(rng.normal(size=(60, 4)), columns=list("abcd"))
    >>> result = recovery_test(sheet, FillPlan(), ks=[1, 5, 10], repeats=2)
    >>> result.ks
    (1, 5, 10)
    """
    _check_settings(hide_fraction, repeats, seed, masking)
    seed = _fresh_seed() if seed is None else int(seed)
    report(progress, 0, repeats * fold_count(hide_fraction) * _STEPS)
    raise_if_cancelled(cancel)
    base = prepare_base(frame, plan)
    used = resolve_masking(base.layout, masking)
    masks = draw_masks(base.layout, hide_fraction, used, seed, repeats)
    tested, notes = _resolve_ks(ks, base, [m for folds in masks for m in folds])
    score_parts, baseline_parts = [], []
    steps = sum(len(folds) for folds in masks)
    total = steps * _STEPS
    step = 0
    keep = HiddenCellCollector(base.table, tested)  # the hidden cells, for the intervals
    for repeat, folds in enumerate(masks):
        for fold, mask in enumerate(folds):
            raise_if_cancelled(cancel)
            search_progress = _scaled(progress, step * _STEPS, _SEARCH_STEPS, total)
            outcomes = fill_hidden(frame, base, mask, tested, search_progress, cancel, keep.add)
            knn_scores, baseline_scores = score_repeat(outcomes, tested, repeat, fold)
            score_parts.append(knn_scores)
            baseline_parts.append(baseline_scores)
            step += 1
            report(progress, step * _STEPS, total)
    settings = {
        "hide_fraction": float(hide_fraction),
        "repeats": int(repeats),
        "folds": fold_count(hide_fraction),
        "seed": seed,
        "masking": used,
        "masking_asked": masking,
        "ks": list(tested),
        "plan": base.table.plan.to_dict(),
    }
    table = base.table
    kinds = {c: "category" if table.kinds[c] == "category" else "number" for c in table.fill_columns}
    tested_report = build_report(
        pd.concat(score_parts, ignore_index=True),
        pd.concat(baseline_parts, ignore_index=True),
        kinds,
        tested,
        settings,
        (*table.warnings, *notes),
    )
    return dataclasses.replace(tested_report, hidden=keep.result(used))


# ---------------------------------------------------------------- set-up
def _fresh_seed() -> int:
    """A new seed from the operating system, small enough to show and type."""
    return int(np.random.default_rng().integers(0, 2**31))


def _check_settings(hide_fraction: float, repeats: int, seed: int | None, masking: str) -> None:
    if (
        isinstance(hide_fraction, bool)
        or not isinstance(hide_fraction, numbers.Real)
        or not 0 < hide_fraction <= MAX_HIDE_FRACTION
    ):
        raise KinfillError(
            f"hide_fraction must be above 0 and at most {MAX_HIDE_FRACTION}; got {hide_fraction!r}"
        )
    if isinstance(repeats, bool) or not isinstance(repeats, numbers.Integral) or repeats < 1:
        raise KinfillError(f"repeats must be a whole number of at least 1; got {repeats!r}")
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, numbers.Integral) or seed < 0):
        raise KinfillError(f"seed must be a whole number of 0 or more; got {seed!r}")
    if masking not in MASKINGS:
        raise KinfillError(f"masking must be one of {', '.join(MASKINGS)}; got {masking!r}")


def _check_ks(ks: Iterable[int]) -> list[int]:
    values = list(ks)
    bad = [k for k in values if isinstance(k, bool) or not isinstance(k, numbers.Integral) or k < 1]
    if bad or not values:
        shown = repr(bad[0]) if bad else "nothing"
        raise KinfillError(f"ks must be whole numbers of at least 1; got {shown}")
    return sorted({int(k) for k in values})


@dataclass(frozen=True)
class RecoveryBase:
    """What every repeat shares: the sheet prepared without hiding, and its known values.

    Attributes
    ----------
    table : PreparedTable
        The sheet prepared by the engine with nothing hidden; its plan is the one tested.
    layout : CellLayout
        Hideable cells, real gaps and column positions.
    truth : dict of str to ndarray of shape (n_rows,)
        Each fill column's values before hiding: float (NaN at gaps) or class labels
        (None at gaps).
    spread : dict of str to float
        Sample standard deviation (``ddof=1``) of each number column's observed
        values, the NRMSE scale (number columns only).
    """

    table: PreparedTable
    layout: CellLayout
    truth: dict[str, np.ndarray]
    spread: dict[str, float]


def prepare_base(data: pd.DataFrame | SheetLike, plan: FillPlan) -> RecoveryBase:
    """Prepare ``data`` once with nothing hidden and collect its known values."""
    table = _base_table(data, plan)
    layout = cell_layout(data, table)
    truth = {column: _known_values(table, column) for column in table.fill_columns}
    spread = {
        column: _sample_sd(truth[column][layout.hideable[:, j]])
        for column, j in zip(table.fill_columns, layout.fill_idx, strict=True)
        if table.kinds[column] != "category"
    }
    return RecoveryBase(table, layout, truth, spread)


def draw_masks(
    layout: CellLayout, hide_fraction: float, masking: str, seed: int, repeats: int
) -> list[list[np.ndarray]]:
    """Every repeat's folds, drawn in order from one seeded generator.

    Returns
    -------
    list (one per repeat) of list (one per fold) of bool ndarray of shape (n_rows, n_columns)
    """
    rng = np.random.default_rng(seed)
    return [hide_folds(layout, hide_fraction, masking, rng) for _ in range(repeats)]


def _base_table(data: pd.DataFrame | SheetLike, plan: FillPlan) -> PreparedTable:
    """Prepare the sheet once without hiding, with the fill columns to test fixed.

    With no fill columns named and no gaps in the sheet there is nothing the plan
    would fill, so every similarity column is tested instead.
    """
    table = engine.prepare(data, plan)
    if not table.fill_columns:
        table = engine.prepare(data, table.plan.replace(fill_columns=tuple(table.similarity_columns)))
    if not table.fill_columns:
        raise KinfillError("the plan has no fill column to test; choose fill columns first")
    return table


def cell_layout(data: pd.DataFrame | SheetLike, table: PreparedTable) -> CellLayout:
    """Which cells of ``data`` may be hidden, which are real gaps, and column roles.

    A cell may be hidden when it holds a value, its state (for a Sheet) is
    ``observed`` and, in a fill column, the engine would use it as a donor value.
    """
    frame, states = (data, None) if isinstance(data, pd.DataFrame) else (data.frame, data.states)
    present = frame.notna().to_numpy()
    if states is None:
        hideable, gaps = present.copy(), ~present
    else:
        state = states.loc[frame.index, frame.columns].to_numpy(dtype=object)
        hideable = present & (state == "observed")
        gaps = ~present & (state != "censored")
    position = {name: j for j, name in enumerate(frame.columns)}
    fill_idx = np.array([position[c] for c in table.fill_columns], dtype=np.intp)
    for column, j in zip(table.fill_columns, fill_idx, strict=True):
        hideable[:, j] &= np.asarray(table.observed[column], dtype=bool)
    sim = [position[c] for c in table.similarity_columns if table.plan.weight(c) > 0]
    return CellLayout(hideable=hideable, gaps=gaps, fill_idx=fill_idx, sim_idx=np.array(sim, dtype=np.intp))


def _known_values(table: PreparedTable, column: str) -> np.ndarray:
    """A fill column's values before hiding: floats, or class labels (None = gap)."""
    values = np.asarray(table.values[column])
    if table.kinds[column] != "category":
        return values.astype(float)
    return _labels(table.categories[column], values)


def _labels(categories: np.ndarray, codes: np.ndarray) -> np.ndarray:
    """Class labels of integer ``codes`` (object array; None where the code is -1)."""
    classes = np.asarray(categories, dtype=object)
    codes = np.asarray(codes, dtype=np.intp)
    out = np.full(codes.shape, None, dtype=object)
    known = codes >= 0
    out[known] = classes[codes[known]]
    return out


def _resolve_ks(
    ks: Iterable[int] | None, base: RecoveryBase, masks: Sequence[np.ndarray]
) -> tuple[tuple[int, ...], list[str]]:
    """Validate ``ks`` and cap them at the most donors any column keeps visible."""
    columns = list(zip(base.table.fill_columns, base.layout.fill_idx, strict=True))
    donors = min(
        max(int((np.asarray(base.table.observed[c], dtype=bool) & ~mask[:, j]).sum()) for c, j in columns)
        for mask in masks
    )
    cap = max(donors, 1)
    wanted = list(DEFAULT_KS) if ks is None else _check_ks(ks)
    kept = tuple(k for k in wanted if k <= cap) or (cap,)
    notes = []
    dropped = [k for k in wanted if k > cap]
    if dropped and ks is not None:
        shown = ", ".join(map(str, dropped))
        notes.append(f"k values above {cap} were not tested (at most {cap} donors): {shown}")
    return kept, notes


def _scaled(progress: Progress | None, start: int, span: int, total: int) -> Progress | None:
    """A progress callback mapping an inner ``(done, of)`` onto ``start..start+span``."""
    if progress is None:
        return None

    def inner(done: int, of: int) -> None:
        progress(start + (span * done) // max(of, 1), total)

    return inner


# ---------------------------------------------------------------- one repeat
def fill_hidden(
    data: pd.DataFrame | SheetLike,
    base: RecoveryBase,
    mask: np.ndarray,
    ks: Sequence[int],
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    collect: Callable[[PreparedTable, Mapping[str, ColumnDonors]], None] | None = None,
) -> list[ColumnOutcome]:
    """Fill one repeat's hidden cells for every k with one neighbour search.

    Parameters
    ----------
    data : DataFrame or SheetLike
        The sheet, unchanged.
    base : RecoveryBase
        The sheet prepared without hiding, with its known values.
    mask : bool ndarray of shape (n_rows, n_columns)
        Cells to hide (True); the engine treats them as gaps.
    ks : sequence of int
        k values to fill with.
    progress, cancel
        Passed to the neighbour search.
    collect : callable(hidden, donors), optional
        Given the table with the cells hidden and their donors (to keep the cells for
        the interval calibration).

    Returns
    -------
    list of ColumnOutcome
        One per fill column with hidden cells, cells in the engine's target order.
    """
    table = base.table
    hidden = engine.prepare(data, table.plan, hide=mask)
    columns = zip(table.fill_columns, base.layout.fill_idx, strict=True)
    targets = {column: mask[:, j] for column, j in columns if mask[:, j].any()}
    raise_if_cancelled(cancel)
    donors = engine.nearest_donors(hidden, kmax=max(ks), targets=targets, progress=progress, cancel=cancel)
    if collect is not None:
        collect(hidden, donors)
    values = engine.combine(hidden, donors, ks)
    return [
        _outcome(hidden, base, column, donors[column].rows, [values[k][column] for k in ks])
        for column in targets
        if column in donors
    ]


def _outcome(
    hidden: PreparedTable, base: RecoveryBase, column: str, rows: np.ndarray, per_k: list[np.ndarray]
) -> ColumnOutcome:
    """Truth, every k's values and the baseline for one column's hidden cells."""
    rows = np.asarray(rows, dtype=np.intp)
    baseline = baseline_values(hidden, base.table, rows, column)
    if hidden.kinds[column] == "category":
        classes = hidden.categories[column]
        filled = np.stack([_labels(classes, codes) for codes in per_k])
        kind = "category"
    else:
        filled = np.stack([np.asarray(v, dtype=float) for v in per_k])
        kind = "number"
    spread = base.spread.get(column, float("nan"))
    return ColumnOutcome(column, kind, base.truth[column][rows], filled, baseline, spread)


def _sample_sd(values: np.ndarray) -> float:
    finite = values[np.isfinite(values)]
    return float(np.std(finite, ddof=1)) if finite.size >= 2 else float("nan")
