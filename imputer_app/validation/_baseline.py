"""The recovery test's baseline: what a plain average fill gives the hidden cells.

A number cell gets the mean of its column's visible cells, a category cell the most
common class of its column's known cells; with a group column, of the row's own group
(kNN takes donors only from the row's group, so a baseline that ignores groups would
flatter it). A row with no group, or whose group has nothing to average, gets no
baseline value; kNN has no donor there either, so the cell is not scored.

Numbers use the visible cells only: the mean of all known cells would include the
hidden cell's own value, pulling every baseline value towards its truth. The most
common class uses every known cell (hidden ones too): a class count moves by whole
cells, so hiding a tenth of a column can flip a near tie and make the baseline vary
between folds for no reason a user would recognise; the class a user would fill in is
that of the whole column, and counting the hidden cells can only favour the baseline.
"""

from __future__ import annotations

import numpy as np

from imputer_app.engine import PreparedTable


def baseline_values(hidden: PreparedTable, whole: PreparedTable, rows: np.ndarray, column: str) -> np.ndarray:
    """Baseline value of each hidden cell ``rows`` of ``column``.

    Parameters
    ----------
    hidden : PreparedTable
        The sheet prepared with this fold's cells hidden.
    whole : PreparedTable
        The same sheet prepared with nothing hidden (its class codes count every known cell).
    rows : int ndarray of shape (m,)
        The hidden cells' rows.
    column : str
        The fill column.

    Returns
    -------
    ndarray of shape (m,)
        Float (NaN where no baseline) for numbers, class labels (None) for categories.
    """
    key = np.zeros(hidden.n_rows, dtype=np.intp) if hidden.groups is None else np.asarray(hidden.groups)
    n_keys = max(len(hidden.group_labels), 1)
    mine = key[rows]
    per_key: np.ndarray  # the baseline of each group
    out: np.ndarray
    if hidden.kinds[column] == "category":
        known = np.asarray(whole.observed[column], dtype=bool) & (key >= 0)
        classes = np.asarray(whole.categories[column], dtype=object)
        codes = np.asarray(whole.values[column], dtype=np.intp)[known]
        votes = np.bincount(key[known] * len(classes) + codes, minlength=n_keys * len(classes))
        votes = votes.reshape(n_keys, len(classes))
        per_key = classes[votes.argmax(axis=1)]
        per_key[votes.sum(axis=1) == 0] = None
        out = np.full(rows.size, None, dtype=object)
    else:
        visible = np.asarray(hidden.observed[column], dtype=bool) & (key >= 0)
        values = np.asarray(hidden.values[column], dtype=float)
        counts = np.bincount(key[visible], minlength=n_keys)
        sums = np.bincount(key[visible], values[visible], minlength=n_keys)
        per_key = np.where(counts > 0, sums / np.maximum(counts, 1), np.nan)
        out = np.full(rows.size, np.nan)
    ok = mine >= 0
    out[ok] = per_key[mine[ok]]
    return out
