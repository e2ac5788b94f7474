"""The setup panel: defaults at once, per-column edits and fill settings become the plan."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from imputer_app.engine import default_roles, impute
from imputer_app.gui.column_setup import ColumnSetup
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from imputer_app.words import CHOICE_WORDS, SETTING_TIPS
from tests.conftest import SAMPLES


@pytest.fixture(scope="module")
def river():
    return read_sheet(SAMPLES / "river_survey.xlsx")


@pytest.fixture
def setup(qtbot, river):
    widget = ColumnSetup()
    qtbot.addWidget(widget)
    widget.set_sheet(river)
    return widget


def choose(combo, value):
    combo.setCurrentIndex(combo.findData(value))
    combo.activated.emit(combo.currentIndex())


def test_defaults_are_what_the_engine_resolves(setup, river):
    plan = setup.plan()
    resolved = impute(river, FillPlan()).plan  # the engine's own defaults for this sheet
    assert set(plan.similarity_columns) == set(resolved.similarity_columns)
    assert set(plan.fill_columns) == set(resolved.fill_columns)
    assert set(plan.carried_columns) == set(resolved.carried_columns)
    assert (
        {c.name: c.role for c in setup.choices()}["Station"]
        == "similarity"
        == default_roles(river)["Station"]
    )


def test_gap_and_limit_counts_match_the_sheet(setup, river):
    states = river.states.astype(str)
    for choice in setup.choices():
        column = states[choice.name]
        assert choice.gaps == int(column.isin(["missing", "text_in_number"]).sum())
        assert choice.censored == int((column == "censored").sum())
        assert choice.percent_gaps == pytest.approx(100 * choice.gaps / len(river.frame))
    assert {c.name: c.unit for c in setup.choices()}["Conductivity"] == "µS/cm"


def test_role_and_weight_apply_to_every_selected_column(setup, qtbot):
    setup.select_columns(["pH", "Temperature"])
    with qtbot.waitSignal(setup.plan_changed) as changed:
        choose(setup.role_combo, "similarity")
    plan = changed.args[0]
    assert {"pH", "Temperature"} <= set(plan.similarity_columns)
    assert not {"pH", "Temperature"} & set(plan.fill_columns)
    setup.weight_spin.setValue(3.0)
    assert setup.plan().weights == {"pH": 3.0, "Temperature": 3.0}
    choose(setup.role_combo, "carried")
    assert {"pH", "Temperature"} <= set(setup.plan().carried_columns)


def test_group_column_takes_the_column_out_of_the_distance(setup):
    choose(setup.group_combo, "Station")
    plan = setup.plan()
    assert plan.group_column == "Station" and "Station" not in plan.similarity_columns
    setup.select_columns(["Station"])
    assert not setup.role_combo.isEnabled()
    assert setup.model.index(1, 1).data() == "group"


@pytest.mark.parametrize(("text", "expected"), [("0", 0.0), ("0,5", 0.5), ("", None)])
def test_bounds_accept_numbers_with_either_decimal_mark(setup, text, expected):
    setup.select_columns(["Nitrate"])
    setup.lower_edit.setText(text)
    setup.lower_edit.editingFinished.emit()
    assert setup.plan().bounds.get("Nitrate", (None, None))[0] == expected


def test_a_bad_bound_is_explained_and_ignored(setup):
    before = setup.plan()
    setup.select_columns(["Nitrate"])
    setup.upper_edit.setText("lots")
    setup.upper_edit.editingFinished.emit()
    assert "upper bound must be a number" in setup.message.text() and setup.plan() == before


def test_fill_settings_reach_the_plan(setup):
    choose(setup.choice_combos["scaling"], "robust")
    choose(setup.choice_combos["censored"], "limit_sqrt2")
    choose(setup.choice_combos["no_donor"], "column_mean")
    assert setup.plan().rounding == "measured"  # the default: each column's measured precision
    choose(setup.choice_combos["rounding"], "as_computed")
    setup.set_k(9)
    setup.select_columns(["Phosphate"])
    setup.decimals_spin.setValue(3)
    plan = setup.plan()
    assert (plan.scaling, plan.censored, plan.no_donor, plan.k) == ("robust", "limit_sqrt2", "column_mean", 9)
    assert plan.decimals == {"Phosphate": 3} and plan.rounding == "as_computed"


def test_a_plan_shows_and_comes_back_unchanged(setup):
    plan = FillPlan(
        k=4,
        similarity_columns=("pH", "Conductivity", "Nitrate"),
        fill_columns=("Nitrate", "Phosphate"),
        carried_columns=("Sample ID", "Sample date", "Dissolved oxygen", "Temperature", "Turbidity"),
        weights={"pH": 2.0},
        bounds={"Nitrate": (0.0, 50.0)},
        decimals={"Nitrate": 2},
        group_column="Station",
        neighbour_weighting="inverse_distance",
        kinds={"Station": "category"},
    )
    setup.set_plan(plan)
    shown = setup.plan()
    assert shown.to_dict() == plan.to_dict() | {
        "similarity_columns": ["pH", "Conductivity", "Nitrate"],
        "fill_columns": ["Nitrate", "Phosphate"],
        # the demo's formula and notes columns, which the plan does not name, stay carried
        "carried_columns": [*plan.carried_columns, "Oxygen saturation", "Notes"],
    }
    roles = {c.name: c.role for c in setup.choices()}
    assert (roles["pH"], roles["Nitrate"], roles["Phosphate"]) == ("similarity", "both", "fill")


@pytest.mark.parametrize("setting", sorted(CHOICE_WORDS))
def test_choice_lists_use_the_shared_words(setup, setting):
    combo = setup.choice_combos[setting]
    shown = [
        (combo.itemData(i), combo.itemText(i), combo.itemData(i, Qt.ItemDataRole.ToolTipRole))
        for i in range(combo.count())
    ]
    assert shown == [(value, w.label, w.explanation) for value, w in CHOICE_WORDS[setting].items()]
    assert combo.toolTip() == SETTING_TIPS[setting]
