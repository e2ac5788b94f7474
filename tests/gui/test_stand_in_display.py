"""The app shows a censored entry's stand-in as the fill rounded it, and says when a plan is old.

The stand-in rule (README.md, "Rounding of filled numbers"): the column's decimals, but
never fewer than two significant digits. A plan without a rounding key is read as
``as_computed`` and the app says so when it loads it.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from imputer_app.engine import impute
from imputer_app.gui.markers import MARKERS
from imputer_app.gui.table_model import SheetTableModel
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from imputer_app.words import ROUNDING_NOT_GIVEN


def _river(path: Path) -> Path:
    """Nitrate with 2 decimals, "<0.10" in rows 3 and 9 and a gap in row 6. Invented."""
    rows = [["Sample", "Temp", "Nitrate"]]
    for i in range(16):
        nitrate = "<0.10" if i in (3, 9) else "" if i == 6 else f"{0.12 + 0.043 * i:.2f}"
        rows.append([f"S{i:02d}", f"{4 + 0.9 * i:.1f}", nitrate])
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    return path


def test_the_table_shows_a_stand_in_with_its_two_significant_digits(qapp, tmp_path) -> None:
    sheet = read_sheet(_river(tmp_path / "river.csv"))
    result = impute(sheet, FillPlan(k=3, censored="limit_sqrt2", interval_level=None))
    assert dict(result.decimals) == {"Nitrate": 2}  # filled numbers get 2 decimals
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_layer(result, "preview")
    col = list(sheet.frame.columns).index("Nitrate")
    # 0.10 / sqrt(2) = 0.0707: 0.071, where the column's 2 decimals would read 0.07
    assert model.display_text(3, col) == f"{MARKERS['censored'].symbol} 0.071 (<0.10)"
    assert "stands for 0.071" in model.describe(3, col)
    assert model.display_text(6, col).endswith(f"{float(result.frame['Nitrate'].iloc[6]):.2f}")


def test_loading_a_plan_without_rounding_says_it_is_read_as_computed(window, tmp_path) -> None:
    path = tmp_path / "old.plan.toml"
    path.write_text("format = 1\nk = 4\n", encoding="utf-8")
    window.open_plan(path)
    assert window.session.plan.rounding == "as_computed"
    assert ROUNDING_NOT_GIVEN in window.statusBar().currentMessage()
    window.setup.k_spin.setValue(6)  # an edit of another setting keeps the old plan's meaning
    assert (window.session.plan.k, window.session.plan.rounding_note) == (6, ROUNDING_NOT_GIVEN)


@pytest.mark.parametrize("text", ['format = 1\nk = 4\nrounding = "measured"\n'])
def test_loading_a_plan_naming_its_rounding_says_nothing_more(window, tmp_path, text) -> None:
    path = tmp_path / "new.plan.toml"
    path.write_text(text, encoding="utf-8")
    window.open_plan(path)
    assert window.session.plan.rounding == "measured"
    assert window.statusBar().currentMessage() == "Plan new.plan.toml loaded."


def test_a_censored_cell_filled_by_knn_shows_its_two_significant_digits(qapp, tmp_path) -> None:
    rows = [["Sample", "Temp", "Lead"]]
    for i in range(20):
        lead = "<0.05" if i == 2 else f"{0.01 + 0.01 * (i % 3):.2f}" if i < 8 else f"{0.05 * i:.2f}"
        rows.append([f"S{i:02d}", f"{4 + 0.37 * i:.2f}", lead])  # a number, not a running one
    path = tmp_path / "lead.csv"
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    sheet = read_sheet(path)
    plan = FillPlan(k=3, censored="fill_capped", fill_columns=("Lead",), interval_level=None)
    result = impute(sheet, plan)
    value = float(result.frame["Lead"].iloc[2])
    assert round(value, 2) != value == round(value, 3)  # 3 decimals in a 2-decimal column
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_layer(result, "preview")
    assert model.display_text(2, 2).endswith(f" {value:.3f}")


def test_a_fill_layer_widens_a_column_to_show_its_stand_ins_whole(qtbot, tmp_path) -> None:
    """Widths are measured on the sheet, then grown (never shrunk) when a fill is drawn."""
    from imputer_app.gui.data_view import DataView
    from imputer_app.gui.state import Session

    sheet = read_sheet(_river(tmp_path / "river.csv"))
    result = impute(sheet, FillPlan(k=3, censored="limit_sqrt2", interval_level=None))
    session = Session()
    view = DataView(session=session)
    qtbot.addWidget(view)
    session.load(sheet)
    view.set_sheet(sheet)
    col = list(sheet.frame.columns).index("Nitrate")
    widths = [view.table.columnWidth(c) for c in range(len(sheet.frame.columns))]
    view.set_layer(result, "preview")
    text = view.model.display_text(3, col)
    assert text.endswith("0.071 (<0.10)")
    assert view.table.columnWidth(col) >= view.table.fontMetrics().horizontalAdvance(text)
    assert view.table.columnWidth(col) > widths[col]
    assert all(view.table.columnWidth(c) >= w for c, w in enumerate(widths))
