"""The gap map: binning never hides a gap, and a click or Enter jumps to the cell.

Expected values are worked out from the input and the documented rules (the most
notable state wins a shared pixel row: gap > text > beyond a limit > fill; arrows
step a hundredth of the rows), not copied from the code's output.
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt

from imputer_app.gui.gap_map import MAX_BINS, GapMap, bin_rows, cell_classes
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


@pytest.mark.parametrize("n_rows", [MAX_BINS, 10 * MAX_BINS + 7, 200_000])
def test_binning_keeps_a_single_gap_visible(n_rows):
    gap_row, gap_column = n_rows // 3, 1
    classes = np.zeros((n_rows, 3), dtype=np.int8)
    classes[gap_row, gap_column] = 5
    binned, starts = bin_rows(classes)
    n_bins = min(n_rows, MAX_BINS)
    assert binned.shape == (n_bins, 3)
    ends = bin_ends(starts, n_rows)
    widths = np.subtract(ends, starts)
    # the bins tile the rows in order, each n_rows / n_bins rows wide (rounded down or up)
    assert starts[0] == 0 and widths.min() >= n_rows // n_bins and widths.max() <= -(-n_rows // n_bins)
    holder = next(b for b in range(n_bins) if starts[b] <= gap_row < ends[b])
    assert np.argwhere(binned == 5).tolist() == [[holder, gap_column]]


def test_each_bin_shows_the_highest_class_of_its_rows():
    rng = np.random.default_rng(3)
    classes = rng.integers(0, 6, size=(53, 4)).astype(np.int8)
    binned, starts = bin_rows(classes, max_bins=7)
    expected = [
        [max(int(classes[r, c]) for r in range(s, e)) for c in range(4)]
        for s, e in zip(starts, bin_ends(starts, 53), strict=True)
    ]
    assert binned.tolist() == expected


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
