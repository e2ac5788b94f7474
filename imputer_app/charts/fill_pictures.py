"""Pictures of a fill, to see whether the filled values look like the measured ones.

Two figures, built on :class:`matplotlib.figure.Figure` (never pyplot):

- :func:`plot_fill_distribution`: for one fill column, the histogram of measured
  values and of filled values on one axis, with a rug of the filled values and the
  reporting limits marked;
- :func:`plot_fill_scatter`: two columns against each other, measured points as blue
  circles and filled points (filled in either coordinate) as vermillion triangles, so
  a filled value off the cloud stands out. :class:`ScatterPicture` maps a clicked
  point back to its row.

Both read a fill result by duck typing (:class:`FilledSheet`: ``frame`` and
``filled``, optionally ``censored``), since ``charts`` sits below the engine's
callers and must not depend on them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.collections import PathCollection
from matplotlib.figure import Figure

from imputer_app.charts import _palette as pal
from imputer_app.errors import KinfillError

#: Most bins a histogram uses.
MAX_BINS = 30
#: Pick radius (points) for clicking a point in the scatter.
PICK_RADIUS = 5


class FilledSheet(Protocol):
    """What the pictures read from a fill result (``engine.FillResult`` has it all).

    Attributes
    ----------
    frame : DataFrame
        The filled sheet.
    filled : DataFrame of bool
        True where a value was filled in; same index and columns as ``frame``.
    """

    frame: pd.DataFrame
    filled: pd.DataFrame


def _numbers(result: FilledSheet, column: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values of ``column`` and the masks (measured, filled) over its rows."""
    if column not in result.frame.columns:
        raise KinfillError(f"cannot draw column '{column}': the sheet has no such column")
    series = result.frame[column]
    if not pd.api.types.is_numeric_dtype(series):
        raise KinfillError(f"cannot draw column '{column}': it does not hold numbers")
    values = series.to_numpy(dtype=float)
    filled = (
        result.filled[column].to_numpy(dtype=bool)
        if column in result.filled.columns
        else np.zeros(values.size, bool)
    )
    censored_frame = getattr(result, "censored", None)
    censored = np.zeros(values.size, dtype=bool)
    if isinstance(censored_frame, pd.DataFrame) and column in censored_frame.columns:
        censored = censored_frame[column].to_numpy(dtype=bool)
    present = ~np.isnan(values)
    return values, present & ~filled & ~censored, present & filled


def _style(ax: Axes, title: str, xlabel: str, ylabel: str) -> None:
    ax.set_title(title, fontsize=pal.TITLE_SIZE)
    ax.set_xlabel(xlabel, fontsize=pal.LABEL_SIZE)
    ax.set_ylabel(ylabel, fontsize=pal.LABEL_SIZE)
    ax.tick_params(labelsize=pal.TICK_SIZE)
    ax.grid(True, color="#e3e3e3", linewidth=0.8)
    ax.set_axisbelow(True)


def plot_fill_distribution(
    result: FilledSheet,
    column: str,
    *,
    limits: Sequence[float] = (),
    figure: Figure | None = None,
) -> Figure:
    """Draw the measured and the filled values of one column on one axis.

    Both histograms share their bins and are scaled as densities, so their shapes
    compare even when few values were filled; each filled value is also shown as a
    triangle in a rug under the bars.

    Parameters
    ----------
    result : FillResult-like
        Has ``frame`` and ``filled`` (and optionally ``censored``: censored entries
        replaced by a number from their limit are drawn as black ticks, not counted as
        measured).
    column : str
        A number column of ``result.frame``.
    limits : sequence of float, default=()
        Reporting limits of the column, drawn as dashed vertical lines.
    figure : Figure or None, default=None
        Figure to draw on (cleared first); a new 6.4 x 4.2 inch figure when None.

    Returns
    -------
    matplotlib.figure.Figure
        One Axes. Artists carry gids ``measured``, ``filled``, ``filled_rug``,
        ``substituted_rug`` and ``limit``.

    Raises
    ------
    KinfillError
        When ``column`` is missing or does not hold numbers.
    """
    values, measured, filled = _numbers(result, column)
    substituted = ~np.isnan(values) & ~measured & ~filled
    fig = figure if figure is not None else Figure(figsize=(6.4, 4.2), layout="constrained")
    fig.clear()
    ax = fig.add_subplot()
    shown = values[measured | filled | substituted]
    bins = _bins(shown)
    for mask, colour, label, hatch, gid in (
        (measured, pal.MEASURED_COLOUR, pal.MEASURED_LABEL, None, "measured"),
        (filled, pal.FILLED_COLOUR, pal.FILLED_LABEL, "//", "filled"),
    ):
        if mask.any():
            ax.hist(
                values[mask],
                bins=bins,
                density=True,
                histtype="step",
                linewidth=2.0,
                color=colour,
                hatch=hatch,
                label=f"{label} (n = {int(mask.sum())})",
                gid=gid,
            )
    # Room under zero for the rugs, so no bar hides a filled value.
    top = ax.get_ylim()[1]
    ax.set_ylim(-0.14 * top, top)
    _rug(ax, values[filled], pal.FILLED_COLOUR, pal.FILLED_MARKER, -0.045 * top, "filled_rug")
    _rug(
        ax,
        values[substituted],
        pal.SUBSTITUTED_COLOUR,
        pal.SUBSTITUTED_MARKER,
        -0.1 * top,
        "substituted_rug",
        f"{pal.SUBSTITUTED_LABEL} (n = {int(substituted.sum())})",
    )
    for i, limit in enumerate(limits):
        ax.axvline(
            float(limit),
            color=pal.LIMIT_COLOUR,
            linestyle="--",
            linewidth=1.5,
            label=pal.LIMIT_LABEL if i == 0 else None,
            gid="limit",
        )
    _style(ax, f"{column}: measured and filled values", column, "density")
    ax.legend(fontsize=pal.TICK_SIZE, frameon=False)
    return fig


def _bins(values: np.ndarray) -> list[float] | int:
    """Shared bin edges: the Freedman-Diaconis rule, at most :data:`MAX_BINS` bins."""
    if values.size < 2 or np.ptp(values) == 0:
        return 1
    edges = np.histogram_bin_edges(values, bins="fd")
    if edges.size - 1 > MAX_BINS:
        edges = np.histogram_bin_edges(values, bins=MAX_BINS)
    return [float(e) for e in edges]


def _rug(
    ax: Axes, values: np.ndarray, colour: str, marker: str, offset: float, gid: str, label: str | None = None
) -> None:
    """Mark each value at height ``offset`` (below zero, under the bars)."""
    if not values.size:
        return
    ax.plot(
        values,
        np.full(values.size, offset),
        linestyle="none",
        marker=marker,
        markersize=7,
        color=colour,
        alpha=0.8,
        label=label,
        gid=gid,
    )


def fill_distributions(
    result: FilledSheet,
    columns: Sequence[str] | None = None,
    limits: Mapping[str, Sequence[float]] | None = None,
) -> dict[str, Figure]:
    """One :func:`plot_fill_distribution` figure per column with at least one filled value.

    Parameters
    ----------
    result : FillResult-like
        Has ``frame`` and ``filled`` (see :func:`plot_fill_distribution`).
    columns : sequence of str or None
        Columns to draw; None draws every number column with a filled value.
    limits : mapping of str to sequence of float or None
        Reporting limits per column.
    """
    if columns is None:
        columns = [
            str(c)
            for c in result.frame.columns
            if pd.api.types.is_numeric_dtype(result.frame[c])
            and c in result.filled.columns
            and bool(result.filled[c].any())
        ]
    return {c: plot_fill_distribution(result, c, limits=(limits or {}).get(c, ())) for c in columns}


@dataclass(frozen=True)
class ScatterPicture:
    """A scatter of two columns and the rows behind its points.

    Attributes
    ----------
    figure : Figure
    measured, filled : PathCollection or None
        The two groups of points (None when a group is empty); both are pickable.
    measured_rows, filled_rows : tuple
        Row labels (index of ``result.frame``) of the points, in the order drawn.
    """

    figure: Figure
    measured: PathCollection | None
    filled: PathCollection | None
    measured_rows: tuple[Any, ...]
    filled_rows: tuple[Any, ...]

    def point_rows(self, artist: Any, indices: Sequence[int]) -> list[Any]:
        """Row labels of the points ``indices`` of ``artist`` (as in a matplotlib pick event).

        Returns an empty list for an artist that is not one of the two groups.
        """
        if artist is not None and artist is self.filled:
            rows = self.filled_rows
        elif artist is not None and artist is self.measured:
            rows = self.measured_rows
        else:
            return []
        return [rows[int(i)] for i in indices]


def plot_fill_scatter(result: FilledSheet, x: str, y: str, *, figure: Figure | None = None) -> ScatterPicture:
    """Draw ``y`` against ``x``; points filled in either column stand out.

    Parameters
    ----------
    result : FillResult-like
        Has ``frame`` and ``filled``.
    x, y : str
        Two number columns. Rows with no value in either are left out.
    figure : Figure or None, default=None
        Figure to draw on (cleared first); a new 6.4 x 5.2 inch figure when None.

    Returns
    -------
    ScatterPicture
        The figure, the two point groups and their row labels; in the app, connect
        ``pick_event`` and call :meth:`ScatterPicture.point_rows`.

    Raises
    ------
    KinfillError
        When a column is missing or does not hold numbers.
    """
    xv, _, x_filled = _numbers(result, x)
    yv, _, y_filled = _numbers(result, y)
    drawn = ~np.isnan(xv) & ~np.isnan(yv)
    filled = drawn & (x_filled | y_filled)
    measured = drawn & ~filled
    fig = figure if figure is not None else Figure(figsize=(6.4, 5.2), layout="constrained")
    fig.clear()
    ax = fig.add_subplot()
    labels = result.frame.index.to_numpy()
    groups: list[PathCollection | None] = []
    for mask, colour, marker, size, label, gid in (
        (measured, pal.MEASURED_COLOUR, pal.MEASURED_MARKER, 22, pal.MEASURED_LABEL, "measured"),
        (filled, pal.FILLED_COLOUR, pal.FILLED_MARKER, 48, f"{pal.FILLED_LABEL} in {x} or {y}", "filled"),
    ):
        if not mask.any():
            groups.append(None)
            continue
        groups.append(
            ax.scatter(
                xv[mask],
                yv[mask],
                s=size,
                c=colour,
                marker=marker,
                edgecolors="white" if gid == "measured" else "black",
                linewidths=0.5,
                alpha=0.75 if gid == "measured" else 0.95,
                label=f"{label} (n = {int(mask.sum())})",
                picker=PICK_RADIUS,
                gid=gid,
                zorder=2 if gid == "measured" else 3,
            )
        )
    _style(ax, f"{y} against {x}", x, y)
    ax.legend(fontsize=pal.TICK_SIZE, frameon=False)
    return ScatterPicture(
        figure=fig,
        measured=groups[0],
        filled=groups[1],
        measured_rows=tuple(labels[measured].tolist()),
        filled_rows=tuple(labels[filled].tolist()),
    )
