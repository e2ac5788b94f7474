"""What the window shows of a sheet or a fill, made in the worker that reads or fills it.

A sheet's column facts (gaps, kinds, groups), its default roles and the data table's
arrays take time in proportion to its rows: about two seconds for 1,000,000 rows,
during which the window could not repaint or answer a key. :func:`with_sheet_facts`
and :func:`with_layer` wrap a worker job so that this work runs there too, and the
window only hands the finished pieces to its panels.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, TypeVar

from imputer_app.gui.setup_model import ColumnChoice, choices_for_sheet
from imputer_app.gui.table_arrays import LayerArrays, SheetArrays, layer_arrays, sheet_arrays

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet
    from imputer_app.work import CancelFlag, Progress

_T = TypeVar("_T")


@dataclass(frozen=True)
class SheetFacts:
    """A sheet's default roles, the setup panel's column list and the table's arrays.

    Attributes
    ----------
    sheet : Sheet
        The sheet they describe (a panel uses them only for this very sheet).
    roles : dict
        The engine's default role per column.
    choices : list of ColumnChoice
        The setup panel's rows under those roles.
    arrays : SheetArrays
        The data table's arrays.
    """

    sheet: Sheet
    roles: dict[str, str]
    choices: list[ColumnChoice]
    arrays: SheetArrays


def sheet_facts(sheet: Sheet) -> SheetFacts:
    """Everything the window derives from ``sheet`` alone (O(rows): call it off the window's thread)."""
    from imputer_app.engine import default_roles
    from imputer_app.validation import known_counts

    roles = default_roles(sheet)
    known_counts(sheet.frame)  # counted here once; the window asks for them on every change of plan
    return SheetFacts(sheet, roles, choices_for_sheet(sheet, roles), sheet_arrays(sheet))


def column_choices(
    sheet: Sheet, facts: SheetFacts | None, roles: dict[str, str] | None = None
) -> tuple[dict[str, str], list[ColumnChoice]]:
    """The default roles and setup rows of ``sheet``: from ``facts`` if made for it, else made now.

    ``roles`` given (a caller's own defaults) are used instead of the engine's.
    """
    if roles is None and facts is not None and facts.sheet is sheet:
        return facts.roles, list(facts.choices)
    if roles is None:
        from imputer_app.engine import default_roles

        roles = default_roles(sheet)
    return roles, choices_for_sheet(sheet, roles)


def with_sheet_facts(
    job: Callable[[Progress, CancelFlag], tuple[Sheet | None, list[str]]],
) -> Callable[[Progress, CancelFlag], tuple[Sheet | None, list[str], SheetFacts | None]]:
    """A reading job that also returns the sheet's :class:`SheetFacts` (None when no sheet was read)."""

    def reading(progress: Progress, cancel: CancelFlag) -> tuple[Sheet | None, list[str], SheetFacts | None]:
        sheet, names = job(progress, cancel)
        return sheet, names, (sheet_facts(sheet) if sheet is not None else None)

    return reading


def with_layer(
    job: Callable[[Progress, CancelFlag], FillResult], base: SheetArrays | None
) -> Callable[[Progress, CancelFlag], tuple[FillResult, LayerArrays | None]]:
    """A fill job that also returns the table's :class:`LayerArrays` of its result over ``base``."""

    def filling(progress: Progress, cancel: CancelFlag) -> tuple[FillResult, LayerArrays | None]:
        result = job(progress, cancel)
        return result, (layer_arrays(result, base) if base is not None else None)

    return filling
