"""Going through the fill: next/previous weak fill, the row filter, and the column-header role menu.

Expected positions come from the fill log (its ``support`` column says which cells are
weak), sorted in reading order (row by row, left to right), not from the code that
searches them.
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QAction

from imputer_app.gui.fill_navigation import next_cell
from imputer_app.gui.row_filter import rows_to_show
from imputer_app.gui.setup_model import plan_with_role, role_in_plan
from imputer_app.plan import FillPlan

MASK = np.array([[False, True, False], [False, False, False], [True, False, True]])


@pytest.mark.parametrize(
    ("current", "backwards", "expected"),
    [
        (None, False, (0, 1)),  # from the start: the first marked cell
        (None, True, (2, 2)),  # from the end, backwards: the last one
        ((0, 1), False, (2, 0)),  # skips the empty row
        ((2, 0), False, (2, 2)),
        ((2, 2), False, (0, 1)),  # wraps to the top
        ((0, 1), True, (2, 2)),  # wraps to the bottom
        ((1, 1), True, (0, 1)),
    ],
)
def test_next_cell_walks_in_reading_order_and_wraps(current, backwards, expected):
    assert next_cell(MASK, current, backwards) == expected


def test_next_cell_without_marked_cells_is_none():
    assert next_cell(np.zeros((3, 2), dtype=bool), (1, 1)) is None


@pytest.mark.parametrize(("mode", "expected"), [("all", [0, 1, 2, 3]), ("fills", [1, 2]), ("weak", [2])])
def test_rows_to_show_follow_the_fill_codes(mode, expected):
    codes = np.array([[0, 0], [1, 0], [0, 2], [0, 0]], dtype=np.int8)  # 1 filled, 2 weak
    assert rows_to_show(codes, mode).tolist() == expected


def test_an_unknown_filter_is_refused():
    with pytest.raises(ValueError, match="row filter must be one of all, fills, weak"):
        rows_to_show(np.zeros((2, 2), dtype=np.int8), "some")


@pytest.mark.parametrize(
    ("role", "sim", "fill", "carried"),
    [
        ("both", ("a", "b", "c"), ("a", "c"), ()),
        ("similarity", ("a", "b", "c"), ("a",), ()),
        ("fill", ("a", "b"), ("a", "c"), ()),
        ("carried", ("a", "b"), ("a",), ("c",)),
    ],
)
def test_plan_with_role_moves_one_column_and_keeps_the_sheet_order(role, sim, fill, carried):
    plan = FillPlan(similarity_columns=("a", "b"), fill_columns=("a",), carried_columns=("c",))
    changed = plan_with_role(plan, "c", role, ["a", "b", "c"])
    assert (changed.similarity_columns, changed.fill_columns, changed.carried_columns) == (sim, fill, carried)
    assert role_in_plan(changed, "c") == role


def test_giving_the_group_column_a_role_ends_the_grouping():
    plan = FillPlan(similarity_columns=("a",), fill_columns=("a",), group_column="site")
    assert role_in_plan(plan, "site") == "group"
    changed = plan_with_role(plan, "site", "similarity", ["site", "a"])
    assert changed.group_column is None and changed.similarity_columns == ("site", "a")


# ------------------------------------------------------------ in the real window
def weak_positions(window) -> list[tuple[int, int]]:
    log = window.session.preview.log
    weak = log[log["support"] == "weak"]
    found = [window.table_model.find(r, c) for r, c in zip(weak["row"], weak["column"], strict=True)]
    return sorted(found)


def current(window) -> tuple[int, int]:
    index = window.data.source_index(window.table.currentIndex())
    return index.row(), index.column()


def test_weak_fills_by_key_and_menu_and_the_row_filter(window, qtbot):
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    weak = weak_positions(window)
    assert len(weak) >= 3
    window.select_position(0, 0)  # the first Sample ID: never filled
    qtbot.keyClick(window, Qt.Key.Key_F4)
    assert current(window) == weak[0]
    window.actions_["next_weak"].trigger()
    assert current(window) == weak[1]
    label = window.table_model.row_label(weak[1][0])
    assert window.donor_panel.story.headline.startswith(f"Row {label},")
    qtbot.keyClick(window, Qt.Key.Key_F4, Qt.KeyboardModifier.ShiftModifier)
    assert current(window) == weak[0]
    window.actions_["previous_weak"].trigger()
    assert current(window) == weak[-1]  # wraps to the last weak fill
    menu_texts = [a.text() for a in window.data.table_menu().actions()]
    assert "Next &weak fill" in menu_texts and "Pre&vious weak fill" in menu_texts

    # only rows with weak fills: as many rows as the log has rows with a weak cell
    bar = window.data.row_bar
    assert bar.isVisible()
    log = window.session.preview.log
    weak_rows = log.loc[log["support"] == "weak", "row"].unique()
    bar.combo.setCurrentIndex(bar.combo.findData("weak"))
    bar.combo.activated.emit(bar.combo.currentIndex())
    view_model = window.table.model()
    assert view_model.rowCount() == len(weak_rows)
    first_label = window.table_model.row_label(weak[0][0])
    assert view_model.headerData(0, Qt.Orientation.Vertical) == str(first_label)
    assert current(window) == weak[-1]  # the current cell stays where it was
    qtbot.keyClick(window, Qt.Key.Key_F4)
    assert current(window) == weak[0]
    assert window.donor_panel.story.status == "filled"
    assert bar.count.text().startswith(f"{len(weak_rows)} of {window.table_model.rowCount()} rows shown")

    # only rows with fills
    window.data.filter_actions["fills"].trigger()
    filled_rows = int(window.session.preview.filled.any(axis=1).sum())
    assert view_model.rowCount() == filled_rows
    assert bar.combo.currentData() == "fills"

    # a jump to a row the filter hides shows every row again
    hidden = next(r for r in range(window.table_model.rowCount()) if r not in set(view_model.shown_rows()))
    window.select_position(hidden, 1)
    assert view_model.rowCount() == window.table_model.rowCount() and current(window) == (hidden, 1)
    assert window.data.filter_actions["all"].isChecked()


def test_the_filter_ends_when_no_fill_is_shown(window, qtbot):
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.preview_fill()
    window.data.set_row_filter("weak")
    assert window.table.model().rowCount() < window.table_model.rowCount()
    window.data.next_weak_fill()
    before = current(window)
    window.apply_fill()  # the applied fill is shown: the filter and the current cell stay
    assert window.table.model().mode == "weak" and current(window) == before
    section = window.table_model.column_names().index("pH")
    assert "Right-click" in window.table.model().headerData(
        section, Qt.Orientation.Horizontal, Qt.ItemDataRole.ToolTipRole
    )
    window.undo()  # nothing shown: every row again, and the bar hides
    assert window.table.model().rowCount() == window.table_model.rowCount()
    assert not window.data.row_bar.isVisible()
    assert not window.actions_["next_weak"].isEnabled()
    assert [a.isEnabled() for a in window.data.filter_actions.values()] == [True, False, False]


def test_the_header_menu_sets_a_columns_role_through_the_session(window):
    names = window.table_model.column_names()
    section = names.index("Turbidity")
    menu = window.data.header_menu(section)
    assert [a.data() for a in menu.actions() if a.isChecked()] == ["both"]
    carried = menu.findChild(QAction, "roleAction_carried")
    carried.trigger()
    plan = window.session.plan
    assert "Turbidity" in plan.carried_columns
    assert "Turbidity" not in (plan.similarity_columns or ()) and "Turbidity" not in (plan.fill_columns or ())
    assert next(c for c in window.setup.choices() if c.name == "Turbidity").role == "carried"
    assert "Turbidity" not in window.gap_map.drawn_columns()
    window.data.header_menu(section).findChild(QAction, "roleAction_similarity").trigger()
    assert role_in_plan(window.session.plan, "Turbidity") == "similarity"
    assert next(c for c in window.setup.choices() if c.name == "Turbidity").role == "similarity"
    assert "Turbidity" in window.gap_map.drawn_columns()
