"""A limit row under the header, and the list of markers a sheet holds.

Lab sheets often give each column's limit of detection in a row right under the
header (or its units row), labelled like "LOD" or "detection limit" in a text
column. That row is not a sample: it is taken out of the data, and its numbers
become the limits of the column's below-limit cells that did not give one ("n.d.",
"<LOD"). :func:`markers_found` lists the marker texts found, with their meaning
and count, for the user to check or change.
"""

from __future__ import annotations

import re
from dataclasses import replace

import numpy as np
import pandas as pd

from imputer_app.sheets._assemble import Column
from imputer_app.sheets._cell_classes import CENSORED, NUMBER, TEXT
from imputer_app.sheets._model import MarkerFound

#: Labels of a limit row (trimmed, case-insensitive; a unit in brackets may follow).
LIMIT_ROW_LABEL = re.compile(
    r"(?i)^(?:lod|loq|mdl|d\.?l\.?|l\.o\.d\.?|detection limits?|limits? of detection|"
    r"reporting limits?|quantification limits?|limits? of quantification)\s*(?:[\[(].*[\])])?\s*:?$"
)


def take_limit_row(
    columns: list[Column], rows: np.ndarray
) -> tuple[list[Column], np.ndarray, dict[str, float], int | None]:
    """Take a limit row out of the data when the first data row is one.

    Parameters
    ----------
    columns : list of Column
        The parsed columns (:class:`~imputer_app.sheets._assemble.Column`).
    rows : ndarray of int
        1-based file rows of the data.

    Returns
    -------
    columns, rows
        Without the limit row (unchanged when there is none).
    limits : dict of str to float
        Column name to the limit the row gives it.
    limit_row : int or None
        The limit row's 1-based file row.
    """
    if rows.size < 2:
        return columns, rows, {}, None
    labelled = any(
        c.parsed.cls[0] == TEXT and LIMIT_ROW_LABEL.match(str(c.parsed.text[0]).strip()) for c in columns
    )
    limits = {c.name: float(c.parsed.number[0]) for c in columns if c.parsed.cls[0] == NUMBER}
    if not labelled or not limits:
        return columns, rows, {}, None
    keep = np.arange(1, rows.size)
    out = [replace(c, parsed=c.parsed.take(keep)) for c in columns]
    for column in out:
        if column.name in limits:
            parsed = column.parsed
            open_cells = (parsed.cls == CENSORED) & np.isnan(parsed.limit) & (parsed.side == "<")
            parsed.limit[open_cells] = limits[column.name]
    return out, rows[1:], limits, int(rows[0])


def markers_found(cell_notes: pd.DataFrame, below: frozenset[str]) -> tuple[MarkerFound, ...]:
    """Marker texts in ``cell_notes`` with their meaning and count, most frequent first.

    Missing markers are the notes of state ``missing`` with a text; below-limit markers
    are censored cells whose text gives no number ("n.d.", "<LOD", "BDL").
    """
    if cell_notes.empty:
        return ()
    text = cell_notes["text"].fillna("").astype(str).str.strip()
    state = cell_notes["state"].astype(str)
    missing = (state == "missing") & (text != "")
    below_cells = (
        (state == "censored")
        & (text.str.lower().isin(below) | ~text.str.contains(r"\d", regex=True))
        & (cell_notes["side"].astype(str) == "<")
    )
    found = pd.DataFrame(
        {
            "key": text.str.lower(),
            "text": text,
            "meaning": np.where(missing, "missing", "below-limit"),
        }
    )[missing | below_cells]
    if found.empty:
        return ()
    groups = found.groupby(["key", "meaning"], sort=False)
    counted = groups.agg(text=("text", "first"), cells=("text", "size")).reset_index()
    counted = counted.sort_values(["cells", "key"], ascending=[False, True], kind="stable")
    return tuple(
        MarkerFound(str(text), str(meaning), int(cells))
        for text, meaning, cells in zip(counted["text"], counted["meaning"], counted["cells"], strict=True)
    )
