"""The column list: the essentials side by side at 1400 x 900, and the group-by rule."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from PySide6.QtWidgets import QHeaderView

from imputer_app.gui.column_setup import ColumnSetup
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from imputer_app.gui.setup_model import GROUP_RULE, ColumnChoice, makes_groups, plan_from_choices
from imputer_app.plan import FillPlan
from tests.gui._sheets import make_sheet


def test_name_role_gaps_and_kind_fit_the_panel_at_1400_by_900(qtbot, boxes, demo):
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.resize(1400, 900)
    window.show()
    with qtbot.waitSignal(window.sheet_loaded, timeout=30_000):
        window.open_path(demo, {})
    table = window.setup.table
    qtbot.waitUntil(lambda: table.viewport().width() > 150, timeout=3000)
    header = table.horizontalHeader()
    model = table.model()
    assert [model.headerData(i, header.orientation()) for i in range(header.count())] == [
        "Column",
        "Role",
        "Gaps",
        "Kind",
    ]
    widths = [header.sectionSize(i) for i in range(header.count())]
    assert sum(widths) <= table.viewport().width()  # no sideways scroll
    assert table.horizontalScrollBar().maximum() == 0
    # role, gaps and kind are shown whole; the name column takes the width left and
    # elides a long name (the detail line under the list and the tooltip give it whole)
    assert widths[0] == table.viewport().width() - sum(widths[1:])
    for i in range(1, header.count()):
        assert widths[i] >= table.sizeHintForColumn(i), (model.headerData(i, header.orientation()), widths)
    row = [c.name for c in window.setup.choices()].index("Nitrate")
    texts = [model.index(row, i).data() for i in range(4)]
    nitrate = next(c for c in window.setup.choices() if c.name == "Nitrate")
    assert texts == ["Nitrate", "sim + fill", f"{100 * nitrate.gaps / nitrate.rows:.1f}%", "num"]
    # the facts left out of the list are in the line under it
    window.setup.select_columns(["Phosphate"])
    phosphate = next(c for c in window.setup.choices() if c.name == "Phosphate")
    assert window.setup.detail.text() == (
        f"Phosphate (mg/L): similarity + fill · number · weight 1 · {phosphate.gaps} gaps of 304 rows "
        f"({100 * phosphate.gaps / 304:.1f}%) · {phosphate.censored} beyond a limit"
    )
    assert header.sectionResizeMode(0) == QHeaderView.ResizeMode.Stretch
    window.session.mark_exported()
    window.close()


def lab_sheet():
    rng = np.random.default_rng(7)
    n = 24
    frame = pd.DataFrame(
        {
            "Sample": [f"S{i:03d}" for i in range(n)],  # unique IDs
            "Site": np.array(["north", "south", "east", "west"] * 6, dtype=object),
            "Block": np.repeat([1.0, 2.0, 3.0], 8),  # whole-number blocks
            "Plot": np.arange(1.0, n + 1),  # whole numbers, but every value once
            "Notes": np.array([None] * (n - 2) + ["redo", "redo"], dtype=object),  # mostly empty
            "pH": rng.normal(7, 0.3, n).round(2),
            "Dose": np.repeat([0.5, 1.5], 12),  # few values, but not whole numbers
        }
    )
    kinds = {
        "Sample": "identifier",
        "Site": "category",
        "Block": "number",
        "Plot": "number",
        "Notes": "category",
        "pH": "number",
        "Dose": "number",
    }
    return make_sheet(frame, {}, kinds=kinds)


def test_group_by_offers_only_columns_of_few_repeated_values(qtbot):
    setup = ColumnSetup()
    qtbot.addWidget(setup)
    setup.set_sheet(lab_sheet())
    combo = setup.group_combo
    offered = [combo.itemText(i) for i in range(combo.count())]
    assert offered == ["(no groups)", "Site", "Block"]
    assert GROUP_RULE in combo.toolTip()


@pytest.mark.parametrize(
    ("values", "kind", "expected"),
    [
        (["a", "b"] * 3, "category", True),  # 2 values, 3 rows each
        (["a", "b", "c"] * 2, "category", False),  # 2 rows per value on average: too few
        ([1.0, 2.0] * 3, "number", True),
        ([1.5, 2.5] * 3, "number", False),  # not whole numbers
        (["a", "b"] * 3 + [None] * 7, "category", False),  # a value in fewer than half the rows
        ([None] * 6, "category", False),  # an empty column
        ([str(i % 51) for i in range(51 * 3)], "category", False),  # 51 values: too many
        ([str(i % 50) for i in range(50 * 3)], "category", True),
    ],
)
def test_the_group_rule(values, kind, expected):
    assert makes_groups(pd.Series(values, dtype=object if kind == "category" else float), kind) is expected


def test_a_category_column_keeps_no_bounds_in_the_plan():
    choice = ColumnChoice("Station", "number", role="both", lower=0.0, upper=10.0, decimals=2)
    plan = plan_from_choices([choice, ColumnChoice("pH", "number", role="both")], FillPlan(), None)
    assert plan.bounds == {"Station": (0.0, 10.0)} and plan.decimals == {"Station": 2}
    as_category = plan_from_choices(
        [
            replace(choice, kind="category"),
            ColumnChoice("pH", "number", role="both"),
        ],
        FillPlan(),
        None,
    )
    assert (
        as_category.bounds == {}
        and as_category.decimals == {}
        and as_category.kinds == {"Station": "category"}
    )


@pytest.mark.parametrize("blank", [None, "missing"])
def test_state_counts_of_a_read_sheet_equal_counting_the_words(blank):
    # a read sheet's states are categorical and counted from their codes; any other
    # column of state words is counted word by word: the same numbers either way
    from imputer_app.gui.setup_model import state_counts

    words = ["observed", "missing", "censored", "observed", "text_in_number", "missing", "observed"]
    if blank is None:
        words[0] = None  # a cell with no state word at all counts for no state
    categorical = pd.Series(
        pd.Categorical(words, categories=["observed", "missing", "censored", "text_in_number"])
    )
    counted = state_counts(categorical)
    assert counted == {"observed": 2 + (blank is not None), "missing": 2, "censored": 1, "text_in_number": 1}
    plain = state_counts(pd.Series([w for w in words if w is not None], dtype=object))
    assert plain == {state: n for state, n in counted.items() if n}
