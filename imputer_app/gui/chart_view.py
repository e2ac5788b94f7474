"""Qt-side helpers for the error-against-k chart: draw, fit to a panel, follow the palette.

The chart itself is :func:`imputer_app.charts.error_vs_k.plot_error_vs_k` (no Qt);
these helpers only adapt it to a small on-screen canvas. Saved charts skip them and
keep the chart module's print-ready look.
"""

from __future__ import annotations

import contextlib
import textwrap
from collections.abc import Iterator
from typing import Any

import matplotlib
from matplotlib.figure import Figure
from PySide6.QtGui import QPalette

from imputer_app.charts.error_vs_k import plot_error_vs_k


def draw_chart(report: Any, figure: Figure, columns: tuple[str, ...] | None = None) -> Figure:
    """Draw the error-against-k chart into ``figure`` (cleared first)."""
    return plot_error_vs_k(report, figure=figure, columns=columns)


def fit_for_screen(figure: Figure, *, narrow: bool) -> None:
    """Make the chart readable in a panel: the legend off the lines, a short axis title.

    The legend goes beside the axes, or below them when the panel is ``narrow`` (placed
    by the figure's constrained layout, so it never covers lines or labels); the y-axis
    title is wrapped onto short lines so it fits a short chart.
    """
    for ax in figure.axes:
        handles, labels = ax.get_legend_handles_labels()
        legend = ax.get_legend()
        if legend is not None:
            legend.remove()
        if handles:
            figure.legend(handles, labels, loc="outside lower center" if narrow else "outside right upper",
                          ncols=2 if narrow else 1, fontsize="x-small" if narrow else "small", frameon=False)
        ax.set_ylabel("\n".join(textwrap.wrap(ax.get_ylabel(), 28)))
        ax.title.set_fontsize("medium")


@contextlib.contextmanager
def palette_style(palette: QPalette) -> Iterator[None]:
    """Draw matplotlib text, axes and background in the colours of a light Qt palette.

    With a dark palette the chart keeps its own light page: its lines are drawn in
    dark ink, which would vanish on a dark background.
    """
    if palette.color(QPalette.ColorRole.Window).lightness() < 128:
        yield
        return
    text = palette.color(QPalette.ColorRole.WindowText).name()
    back = palette.color(QPalette.ColorRole.Window).name()
    base = palette.color(QPalette.ColorRole.Base).name()
    with matplotlib.rc_context({
        "figure.facecolor": back, "axes.facecolor": base, "savefig.facecolor": back,
        "text.color": text, "axes.labelcolor": text, "axes.edgecolor": text,
        "xtick.color": text, "ytick.color": text, "legend.edgecolor": text,
        "legend.facecolor": base, "axes.titlecolor": text,
    }):
        yield
