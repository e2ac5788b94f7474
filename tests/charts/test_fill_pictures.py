"""Pictures of a fill: which points are drawn as filled, shapes, labels, and saving."""

from __future__ import annotations

import io
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from matplotlib.backend_bases import MouseEvent
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import to_hex
from matplotlib.figure import Figure

from imputer_app.charts import _palette as pal
from imputer_app.charts import (
    fill_distributions,
    plot_coverage,
    plot_fill_distribution,
    plot_fill_scatter,
)
from imputer_app.errors import KinfillError

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, sec. 5.2)


def _result() -> SimpleNamespace:
    """Ten rows; a filled in rows 2 and 5, b filled in rows 5 and 7, b empty in row 9."""
    rng = np.random.default_rng(0)
    index = pd.Index(range(4, 14), name="row")  # file row numbers, as a sheet has them
    frame = pd.DataFrame(
        {"a": rng.normal(size=10), "b": rng.normal(size=10), "t": list("xyxyxyxyxy")}, index=index
    )
    frame.loc[13, "b"] = np.nan
    filled = pd.DataFrame(False, index=index, columns=frame.columns)
    filled.loc[[6, 9], "a"] = True
    filled.loc[[9, 11], "b"] = True
    censored = pd.DataFrame(False, index=index, columns=frame.columns)
    censored.loc[4, "a"] = True  # a below-limit entry replaced by a number from its limit
    return SimpleNamespace(frame=frame, filled=filled, censored=censored)


def _by_gid(fig: Figure, gid: str) -> list:
    ax = fig.axes[0]
    return [a for a in (*ax.collections, *ax.lines, *ax.patches) if a.get_gid() == gid]


def _png_and_svg(fig: Figure) -> None:
    png, svg = io.BytesIO(), io.BytesIO()
    fig.savefig(png, format="png", dpi=80)
    fig.savefig(svg, format="svg")
    assert png.getvalue().startswith(PNG_MAGIC)
    assert b"<svg" in svg.getvalue()


def test_scatter_draws_filled_points_apart_in_shape_and_colour() -> None:
    result = _result()
    picture = plot_fill_scatter(result, "a", "b")
    # Row 13 has no b, so 9 points: filled in a or b at rows 6, 9, 11.
    assert picture.filled_rows == (6, 9, 11)
    assert picture.measured_rows == (4, 5, 7, 8, 10, 12)
    assert picture.filled is not None and picture.measured is not None
    assert len(picture.filled.get_offsets()) == 3 and len(picture.measured.get_offsets()) == 6
    np.testing.assert_allclose(picture.filled.get_offsets()[:, 0], result.frame.loc[[6, 9, 11], "a"])
    assert to_hex(picture.filled.get_facecolor()[0]) != to_hex(picture.measured.get_facecolor()[0])
    assert to_hex(picture.filled.get_facecolor()[0]) == pal.FILLED_COLOUR.lower()
    filled_path = picture.filled.get_paths()[0].vertices
    measured_path = picture.measured.get_paths()[0].vertices
    assert filled_path.shape != measured_path.shape  # triangle against circle
    ax = picture.figure.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("a", "b")
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert labels == ["measured (n = 6)", "filled in a or b (n = 3)"]
    _png_and_svg(picture.figure)


def test_point_rows_maps_a_picked_point_to_its_row() -> None:
    picture = plot_fill_scatter(_result(), "a", "b")
    assert picture.point_rows(picture.filled, [2, 0]) == [11, 6]
    assert picture.point_rows(picture.measured, [1]) == [5]
    assert picture.point_rows(object(), [0]) == []
    # A real click on the first filled point reaches the same row through a pick event.
    fig = picture.figure
    FigureCanvasAgg(fig).draw()  # lay the figure out, as the app's canvas does
    x, y = picture.filled.get_offsets()[0]
    px, py = fig.axes[0].transData.transform((x, y))
    picked: list = []
    fig.canvas.mpl_connect("pick_event", lambda e: picked.extend(picture.point_rows(e.artist, e.ind)))
    fig.pick(MouseEvent("button_press_event", fig.canvas, px, py, 1))
    assert 6 in picked


def test_scatter_refuses_a_text_column_in_one_line() -> None:
    with pytest.raises(KinfillError, match="'t'"):
        plot_fill_scatter(_result(), "a", "t")
    with pytest.raises(KinfillError, match="'zz'"):
        plot_fill_scatter(_result(), "zz", "a")


def test_distribution_draws_measured_filled_substituted_and_limits() -> None:
    fig = plot_fill_distribution(_result(), "a", limits=[-0.5, 0.5])
    measured, filled = _by_gid(fig, "measured"), _by_gid(fig, "filled")
    assert len(measured) == 1 and len(filled) == 1
    assert to_hex(filled[0].get_edgecolor()) == pal.FILLED_COLOUR.lower()
    assert filled[0].get_hatch() and not measured[0].get_hatch()
    rug = _by_gid(fig, "filled_rug")[0]
    np.testing.assert_allclose(np.sort(rug.get_xdata()), np.sort(_result().frame.loc[[6, 9], "a"]))
    assert rug.get_marker() == pal.FILLED_MARKER
    assert len(_by_gid(fig, "substituted_rug")[0].get_xdata()) == 1
    assert [line.get_xdata()[0] for line in _by_gid(fig, "limit")] == [-0.5, 0.5]
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    # 10 values: 2 filled, 1 substituted, 7 measured.
    assert labels[:2] == ["measured (n = 7)", "filled (n = 2)"]
    assert pal.LIMIT_LABEL in labels
    _png_and_svg(fig)


def test_fill_distributions_makes_one_figure_per_filled_number_column() -> None:
    figures = fill_distributions(_result(), limits={"b": [0.0]})
    assert list(figures) == ["a", "b"]
    assert len(_by_gid(figures["b"], "limit")) == 1
    assert _by_gid(figures["a"], "limit") == []


def test_coverage_draws_the_diagonal_and_the_observed_points() -> None:
    table = pd.DataFrame({"level": [0.9, 0.5, 0.8], "observed": [0.86, 0.47, 0.75], "n": [120, 120, 120]})
    fig = plot_coverage(table)
    (diagonal,) = _by_gid(fig, "diagonal")
    (observed,) = _by_gid(fig, "observed")
    assert list(diagonal.get_xdata()) == [0, 1] and list(diagonal.get_ydata()) == [0, 1]
    assert list(observed.get_xdata()) == [0.5, 0.8, 0.9]
    assert list(observed.get_ydata()) == [0.47, 0.75, 0.86]
    assert "120 cells" in fig.axes[0].get_title()
    _png_and_svg(fig)


@pytest.mark.parametrize(
    ("table", "message"),
    [
        (pd.DataFrame({"level": [0.9]}), "'observed'"),
        (pd.DataFrame({"level": [90.0], "observed": [0.9]}), "between 0 and 1"),
    ],
)
def test_coverage_refuses_a_bad_table(table: pd.DataFrame, message: str) -> None:
    with pytest.raises(KinfillError, match=message):
        plot_coverage(table)


def test_pictures_use_the_given_figure_and_clear_it() -> None:
    fig = Figure()
    fig.add_subplot().plot([1, 2])
    assert plot_fill_distribution(_result(), "b", figure=fig) is fig
    assert len(fig.axes) == 1 and fig.axes[0].get_title() == "b: measured and filled values"
