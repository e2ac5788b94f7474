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

from imputer_app.errors import ExportError
from imputer_app.files import atomic_target

#: Kinfill's own plain colours.
INK = "#22313f"  # overall score
BASELINE = "#8c8c8c"  # column-mean fill
BEST = "#b8432f"  # best k
ONE_SE = "#2e7d5b"  # one-SE k
COLUMN_COLOURS = ("#5b7fa6", "#c08a3e", "#7a5c99", "#4f9a94", "#a65b73", "#8a8f3c", "#6b6b9e", "#b0704f")

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
    report: ErrorVsK, figure: Figure | None = None, columns: Sequence[str] | None = None
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
    ax.set_xticks(_ticks(report.ks))
    ax.grid(True, color="#e3e3e3", linewidth=0.8)
    ax.set_axisbelow(True)
    # Outside the axes, so many fill columns never hide the curves.
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)
    return fig


def _column_lines(ax: Axes, summary: pd.DataFrame, columns: Sequence[str]) -> None:
    for i, column in enumerate(columns):
        if (column, "mean") not in summary.columns:
            continue
        ax.plot(
            summary.index.to_numpy(),
            summary[(column, "mean")].to_numpy(dtype=float),
            color=COLUMN_COLOURS[i % len(COLUMN_COLOURS)],
            linewidth=1.0,
            alpha=0.8,
            label=column,
            gid=f"column:{column}",
        )


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


def _ticks(ks: Sequence[int]) -> list[int]:
    """At most about 15 readable integer ticks."""
    values = sorted(int(k) for k in ks)
    step = max(1, int(np.ceil(len(values) / 15)))
    return values[::step]


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
