"""The unfilled panel lists every cell a fill left empty and jumps to it on a click or Enter."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import Qt
from sklearn.datasets import load_wine

from imputer_app.engine import impute
from imputer_app.gui.records_model import RAW_ROLE
from imputer_app.gui.unfilled_panel import COLUMN, REASON, ROW, UnfilledPanel, count_text, reason_counts
from imputer_app.plan import FillPlan


def wine_with_holes() -> pd.DataFrame:
    """Wine (UCI, shipped in scikit-learn): gaps, rows with nothing to compare by, and a
    batch whose 'ash' was never measured (no donor in its group)."""
    wine = load_wine(as_frame=True).frame.iloc[:40, :5]
    wine.index = wine.index + 2
    frame = wine.mask(np.random.default_rng(4).random(wine.shape) < 0.1)
    frame.loc[[7, 12, 30], :] = np.nan  # no similarity value at all: no neighbours
    frame["batch"] = ["A"] * 36 + ["B"] * 4
    frame.loc[frame.index[-4:], "ash"] = np.nan
    return frame


@pytest.fixture(scope="module")
def result():
    return impute(wine_with_holes(), FillPlan(k=3, group_column="batch"))


@pytest.fixture
def panel(qtbot, result):
    widget = UnfilledPanel()
    qtbot.addWidget(widget)
    widget.set_result(result)
    widget.resize(500, 400)
    widget.show()
    qtbot.waitExposed(widget)
    return widget


def entry_at(panel: UnfilledPanel, row: int) -> tuple[object, str]:
    index = panel.proxy.index(row, 0)
    return index.siblingAtColumn(ROW).data(RAW_ROLE), index.siblingAtColumn(COLUMN).data(RAW_ROLE)


def test_lists_every_unfilled_cell(panel, result):
    assert len(result.unfilled) >= 3 * 5 + 4  # the three empty rows, every column; batch B's ash
    assert panel.entry_count() == len(result.unfilled)
    shown = {entry_at(panel, r) for r in range(panel.entry_count())}
    assert shown == set(zip(result.unfilled["row"], result.unfilled["column"], strict=True))
    assert panel.count_label.text().startswith(f"{len(result.unfilled)} cells left empty.")


@pytest.mark.parametrize("row", [0, 4, -1])
def test_click_asks_to_jump_to_the_cell(qtbot, panel, row):
    row = row % panel.entry_count()
    panel.table.scrollTo(panel.proxy.index(row, 0))
    rect = panel.table.visualRect(panel.proxy.index(row, REASON))
    with qtbot.waitSignal(panel.jump_requested, timeout=1000) as blocker:
        qtbot.mouseClick(panel.table.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())
    assert tuple(blocker.args) == entry_at(panel, row)


def test_enter_asks_to_jump_to_the_current_cell(qtbot, panel):
    panel.table.setCurrentIndex(panel.proxy.index(2, 0))
    with qtbot.waitSignal(panel.jump_requested, timeout=1000) as blocker:
        qtbot.keyClick(panel.table, Qt.Key.Key_Return)
    assert tuple(blocker.args) == entry_at(panel, 2)


def test_reason_filter_shows_one_reason(panel, result):
    counts = reason_counts(result.unfilled)
    assert len(counts) == 2  # no similarity value at all; no donor in batch B
    assert sum(n for _, n in counts) == len(result.unfilled)
    assert panel.reason_filter.count() == len(counts) + 1
    assert panel.reason_filter.itemText(0) == f"All reasons ({len(result.unfilled)})"
    for position, (reason, n) in enumerate(counts, start=1):
        assert panel.reason_filter.itemText(position) == f"{reason} ({n})"
        panel.reason_filter.setCurrentIndex(position)
        assert panel.entry_count() == n
        assert all(panel.proxy.index(r, REASON).data(RAW_ROLE) == reason for r in range(n))
        assert panel.count_label.text().startswith(f"{len(result.unfilled)} cells left empty ({n} shown).")
    panel.reason_filter.setCurrentIndex(0)
    assert panel.entry_count() == len(result.unfilled)


def test_sort_by_row_is_numeric(panel):
    panel.table.sortByColumn(ROW, Qt.SortOrder.AscendingOrder)
    rows = [panel.proxy.index(r, ROW).data(RAW_ROLE) for r in range(panel.entry_count())]
    assert rows == sorted(rows)  # 7 before 12 before 30, not "12" < "30" < "7"
    assert rows[0] == 7


def test_no_result_and_nothing_left_empty(qtbot):
    panel = UnfilledPanel()
    qtbot.addWidget(panel)
    assert panel.count_label.text() == "No fill preview yet."
    frame = pd.DataFrame({"a": [1.0, 2.0, np.nan, 4.0], "b": [1.0, 2.1, 2.9, 4.2]})
    full = impute(frame, FillPlan(k=2))
    assert len(full.unfilled) == 0
    panel.set_result(full)
    assert panel.entry_count() == 0
    assert panel.count_label.text() == "Every cell to fill was filled."
    assert not panel.reason_filter.isEnabled()


@pytest.mark.parametrize(
    ("total", "shown", "has", "text"),
    [
        (0, 0, False, "No fill preview yet."),
        (1, 1, True, "1 cell left empty. Click one, or press Enter, to show it in the sheet."),
        (9, 4, True, "9 cells left empty (4 shown). Click one, or press Enter, to show it in the sheet."),
    ],
)
def test_count_text(total, shown, has, text):
    assert count_text(total, shown, has) == text
