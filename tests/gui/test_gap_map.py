"""The gap map: density shading, only similarity and fill columns, and jumps to a cell.

Expected values are worked out from the input and the documented rules (a pixel row
covering several sheet rows is shaded by the share of its marked cells, with a floor
of 0.3 so that one gap stays visible; arrows step a hundredth of the rows), not copied
from the code's output.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import QPoint, Qt

from imputer_app.gui.gap_map import (
    SHADE_FLOOR,
    GapMap,
    bin_counts,
    bin_marked,
    cell_classes,
    marked_cells,
    shade,
    shaded_rgb,
)
from imputer_app.gui.markers import CENSORED, FILL, MISSING, NO_FILL, OBSERVED, TEXT


def class_of(code: int, filled: bool, layer_kind: str) -> int:
    codes = np.array([[code]], dtype=np.int8)
    fill = np.array([[FILL if filled else NO_FILL]], dtype=np.int8)
    return int(cell_classes(codes, fill, layer_kind)[0, 0])


@pytest.mark.parametrize("layer_kind", ["preview", "applied"])
def test_classes_rank_gap_over_text_over_limit_over_fill(layer_kind):
    fill = class_of(MISSING, True, layer_kind)
    ranks = [
        class_of(OBSERVED, False, layer_kind),
        fill,
        class_of(CENSORED, False, layer_kind),
        class_of(TEXT, False, layer_kind),
        class_of(MISSING, False, layer_kind),
    ]
    assert ranks[0] == 0 and ranks == sorted(set(ranks))  # measured, fill, limit, text, gap: rising
    # a filled cell shows as filled whatever it was before
    assert {class_of(code, True, layer_kind) for code in (MISSING, TEXT, CENSORED)} == {fill}


def test_preview_and_applied_fills_are_drawn_apart():
    assert class_of(MISSING, True, "preview") != class_of(MISSING, True, "applied")


def bin_ends(starts: np.ndarray, n_rows: int) -> list[int]:
    return [*map(int, starts[1:]), n_rows]


@pytest.mark.parametrize(("n_rows", "n_bins"), [(300, 400), (10_007, 400), (200_000, 700)])
def test_bins_tile_the_rows_and_count_every_cell(n_rows, n_bins):
    gap_row, gap_column = n_rows // 3, 1
    classes = np.zeros((n_rows, 3), dtype=np.int8)
    classes[gap_row, gap_column] = 5
    counts, starts = bin_counts(classes, n_bins)
    shown = min(n_rows, n_bins)
    assert counts.shape == (shown, 3, 6)
    ends = bin_ends(starts, n_rows)
    widths = np.subtract(ends, starts)
    # the bins tile the rows in order, each n_rows / n_bins rows wide (rounded down or up)
    assert starts[0] == 0 and widths.min() >= n_rows // shown and widths.max() <= -(-n_rows // shown)
    assert (counts.sum(axis=2) == widths[:, None]).all()  # every cell counted once
    holder = next(b for b in range(shown) if starts[b] <= gap_row < ends[b])
    assert np.argwhere(counts[:, :, 5] > 0).tolist() == [[holder, gap_column]]
    # a single gap among many rows is still visible: at least the floor
    assert shade(counts)[holder, gap_column] >= SHADE_FLOOR


def test_each_bin_counts_the_classes_of_its_rows():
    rng = np.random.default_rng(3)
    classes = rng.integers(0, 6, size=(53, 4)).astype(np.int8)
    counts, starts = bin_counts(classes, 7)
    for b, (s, e) in enumerate(zip(starts, bin_ends(starts, 53), strict=True)):
        for c in range(4):
            expected = [sum(int(classes[r, c]) == v for r in range(s, e)) for v in range(6)]
            assert counts[b, c].tolist() == expected


@pytest.mark.parametrize(
    ("marked", "of", "expected"), [(0, 20, 0.0), (1, 20, 0.335), (10, 20, 0.65), (20, 20, 1.0)]
)
def test_shading_grows_with_the_share_of_marked_cells(marked, of, expected):
    # strength = floor + (1 - floor) * share, 0 with no marked cell (floor 0.3)
    counts = np.zeros((1, 1, 6), dtype=np.int32)
    counts[0, 0, 0], counts[0, 0, 5] = of - marked, marked
    assert shade(counts)[0, 0] == pytest.approx(expected)


def test_a_pixel_is_the_measured_colour_moved_towards_its_marked_cells():
    colours = np.array([[200, 200, 200], [0, 0, 200], [0, 0, 100], [100, 0, 100], [200, 100, 0], [250, 0, 0]])
    counts = np.zeros((3, 1, 6), dtype=np.int32)
    counts[0, 0] = (20, 0, 0, 0, 0, 0)  # all measured
    counts[1, 0] = (0, 0, 0, 0, 0, 20)  # all gaps
    counts[2, 0] = (10, 0, 0, 0, 0, 10)  # half gaps: strength 0.65
    rgb = shaded_rgb(counts, colours.astype(np.uint8))
    assert rgb[0, 0].tolist() == [200, 200, 200] and rgb[1, 0].tolist() == [250, 0, 0]
    assert rgb[2, 0].tolist() == [round(200 * 0.35 + 250 * 0.65), round(200 * 0.35), round(200 * 0.35)]


N_ROWS, NAMES, GAP = 800, ["a", "b", "c", "d"], (400, 2)
PLOT = (100, 400)  # the drawing area inside a 2-pixel margin
MARGIN = 2


@pytest.fixture
def gap_map(qtbot):
    widget = GapMap()
    qtbot.addWidget(widget)
    widget.resize(PLOT[0] + 2 * MARGIN, PLOT[1] + 2 * MARGIN)
    codes = np.zeros((N_ROWS, len(NAMES)), dtype=np.int8)
    codes[GAP] = MISSING
    widget.set_cells(codes, np.zeros_like(codes), "", NAMES)
    widget.show()
    return widget


def test_click_jumps_to_the_row_and_column_under_it(gap_map, qtbot):
    row, column = GAP
    # the middle of the column's stripe, at the pixel row where the gap's row starts
    x = MARGIN + int((column + 0.5) * PLOT[0] / len(NAMES))
    y = MARGIN + int(row * PLOT[1] / N_ROWS)
    with qtbot.waitSignal(gap_map.cell_activated) as hit:
        qtbot.mouseClick(gap_map, Qt.MouseButton.LeftButton, pos=QPoint(x, y))
    assert hit.args == [row, column]
    assert f"{N_ROWS} rows by {len(NAMES)} columns; 1 gaps not filled" == gap_map.accessibleDescription()


@pytest.mark.parametrize(
    ("keys", "expected"),
    [
        ([Qt.Key.Key_Right, Qt.Key.Key_Down], (N_ROWS // 100, 1)),
        ([Qt.Key.Key_PageDown, Qt.Key.Key_Right, Qt.Key.Key_Right], (10 * (N_ROWS // 100), 2)),
        ([Qt.Key.Key_Up, Qt.Key.Key_Left], (0, 0)),  # the cursor stops at the edges
    ],
)
def test_keyboard_moves_a_cursor_and_enter_jumps(gap_map, qtbot, keys, expected):
    gap_map.setFocus()
    for key in keys:
        qtbot.keyClick(gap_map, key)
    with qtbot.waitSignal(gap_map.cell_activated) as hit:
        qtbot.keyClick(gap_map, Qt.Key.Key_Return)
    assert tuple(hit.args) == expected


def test_twenty_thousand_rows_are_shaded_by_density_not_drawn_solid(qtbot):
    # 20,000 rows on 400 pixel rows: each pixel row covers exactly 50 sheet rows.
    n_rows, height = 20_000, 400
    codes = np.zeros((n_rows, 3), dtype=np.int8)
    codes[::10, 1] = MISSING  # every tenth row: 5 gaps in each pixel row
    codes[:1000, 2] = MISSING  # the first 1,000 rows: the first 20 pixel rows all gaps
    widget = GapMap()
    qtbot.addWidget(widget)
    widget.resize(60 + 2 * MARGIN, height + 2 * MARGIN)
    widget.set_cells(codes, np.zeros_like(codes), "", ["a", "b", "c"])
    widget.show()
    assert widget.counts().shape == (height, 3, 6)
    assert (widget.counts()[:, 1, 5] == 5).all() and (widget.counts()[:, 1, 0] == 45).all()
    share = widget.gap_share()
    assert np.allclose(share[:, 0], 0.0) and np.allclose(share[:, 1], 0.1)
    assert np.allclose(share[:20, 2], 1.0) and np.allclose(share[20:, 2], 0.0)
    assert np.allclose(widget.shading()[:, 1], 0.3 + 0.7 * 0.1)  # pale, not a solid block
    image = widget.image()
    assert image is not None and (image.width(), image.height()) == (3, height)
    pale, solid, measured = image.pixelColor(1, 200), image.pixelColor(2, 0), image.pixelColor(0, 200)
    assert pale not in (solid, measured)


def test_only_similarity_and_fill_columns_are_drawn_and_a_click_names_the_table_column(qtbot):
    from imputer_app.gui.data_view import DataView
    from imputer_app.gui.state import Session
    from imputer_app.plan import FillPlan
    from tests.gui._sheets import make_sheet

    frame = pd.DataFrame(
        {
            "ID": [f"S{i}" for i in range(8)],
            "a": [1.0, np.nan, 3.0, 4.0, 5.0, 6.0, np.nan, 8.0],
            "notes": [None] * 8,
            "b": [1.0, 2.0, 3.0, np.nan, 5.0, 6.0, 7.0, 8.0],
        }
    )
    states = {(1, "a"): ("missing", ""), (6, "a"): ("missing", ""), (3, "b"): ("missing", "")}
    states |= {(r, "notes"): ("missing", "") for r in range(8)}  # an empty notes column: all gaps
    sheet = make_sheet(
        frame, states, kinds={"ID": "identifier", "a": "number", "notes": "category", "b": "number"}
    )
    session = Session()
    view = DataView(session=session)
    qtbot.addWidget(view)
    session.load(sheet)
    session.set_plan(
        FillPlan(similarity_columns=("a", "b"), fill_columns=("a", "b"), carried_columns=("ID", "notes"))
    )
    view.set_sheet(sheet)
    gap_map = view.gap_map
    assert gap_map.drawn_columns() == ["a", "b"]
    assert gap_map.counts()[:, :, 5].sum(axis=0).tolist() == [2, 1]  # the notes' 8 gaps are not counted
    assert gap_map.accessibleDescription() == "8 rows by 2 columns; 3 gaps not filled"
    gap_map.resize(40 + 2 * MARGIN, 80 + 2 * MARGIN)
    gap_map.show()
    # the right half of the map is column b, which is the table's fourth column (position 3)
    with qtbot.waitSignal(gap_map.cell_activated) as hit:
        plot_w, plot_h = gap_map.width() - 2 * MARGIN, gap_map.height() - 2 * MARGIN
        point = QPoint(MARGIN + int(0.75 * plot_w), MARGIN + int(3.5 * plot_h / 8))  # row 3 of 8
        qtbot.mouseClick(gap_map, Qt.MouseButton.LeftButton, pos=point)
    assert hit.args == [3, 3]
    # the plan changes (b carried): the map follows the session
    session.set_plan(
        session.plan.replace(
            similarity_columns=("a",), fill_columns=("a",), carried_columns=("ID", "notes", "b")
        )
    )
    assert gap_map.drawn_columns() == ["a"]


def test_more_columns_than_pixels_are_pooled_and_no_gap_drops_out(qtbot):
    # 60 columns on a 40-pixel-wide plot: each pixel column pools one or two sheet columns
    codes = np.zeros((50, 60), dtype=np.int8)
    codes[10, 59] = MISSING
    widget = GapMap()
    qtbot.addWidget(widget)
    widget.resize(40 + 2 * MARGIN, 200 + 2 * MARGIN)
    widget.set_cells(codes, np.zeros_like(codes), "", [f"c{i}" for i in range(60)])
    widget.show()
    image = widget.image()
    assert image is not None and image.width() == 40
    measured = image.pixelColor(0, 0)
    marked = [(x, y) for x in range(40) for y in range(image.height()) if image.pixelColor(x, y) != measured]
    assert marked == [(39, 10)]  # the last pixel column holds column 59; row 10 is its own pixel row


@pytest.mark.parametrize(
    ("n_rows", "n_bins", "columns"), [(53, 7, [0, 1, 2, 3]), (53, 80, [3, 1]), (10_007, 400, [2])]
)
def test_binning_the_marked_cells_alone_counts_as_binning_every_cell(n_rows, n_bins, columns):
    rng = np.random.default_rng(5)
    codes = rng.choice([OBSERVED, OBSERVED, OBSERVED, MISSING, TEXT, CENSORED], size=(n_rows, 4)).astype(
        np.int8
    )
    fill = np.where((codes == MISSING) & (rng.random(codes.shape) < 0.5), FILL, NO_FILL).astype(np.int8)
    for kind in ("preview", "applied"):
        expected, starts = bin_counts(cell_classes(codes[:, columns], fill[:, columns], kind), n_bins)
        # marks made once as a preview, drawn as either kind
        got, got_starts = bin_marked(marked_cells(codes, fill, "preview").as_kind(kind), columns, n_bins)
        assert np.array_equal(got_starts, starts) and np.array_equal(got, expected)
