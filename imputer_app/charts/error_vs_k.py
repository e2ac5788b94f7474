"""Error against k: the recovery test's evidence for choosing k, as one figure.

The figure is built on :class:`matplotlib.figure.Figure` directly (never pyplot), so
it can be drawn on any thread and needs no GUI backend; the app embeds it in its own
canvas and the export saves it with :func:`save_figure`.

``charts`` sits below ``validation`` in the layers, so it reads the report by duck
typing (:class:`ErrorVsK`) instead of importing it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Protocol

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from imputer_app.charts import _palette as pal
from imputer_app.errors import ExportError
from imputer_app.files import atomic_target

#: The overall score and the baseline in neutral ink, so the column lines keep the colours.
INK = pal.OKABE_ITO["black"]  # overall score
BASELINE = pal.REFERENCE_COLOUR  # column-mean fill
BEST = pal.OKABE_ITO["vermillion"]  # best k (a star, so it differs from a column line by shape too)
ONE_SE = pal.OKABE_ITO["bluish_green"]  # one-SE k (a diamond)
#: One colour per fill column: the Okabe-Ito palette without black (kept for the overall
#: line), which readers with the common forms of colour blindness can tell apart (Okabe &
#: Ito 2008, "Color Universal Design"; hex values quoted from memory). Yellow comes last:
#: it is the faintest on a white page.
COLUMN_COLOURS = tuple(
    pal.OKABE_ITO[name]
    for name in ("blue", "orange", "sky_blue", "vermillion", "bluish_green", "reddish_purple", "yellow")
)
#: One marker shape per fill column, so lines of like colour (or in grey print) still differ.
COLUMN_MARKERS = ("o", "s", "^", "v", "p", "P", "X", "<", ">", "h")  # no "D" or "*": the k marks
#: Tick steps tried when thinning the k axis: the first that fits is used.
TICK_STEPS = (1, 2, 5, 10, 20, 25, 50, 100)

#: Labels of the fixed artists (tests and the app find them by label).
OVERALL_LABEL = "all fill columns"
BASELINE_LABEL = "column mean (no neighbours)"
SAVE_FORMATS = ("png", "svg")


class ErrorVsK(Protocol):
    """What the chart reads from a recovery report (``RecoveryReport`` has it all).

    Read-only members, so that a frozen dataclass such as ``RecoveryReport`` matches.
    """

    @property
    def ks(self) -> tuple[int, ...]: ...  # noqa: D102
    @property
    def overall(self) -> pd.DataFrame: ...  # noqa: D102
    @property
    def summary(self) -> pd.DataFrame: ...  # noqa: D102
    @property
    def baseline(self) -> pd.DataFrame: ...  # noqa: D102
    @property
    def best_k(self) -> int: ...  # noqa: D102
    @property
    def best_k_1se(self) -> int: ...  # noqa: D102
    @property
    def kinds(self) -> dict[str, str]: ...  # noqa: D102


def plot_error_vs_k(
    report: ErrorVsK,
    figure: Figure | None = None,
    columns: Sequence[str] | None = None,
    *,
    max_ticks: int = 15,
) -> Figure:
    """Draw the recovery test's error against k.

    The overall score (mean NRMSE over number fill columns, or the error rate when
    every fill column is a category) is drawn with standard-error bars; each chosen
    column gets a thin line; the column-mean baseline is a horizontal dashed line; the
    best k and the one-SE k are marked on the overall line.

    Parameters
    ----------
    report : RecoveryReport
        Result of :func:`imputer_app.validation.recovery_test`.
    figure : matplotlib.figure.Figure or None, default=None
        Figure to draw on (cleared first); a new 9 x 4.8 inch figure when None.
    columns : sequence of str or None, default=None
        Fill columns to draw as their own lines; None draws every column of the same
        kind as the overall score. Unknown names are ignored.
    max_ticks : int, default=15
        Most tick labels on the k axis; a narrow chart passes fewer so that the labels
        never overlap (see :func:`k_ticks`).

    Returns
    -------
    matplotlib.figure.Figure
        The figure, with one Axes.

    Examples
    --------
    >>> fig = plot_error_vs_k(report)  # doctest: +SKIP
    >>> save_figure(fig, "k_choice.png")  # doctest: +SKIP
    """
    fig = figure if figure is not None else Figure(figsize=(9.0, 4.8), layout="constrained")
    fig.clear()
    ax = fig.add_subplot()
    numeric = "number" in report.kinds.values()
    kind = "number" if numeric else "category"
    score, se = ("score", "se") if numeric else ("category_error", "category_se")
    chosen = [c for c in (columns if columns is not None else report.kinds) if report.kinds.get(c) == kind]
    _column_lines(ax, report.summary, chosen)
    _overall_line(ax, report.overall, score, se)
    _baseline_line(ax, report.baseline, score)
    _mark_choices(ax, report.overall[score], report.best_k, report.best_k_1se)
    metric = "NRMSE (RMSE / column SD)" if numeric else "error rate (share of wrong classes)"
    ax.set_xlabel("k (number of donors averaged)")
    ax.set_ylabel(f"{metric} on hidden cells")
    ax.set_title("Recovery test: error against k (lower is better)")
    ax.set_xticks(k_ticks(report.ks, max_ticks))
    ax.grid(True, color="#e3e3e3", linewidth=0.8)
    ax.set_axisbelow(True)
    # Outside the axes, so many fill columns never hide the curves.
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)
    return fig


def _column_lines(ax: Axes, summary: pd.DataFrame, columns: Sequence[str]) -> None:
    ks = summary.index.to_numpy()
    # A marker on every k would bury a long curve; about eight per line keep the shape legible.
    every = max(1, len(ks) // 8)
    for i, column in enumerate(columns):
        if (column, "mean") not in summary.columns:
            continue
        colour, marker = column_style(i)
        ax.plot(
            ks,
            summary[(column, "mean")].to_numpy(dtype=float),
            color=colour,
            marker=marker,
            markevery=(i % every, every),  # staggered, so markers of close lines do not stack
            markersize=5,
            markerfacecolor="none" if i >= len(COLUMN_COLOURS) else colour,
            linewidth=1.3,
            label=column,
            gid=f"column:{column}",
        )


def column_style(position: int) -> tuple[str, str]:
    """Colour and marker of the ``position``-th column line (colour and shape both cycle).

    Shapes cycle over more entries than colours, so two lines share both only after
    ``lcm(7, 10) = 70`` columns; beyond the seventh, markers are drawn hollow as well.
    """
    return COLUMN_COLOURS[position % len(COLUMN_COLOURS)], COLUMN_MARKERS[position % len(COLUMN_MARKERS)]


def _overall_line(ax: Axes, overall: pd.DataFrame, score: str, se: str) -> None:
    errors = overall[se].to_numpy(dtype=float)
    ax.errorbar(
        overall.index.to_numpy(),
        overall[score].to_numpy(dtype=float),
        yerr=np.where(np.isfinite(errors), errors, 0.0),
        color=INK,
        ecolor=INK,
        linewidth=2.2,
        elinewidth=1.0,
        capsize=2.5,
        marker="o",
        markersize=3.5,
        label=f"{OVERALL_LABEL} (mean ± 1 SE)",
        gid="overall",
        zorder=3,
    )


def _baseline_line(ax: Axes, baseline: pd.DataFrame, score: str) -> None:
    if "overall" not in baseline.index or score not in baseline.columns:
        return
    level = float(baseline[score].to_numpy(dtype=float)[baseline.index.get_loc("overall")])
    if np.isfinite(level):
        ax.axhline(level, color=BASELINE, linestyle="--", linewidth=1.4, label=BASELINE_LABEL, gid="baseline")


def _mark_choices(ax: Axes, scores: pd.Series, best: int, one_se: int) -> None:
    """Mark the best k and the one-SE k on the overall line."""
    for k, colour, marker, text, gid in (
        (best, BEST, "*", f"best k = {best}", "best_k"),
        (one_se, ONE_SE, "D", f"one-SE k = {one_se} (largest k within 1 SE of best)", "one_se_k"),
    ):
        ax.plot(
            [k],
            [float(scores.loc[k])],
            linestyle="none",
            marker=marker,
            markersize=13 if marker == "*" else 8,
            markerfacecolor=colour,
            markeredgecolor="white",
            color=colour,
            label=text,
            gid=gid,
            zorder=4,
        )


def k_ticks(ks: Sequence[int], max_ticks: int = 15, min_step: float = 1.0) -> list[int]:
    """At most ``max_ticks`` tested k values, at a round step (1, 2, 5, 10, ...) of at least ``min_step``.

    Ticks fall on multiples of the step (1, 5, 10, 15 ... rather than 1, 6, 11 ...),
    plus the smallest k when it is at least 0.8 steps from the next, so a reader finds
    k = 10 where they expect it.

    >>> k_ticks(range(1, 31), 7)
    [1, 5, 10, 15, 20, 25, 30]
    >>> k_ticks([2, 4, 6], 15)
    [2, 4, 6]
    """
    values = sorted({int(k) for k in ks})
    if len(values) <= max(1, max_ticks) and min_step <= 1:
        return values
    for step in TICK_STEPS:
        if step < min_step:
            continue
        ticks = [k for k in values if k % step == 0]
        if values and values[0] not in ticks and (not ticks or ticks[0] - values[0] >= 0.8 * step):
            ticks.insert(0, values[0])
        if len(ticks) <= max_ticks:
            return ticks
    return values[:: int(np.ceil(len(values) / max(1, max_ticks)))]


def fit_k_ticks(figure: Figure, ks: Sequence[int]) -> list[int]:
    """Thin the k axis of a drawn error chart until its labels, as rendered, do not touch.

    The figure is laid out once (no picture is made); the widest tick label plus one
    character's room sets the smallest distance between ticks at the axes' width.

    Returns
    -------
    list of int
        The ticks kept.
    """
    ax = figure.axes[0]
    figure.draw_without_rendering()
    left, right = ax.get_xlim()
    per_k = ax.get_window_extent().width / max(abs(right - left), 1e-9)
    labels = [t for t in ax.get_xticklabels() if t.get_text()]
    widest = max((t.get_window_extent().width for t in labels), default=0.0)
    # One character's width of air (about the font size in points, as pixels).
    room = widest + (float(labels[0].get_fontsize()) * figure.dpi / 72 if labels else 0.0)
    ticks = k_ticks(ks, max_ticks=len(ks), min_step=room / max(per_k, 1e-9) / 0.8)
    ax.set_xticks(ticks)
    return ticks


def save_figure(
    fig: Figure,
    path: str | Path,
    *,
    dpi: int = 150,
    metadata: Mapping[str, str] | None = None,
    force: bool = True,
    source: str | Path | None = None,
) -> Path:
    """Write ``fig`` as PNG or SVG (chosen by the file extension) and return the path.

    The picture goes through the one atomic writer (:func:`imputer_app.files.atomic_target`):
    a fresh temporary file in the target folder, renamed into place when complete, so a
    full disk or a stop leaves the old file as it was and no link is written through.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure to save.
    path : str or Path
        Target file ending in ``.png`` or ``.svg``.
    dpi : int, default=150
        Resolution of a PNG.
    metadata : mapping or None
        Extra file metadata (e.g. ``{"Title": ...}``).
    force : bool, default=True
        Whether an existing file (or link) of that name may be replaced; callers ask
        first (``--force``, the app's save dialog). A link is replaced itself.
    source : str or Path or None, default=None
        The sheet the chart is about; a ``path`` naming it is refused.

    Raises
    ------
    ExportError
        When the extension is not png/svg or the file cannot be written.
    """
    target = Path(path)
    fmt = target.suffix.lower().lstrip(".")
    if fmt not in SAVE_FORMATS:
        raise ExportError(f"cannot save a chart as {target.name}: use a .png or .svg file name")
    # The format is given explicitly: the temporary file's name ends in ".kinfill.tmp".
    with atomic_target(target, source=source, force=force) as temp:
        fig.savefig(temp, format=fmt, dpi=dpi, metadata=dict(metadata or {}))
    return target
