"""Column facts found on reading that decide default roles: computed and group-like columns.

A column is *computed* when most of its filled cells hold a formula (the workbook's
``<f>`` elements, found by the extent scan): its values follow from other columns, so
a fill must never write into it. A number column is *group-like* when it holds a few
distinct whole values, each seen at least twice on average (block, plot, replicate):
it is offered as a category and as a group column.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from imputer_app.sheets._cell_classes import BLANK, NUMBER, all_whole
from imputer_app.sheets._cells import ParsedColumn

#: Share of a column's filled cells that must be formulas for it to be computed.
COMPUTED_SHARE = 0.5
#: Most distinct whole values a group-like number column may have.
MAX_GROUP_LEVELS = 10

#: The reason shown for a computed column carried by default.
COMPUTED_REASON = "computed by formulas in the sheet (its values follow from other columns)"


def is_computed(
    parsed: ParsedColumn, position: int, rows: np.ndarray, formulas: Mapping[int, np.ndarray]
) -> bool:
    """True when most filled cells of the column at grid ``position`` are formula cells.

    ``rows`` are the 1-based file rows of the column's cells (as in ``Sheet.frame``'s
    index); ``formulas`` maps a 0-based grid column to the 0-based rows of its formulas.
    """
    found = formulas.get(position)
    if found is None or not found.size:
        return False
    filled = parsed.cls != BLANK  # formulas with an error or no stored value count too
    formula_rows = np.isin(rows - 1, found)
    return bool(formula_rows.sum() > COMPUTED_SHARE * max(int(filled.sum()), 1))


def is_group_like(parsed: ParsedColumn) -> bool:
    """True for a number column of few distinct whole values each seen twice on average."""
    numbers = parsed.number[parsed.cls == NUMBER]
    numbers = numbers[np.isfinite(numbers)]
    if numbers.size < 4 or not all_whole(numbers):
        return False
    levels = np.unique(numbers).size
    return bool(2 <= levels <= MAX_GROUP_LEVELS and numbers.size >= 2 * levels)
