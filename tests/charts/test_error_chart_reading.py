"""The error-against-k chart can be read: distinct colours and shapes, k labels that never touch."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from matplotlib.colors import to_hex, to_rgb
from matplotlib.figure import Figure

from imputer_app.charts import plot_error_vs_k
from imputer_app.charts._palette import OKABE_ITO
from imputer_app.charts.error_vs_k import COLUMN_COLOURS, column_style, fit_k_ticks, k_ticks
from imputer_app.validation._report import build_report

#: Okabe & Ito 2008, "Color Universal Design" (hex values quoted from memory).
OKABE_ITO_HEX = {"#e69f00", "#56b4e9", "#009e73", "#f0e442", "#0072b2", "#d55e00", "#cc79a7", "#000000"}


def _report(columns: int, ks: range):
    """Made-up scores: every column a U-shaped curve, each a little above the one before."""
    kinds = {f"col{i}": "number" for i in range(columns)}
    rows = []
    for repeat in range(2):
        for k in ks:
            for i, column in enumerate(kinds):
                value = 0.4 + 0.001 * (k - 6) ** 2 + 0.02 * i + 0.01 * repeat
                rows.append((k, column, repeat, value, value, value, np.nan, 10, 0))
    names = ["k", "column", "repeat", "rmse", "mae", "nrmse", "error_rate", "n_hidden", "n_unfilled"]
    scores = pd.DataFrame(rows, columns=names)
    base = scores[scores["k"] == ks[0]].drop(columns="k").assign(nrmse=1.0)
    return build_report(scores, base, kinds, tuple(ks), {"seed": 0})


def test_column_colours_are_okabe_ito_and_distinct():
    assert {v.lower() for v in OKABE_ITO.values()} == OKABE_ITO_HEX
    assert {c.lower() for c in COLUMN_COLOURS} <= OKABE_ITO_HEX - {"#000000"}  # black is the overall line
    assert len(set(COLUMN_COLOURS)) == len(COLUMN_COLOURS) == 7


def test_seven_column_lines_differ_in_colour_and_shape():
    figure = plot_error_vs_k(_report(7, range(1, 31)))
    lines = [line for line in figure.axes[0].lines if str(line.get_gid()).startswith("column:")]
    assert len(lines) == 7
    colours = [to_hex(line.get_color()) for line in lines]
    markers = [line.get_marker() for line in lines]
    assert len(set(colours)) == 7 and len(set(markers)) == 7
    # no column line takes the overall line's ink, nor the shapes of the best / one-SE marks
    assert "#000000" not in colours and not {"*", "D"} & set(markers)
    # every pair of colours is apart in plain RGB too (a weak stand-in for a colour-blind check)
    for a, b in itertools.combinations(colours, 2):
        assert np.abs(np.subtract(to_rgb(a), to_rgb(b))).sum() > 0.3, (a, b)


def test_styles_repeat_only_after_many_columns():
    styles = [column_style(i) for i in range(70)]
    assert len(set(styles)) == 70


@pytest.mark.parametrize(
    ("ks", "max_ticks", "min_step", "expected"),
    [
        (range(1, 31), 7, 1, [1, 5, 10, 15, 20, 25, 30]),
        (range(1, 31), 30, 1, list(range(1, 31))),
        (range(1, 31), 30, 3, [1, 5, 10, 15, 20, 25, 30]),
        (range(1, 31), 30, 6, [1, 10, 20, 30]),
        (range(2, 9), 15, 1, [2, 3, 4, 5, 6, 7, 8]),
        (range(3, 101), 12, 1, [10, 20, 30, 40, 50, 60, 70, 80, 90, 100]),  # 3 too near 10
        (range(2, 101), 12, 1, [2, 10, 20, 30, 40, 50, 60, 70, 80, 90, 100]),
    ],
)
def test_k_ticks_fall_on_round_steps(ks, max_ticks, min_step, expected):
    assert k_ticks(ks, max_ticks, min_step) == expected


def _panel_figure(width: float, max_ticks: int = 15) -> Figure:
    """The chart at a panel's size, its legend taken off the axes' side as the app does."""
    figure = Figure(figsize=(width, 3.0), dpi=100, layout="constrained")
    plot_error_vs_k(_report(3, range(1, 31)), figure=figure, max_ticks=max_ticks)
    figure.axes[0].get_legend().remove()
    return figure


def _label_boxes(figure: Figure):
    figure.draw_without_rendering()
    labels = [t for t in figure.axes[0].get_xticklabels() if t.get_text() and t.get_visible()]
    return sorted((t.get_window_extent() for t in labels), key=lambda box: box.x0)


@pytest.mark.parametrize(("width", "at_least"), [(2.4, 3), (3.4, 4), (5.0, 6), (9.0, 10)])
def test_k_labels_never_overlap_at_any_width(width, at_least):
    """k = 1..30, as rendered: each label ends before the next begins, with air between."""
    figure = _panel_figure(width)
    ticks = fit_k_ticks(figure, range(1, 31))
    boxes = _label_boxes(figure)
    assert len(boxes) == len(ticks) >= at_least
    for left, right in itertools.pairwise(boxes):
        assert left.x1 + 3 <= right.x0, (ticks, left, right)


def test_the_unfitted_default_overlapped_at_panel_width():
    """The check has teeth: 15 ticks (the old rule) do touch at a panel's 240 px."""
    figure = _panel_figure(2.4, max_ticks=15)
    boxes = _label_boxes(figure)
    assert any(left.x1 + 3 > right.x0 for left, right in itertools.pairwise(boxes))
