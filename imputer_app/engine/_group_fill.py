"""The no-donor rule's value: the column's mean or most common class, within the row's group (numpy only).

With a group column, kNN takes donors only from the row's own group, so the stand-in for
a cell without donor is taken there too: the mean (numbers) or most common class
(categories; a tie goes to the first class in the column's order) of the group's
measured cells. A row whose group cell is empty, or whose group has no measured cell in
the column, gets no value.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from imputer_app.engine._table import PreparedTable


def group_fill(
    table: PreparedTable, col: str, rows: NDArray[np.intp]
) -> tuple[NDArray[Any], NDArray[np.bool_]]:
    """The no-donor value of each of ``rows`` in ``col``, and whether it has one.

    Parameters
    ----------
    table : PreparedTable
        The prepared table (its ``groups`` is None without a group column).
    col : str
        A fill column.
    rows : int ndarray of shape (m,)
        Rows without donor.

    Returns
    -------
    values : ndarray of shape (m,)
        Float means (number column) or class labels (category column); meaningless
        where ``usable`` is False.
    usable : bool ndarray of shape (m,)
        False where the row has no group or its group has no measured cell in ``col``.
    """
    key = np.zeros(table.n_rows, dtype=np.intp) if table.groups is None else table.groups
    ok = table.observed[col] & (key >= 0)
    raw = np.asarray(table.values[col])
    n_keys = max(len(table.group_labels), 1)
    counts = np.bincount(key[ok], minlength=n_keys)
    per_key: NDArray[Any]
    if table.kinds[col] == "number":
        per_key = np.bincount(key[ok], raw[ok].astype(np.float64), minlength=n_keys) / np.maximum(counts, 1)
    else:
        classes = np.asarray(table.categories[col], dtype=object)
        votes = np.bincount(key[ok] * len(classes) + raw[ok].astype(np.intp), minlength=n_keys * len(classes))
        per_key = classes[votes.reshape(n_keys, len(classes)).argmax(axis=1)]
    mine = key[rows]
    usable = (mine >= 0) & (counts[np.maximum(mine, 0)] > 0)
    return per_key[np.maximum(mine, 0)], usable
