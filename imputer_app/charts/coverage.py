"""Nominal against observed coverage of prediction intervals, as one figure.

An interval meant to hold the true value 90 % of the time should do so about 90 % of
the time on hidden cells; points on the diagonal mean the intervals say what they
claim, points below it mean they are too narrow.
"""

from __future__ import annotations

import pandas as pd
from matplotlib.figure import Figure

from imputer_app.charts import _palette as pal
from imputer_app.errors import KinfillError

#: Columns :func:`plot_coverage` needs.
COVERAGE_COLUMNS = ("level", "observed")
DIAGONAL_LABEL = "intervals as claimed"
#: Rows of a per-column coverage table that pool every column.
ALL_ROWS = "(all)"


def plot_coverage(table: pd.DataFrame, *, figure: Figure | None = None) -> Figure:
    """Draw observed coverage against the nominal level, with the diagonal.

    Parameters
    ----------
    table : DataFrame
        Columns ``level`` (nominal coverage, 0-1) and ``observed`` (share of hidden
        cells inside their interval, 0-1), one row per level; an optional ``n`` or
        ``n_cells`` column (cells scored) is shown in the title. A table with a
        ``column`` column (``FillResult.coverage``) is drawn from its ``"(all)"`` rows,
        which pool every fill column.
    figure : Figure or None, default=None
        Figure to draw on (cleared first); a new 5.2 x 5.0 inch figure when None.

    Returns
    -------
    matplotlib.figure.Figure
        One Axes with artists ``diagonal`` and ``observed`` (by gid).

    Raises
    ------
    KinfillError
        When a needed column is missing or a value lies outside 0-1.
    """
    missing = [c for c in COVERAGE_COLUMNS if c not in table.columns]
    if missing:
        raise KinfillError(f"coverage table lacks column '{missing[0]}'")
    if "column" in table.columns and (table["column"] == ALL_ROWS).any():
        table = table[table["column"] == ALL_ROWS]
    if "n" not in table.columns and "n_cells" in table.columns:
        table = table.rename(columns={"n_cells": "n"})
    data = table.sort_values("level")
    level = data["level"].to_numpy(dtype=float)
    observed = data["observed"].to_numpy(dtype=float)
    if ((level < 0) | (level > 1) | (observed < 0) | (observed > 1)).any():
        raise KinfillError("coverage levels and observed shares must lie between 0 and 1")
    fig = figure if figure is not None else Figure(figsize=(5.2, 5.0), layout="constrained")
    fig.clear()
    ax = fig.add_subplot()
    ax.plot(
        [0, 1],
        [0, 1],
        color=pal.REFERENCE_COLOUR,
        linestyle="--",
        linewidth=1.4,
        label=DIAGONAL_LABEL,
        gid="diagonal",
    )
    ax.plot(
        level,
        observed,
        color=pal.MEASURED_COLOUR,
        marker="o",
        markersize=7,
        linewidth=2.0,
        label="observed on hidden cells",
        gid="observed",
    )
    low = min(float(level.min()), float(observed.min()), 0.5) - 0.05 if level.size else 0.0
    ax.set_xlim(low, 1.0)
    ax.set_ylim(low, 1.0)
    ax.set_aspect("equal")
    title = "Interval coverage"
    if "n" in data.columns and data["n"].notna().any():
        title += f" ({int(data['n'].max())} cells)"
    ax.set_title(title, fontsize=pal.TITLE_SIZE)
    ax.set_xlabel("nominal coverage (level asked for)", fontsize=pal.LABEL_SIZE)
    ax.set_ylabel("observed coverage", fontsize=pal.LABEL_SIZE)
    ax.tick_params(labelsize=pal.TICK_SIZE)
    ax.grid(True, color="#e3e3e3", linewidth=0.8)
    ax.legend(fontsize=pal.TICK_SIZE, frameon=False, loc="upper left")
    return fig
