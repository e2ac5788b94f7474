"""Qt-side helpers for the error-against-k chart: draw, fit to a panel, follow the palette.

The chart itself is :func:`imputer_app.charts.error_vs_k.plot_error_vs_k` (no Qt);
these helpers only adapt it to a small on-screen canvas. Saved charts skip them and
keep the chart module's print-ready look.
"""

from __future__ import annotations

import contextlib
import re
import textwrap
from collections.abc import Collection, Iterator
from typing import TYPE_CHECKING

import matplotlib
from matplotlib.figure import Figure
from PySide6.QtGui import QPalette

from imputer_app.charts import plot_error_vs_k

if TYPE_CHECKING:
    from imputer_app.validation import RecoveryReport


def draw_chart(report: RecoveryReport, figure: Figure, columns: tuple[str, ...] | None = None) -> Figure:
    """Draw the error-against-k chart into ``figure`` (cleared first)."""
    return plot_error_vs_k(report, figure=figure, columns=columns)


def fit_for_screen(figure: Figure, *, narrow: bool, unlisted: Collection[str] = ()) -> None:
    """Make the chart readable in a panel: the legend off the lines, short titles.

    The legend goes beside the axes, or below them when the panel is ``narrow`` (placed
    by the figure's constrained layout, so it never covers lines or labels); the y-axis
    title drops its bracketed explanation and wraps onto short lines so it fits a short
    chart. A ``narrow`` chart keeps only the metric's name on the y axis, drops the
    title's "Recovery test:" prefix and the legend labels' bracketed asides, so that
    nothing is cut at the panel's edge. Lines labelled with a name in ``unlisted``
    (say, dozens of columns) are drawn but left out of the legend.
    """
    for ax in figure.axes:
        handles, labels = ax.get_legend_handles_labels()
        kept = [(h, label) for h, label in zip(handles, labels, strict=True) if label not in unlisted]
        handles, labels = [h for h, _ in kept], [label for _, label in kept]
        legend = ax.get_legend()
        if legend is not None:
            legend.remove()
        if narrow:  # the legend shares the panel's width with nothing: short labels fit
            labels = [_without_brackets(label) for label in labels]
        if handles:
            figure.legend(
                handles,
                labels,
                loc="outside lower center" if narrow else "outside right upper",
                ncols=2 if narrow else 1,
                fontsize="x-small" if narrow else "small",
                frameon=False,
            )
        # A panel is short: the axis title loses its explanation in brackets (the saved
        # chart and the canvas's tooltip keep it), and the chart title its first words.
        ylabel = _without_brackets(ax.get_ylabel())
        if narrow:  # "NRMSE on hidden cells" -> "NRMSE": the axes are short under a legend
            ylabel = ylabel.split(" on ")[0]
        ax.set_ylabel("\n".join(textwrap.wrap(ylabel, 28)))
        title = ax.get_title()
        if narrow:  # "Recovery test: error against k ..." -> "Error against k ..."
            title = title.split(": ", 1)[-1]
            title = title[:1].upper() + title[1:]
        ax.set_title(title, fontsize="medium")


def _without_brackets(text: str) -> str:
    """Drop bracketed asides: "NRMSE (RMSE / column SD) on hidden cells" -> "NRMSE on hidden cells"."""
    return re.sub(r"\s*\([^)]*\)", "", text).strip()


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
    with matplotlib.rc_context(
        {
            "figure.facecolor": back,
            "axes.facecolor": base,
            "savefig.facecolor": back,
            "text.color": text,
            "axes.labelcolor": text,
            "axes.edgecolor": text,
            "xtick.color": text,
            "ytick.color": text,
            "legend.edgecolor": text,
            "legend.facecolor": base,
            "axes.titlecolor": text,
        }
    ):
        yield
