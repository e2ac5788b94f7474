"""Fill the gaps of a table: prepare, search, decide every value, build the result.

:func:`impute` is the engine's entry point for a whole fill; each of its steps lives
in its own module (:mod:`~imputer_app.engine._prepare`,
:mod:`~imputer_app.engine._search`, :mod:`~imputer_app.engine._decide`,
:mod:`~imputer_app.engine._censored`, :mod:`~imputer_app.engine._result`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from imputer_app.engine._censored import Censored, censored_records
from imputer_app.engine._conformal import Calibration
from imputer_app.engine._decide import fill_records
from imputer_app.engine._input import SheetLike, unpack
from imputer_app.engine._intervals import ColumnSearch, add_intervals, calibrate
from imputer_app.engine._log import Records
from imputer_app.engine._prepare import prepare_input
from imputer_app.engine._result import FillResult, build_result
from imputer_app.engine._reuse import HiddenCells
from imputer_app.engine._search import ColumnDonors, search_cells
from imputer_app.engine._stack import Stack
from imputer_app.engine._support import weak_threshold
from imputer_app.engine._table import PreparedTable
from imputer_app.engine._tree_search import PATH_NAMES
from imputer_app.plan import FillPlan
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: What :func:`impute` takes: a DataFrame, a read sheet or a 2-D array.
Data = pd.DataFrame | SheetLike | NDArray[Any]
#: A donor search over flat cells, called like :func:`search_cells`
#: (``search(table, kmax=..., targets=..., progress=..., cancel=...)``).
CellSearch = Callable[..., tuple[ColumnDonors, NDArray[np.intp]]]


def impute(
    data: Data,
    plan: FillPlan,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    *,
    hidden: HiddenCells | None = None,
) -> FillResult:
    """Fill the gaps of ``data`` by k-nearest-neighbour imputation.

    With ``plan.interval_level`` set, a share of the known cells is also hidden and
    filled to calibrate an interval for every filled number (a class set for
    categories): ``FillResult.log`` gets ``lower`` and ``upper``, and
    ``FillResult.calibration`` says how many hidden cells each column used.

    Parameters
    ----------
    data : DataFrame, SheetLike or ndarray
        A DataFrame of shape (n_rows, n_columns) with NaN gaps (any column labels:
        labels that are not text are named by their text in the plan, messages and the
        fill log, and kept in the result), a read sheet
        (:class:`~imputer_app.engine.SheetLike`), whose censored cells are handled as
        the plan says, or a 2-D ndarray (columns named "0", "1", ...; the filled array
        is ``FillResult.array``). Never modified.
    plan : FillPlan
        The settings; the resolved plan is returned in ``FillResult.plan``.
    progress : callable(done, total), optional
        Called once per chunk of the neighbour search, and once more (``done ==
        total``) when the values and the log are ready.
    cancel : Event-like or callable, optional
        Checked while preparing, once per chunk of the search and while building the
        log; raises :class:`~imputer_app.errors.Cancelled` and returns nothing.
    hidden : HiddenCells, optional
        A recovery test's hidden cells (``RecoveryReport.hidden``): the intervals are
        calibrated on them instead of on cells hidden again, when the test's plan is
        the fill's but for k and it tried each column's k (``FillResult.calibration``
        says which cells were used).

    Returns
    -------
    FillResult

    Raises
    ------
    PlanError
        The plan does not fit the data (unknown column, text used as numbers, ...).

    Examples
    --------
    >>> frame = pd.DataFrame({"a": [1.0, 2.0, 3.0, None], "b": [1.0, 2.0, 3.0, 3.1]})
    >>> impute(frame, FillPlan(k=1, scaling="none")).frame["a"].tolist()
    [1.0, 2.0, 3.0, 3.0]
    >>> impute(frame.to_numpy(), FillPlan(k=1, scaling="none")).array[3].tolist()
    [3.0, 3.1]
    """
    return fill_with(search_cells, data, plan, progress, cancel, hidden=hidden)


def fill_with(
    search: CellSearch,
    data: Data,
    plan: FillPlan,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
    *,
    hidden: HiddenCells | None = None,
) -> FillResult:
    """:func:`impute` with the donors found by ``search`` (called like :func:`search_cells`).

    The fill's one code path: :func:`impute` passes the plain search, a
    :class:`~imputer_app.engine.NeighbourCache` its own, which reuses the lists of its
    last search when the plan's changes leave them valid. The calibration's searches go
    through ``search`` as well.
    """
    raise_if_cancelled(cancel)
    inp = unpack(data)
    table, censored = prepare_input(inp, plan, cancel=cancel)
    plan_used = table.plan
    k = max([plan_used.k, *(plan_used.k_for(c) for c in table.fill_columns)])  # one search for every k
    # A row is never its own donor, so no cell has more than n_rows - 1 donors: a larger k
    # uses every donor, and must not size the search's arrays (k = 10**9 would ask for TiB).
    most = max(1, table.n_rows - 1)
    if k > most:
        remark = f"k = {k} is more than the {most} possible donors; every donor is used"
        table = dataclasses.replace(table, warnings=(*table.warnings, remark))
        k = most
    # the search's steps, and one more for the values and the log (up to 40 % of the time on a
    # wide sheet), so that the bar is not full while the log is built
    steps = 0

    def searching(done: int, total: int) -> None:
        nonlocal steps
        steps = total
        report(progress, done, total + 1)

    # one flat search over every fill column: values and log rows are worked out for all at once
    found, cell_col = search(table, kmax=k, progress=searching, cancel=cancel)
    stack = Stack.of_cells(table.fill_columns, found, cell_col)
    threshold = weak_threshold([stack.donors])
    records = Records(inp.names)
    k_by_column = {c: min(v, k) for c, v in plan_used.k_by_column.items()}
    fill_records(table, stack, min(plan_used.k, k), threshold, records, k_by_column)
    censored_records(censored, table.fill_columns, table.plan.censored, records)
    raise_if_cancelled(cancel)
    gaps = inp.frame.isna().to_numpy() if plan_used.interval_level is not None else None
    calibration = (
        None
        if gaps is None
        else calibrate(inp, table, _masks(censored), gaps, cancel, hidden, by_column(search))
    )
    if calibration is not None:
        add_intervals(records, table, calibration)
    result = dataclasses.replace(
        build_result(inp, table, records, threshold, cancel), search=PATH_NAMES[found.path]
    )
    report(progress, steps + 1, steps + 1)
    return dataclasses.replace(result, calibration=calibration) if calibration is not None else result


def by_column(search: CellSearch) -> ColumnSearch:
    """``search`` (flat cells) as a search per fill column, called like :func:`nearest_donors`."""

    def columns(table: PreparedTable, **options: Any) -> dict[str, ColumnDonors]:
        found, col = search(table, **options)
        return Stack.of_cells(table.fill_columns, found, col).per_column()

    return columns


def _masks(censored: Mapping[str, Censored]) -> dict[str, NDArray[np.bool_]]:
    return {c: np.asarray(cen.mask, dtype=bool) for c, cen in censored.items()}


def calibrate_intervals(
    data: pd.DataFrame | SheetLike,
    plan: FillPlan,
    cancel: CancelFlag | None = None,
    *,
    hidden: HiddenCells | None = None,
) -> Calibration | None:
    """Calibrate the plan's intervals on ``data`` without filling (None when they are off).

    The same calibration :func:`impute` runs; the command line's ``score-k --json``
    reports it beside the recovery test.

    Parameters
    ----------
    data : DataFrame or SheetLike
        The sheet, never modified.
    plan : FillPlan
        Its ``interval_level`` and k settings are used.
    cancel : Event-like or callable, optional
        Checked between the steps.
    hidden : HiddenCells, optional
        A recovery test's hidden cells, as for :func:`impute`.
    """
    inp = unpack(data)
    table, censored = prepare_input(inp, plan, cancel=cancel)
    if plan.interval_level is None:
        return None
    return calibrate(inp, table, _masks(censored), inp.frame.isna().to_numpy(), cancel, hidden)
