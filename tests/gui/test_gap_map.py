"""The gap map: binning never hides a gap, and a click or Enter jumps to the cell."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt

from imputer_app.gui.gap_map import MAX_BINS, GapMap, bin_rows, cell_classes
from imputer_app.gui.markers import CENSORED, FILL, MISSING, NO_FILL, OBSERVED, TEXT


def test_classes_put_fills_over_the_gaps_they_fill():
    codes = np.array([[OBSERVED, MISSING, CENSORED, TEXT, MISSING]], dtype=np.int8)
    fill = np.array([[NO_FILL, NO_FILL, NO_FILL, NO_FILL, FILL]], dtype=np.int8)
    assert cell_classes(codes, fill, "preview").tolist() == [[0, 5, 3, 4, 2]]
    assert cell_classes(codes, fill, "applied").tolist() == [[0, 5, 3, 4, 1]]


@pytest.mark.parametrize("n_rows", [MAX_BINS, 10 * MAX_BINS + 7, 200_000])
def test_binning_keeps_a_single_gap_visible(n_rows):
    classes = np.zeros((n_rows, 3), dtype=np.int8)
    classes[n_rows // 3, 1] = 5
    binned, starts = bin_rows(classes)
    assert len(binned) == min(n_rows, MAX_BINS) and starts[0] == 0
    hit = np.argwhere(binned == 5)
    assert hit.tolist() == [[int(np.searchsorted(starts, n_rows // 3, side="right") - 1), 1]]


@pytest.fixture
def gap_map(qtbot):
    widget = GapMap()
    qtbot.addWidget(widget)
    widget.resize(104, 404)  # plot area 100 x 400 inside a 2-pixel margin
    codes = np.zeros((800, 4), dtype=np.int8)
    codes[400, 2] = MISSING
    widget.set_cells(codes, np.zeros_like(codes), "", ["a", "b", "c", "d"])
    widget.show()
    return widget


def test_click_jumps_to_the_row_and_column_under_it(gap_map, qtbot):
    with qtbot.waitSignal(gap_map.cell_activated) as hit:
        qtbot.mouseClick(gap_map, Qt.MouseButton.LeftButton, pos=QPoint(2 + 60, 2 + 200))
    assert hit.args == [400, 2]
    assert "1 gaps not filled" in gap_map.accessibleDescription()


def test_keyboard_moves_a_cursor_and_enter_jumps(gap_map, qtbot):
    gap_map.setFocus()
    qtbot.keyClick(gap_map, Qt.Key.Key_Right)
    qtbot.keyClick(gap_map, Qt.Key.Key_Down)
    with qtbot.waitSignal(gap_map.cell_activated) as hit:
        qtbot.keyClick(gap_map, Qt.Key.Key_Return)
    assert hit.args == [8, 1]  # one step down is a hundredth of the rows
