"""A formula-error cell has its own symbol and words; the setup table says why a column is carried."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from PySide6.QtCore import Qt

from imputer_app.engine import default_roles
from imputer_app.gui.markers import MARKERS
from imputer_app.gui.setup_model import ColumnListModel, choices_for_sheet
from imputer_app.gui.table_model import SheetTableModel
from imputer_app.sheets import read_sheet
from imputer_app.words import STATE_WORDS
from tests.gui._sheets import make_sheet
from tests.sheets import lab_fixture

R = Qt.ItemDataRole


def test_formula_error_cell_has_its_symbol_colour_and_words(qapp) -> None:
    frame = pd.DataFrame(
        {"pH": [7.5, np.nan, 7.25], "Ca": [1.0, 2.0, 3.0]}, index=pd.Index([2, 3, 4], name="row")
    )
    sheet = make_sheet(frame, {(3, "pH"): ("formula_error", "#DIV/0!")})
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_dark(False)
    r, c = model.find(3, "pH")
    marker = MARKERS["formula_error"]
    assert model.data(model.index(r, c), R.DisplayRole) == f"{marker.symbol} #DIV/0!"
    assert model.data(model.index(r, c), R.BackgroundRole).name() == marker.light[0]
    assert STATE_WORDS["formula_error"] in model.data(model.index(r, c), R.ToolTipRole)
    assert "0 gaps" in model.headerData(c, Qt.Orientation.Horizontal, R.ToolTipRole)  # not a gap


def test_setup_table_shows_why_a_column_is_carried(qapp, tmp_path: Path) -> None:
    sheet = read_sheet(lab_fixture.build(tmp_path / "lab.xlsx"))
    choices = choices_for_sheet(sheet, default_roles(sheet))
    by_name = {c.name: c for c in choices}
    assert by_name["Base sum"].role == "carried" and by_name["Base sum"].reason.startswith("computed")
    assert by_name["pH"].reason == "" and by_name["Block"].group_like
    model = ColumnListModel()
    model.set_choices(choices, None)
    row = [c.name for c in choices].index("Notes")
    tip = model.data(model.index(row, 1), R.ToolTipRole)
    assert "Carried by default: free text (mostly empty: 3 of 40 rows hold an entry)." in tip


def test_cell_story_names_the_sample_and_its_donors_by_id(tmp_path: Path) -> None:
    from imputer_app.engine import impute
    from imputer_app.gui.cell_story import describe_cell
    from imputer_app.plan import FillPlan

    sheet = read_sheet(lab_fixture.build(tmp_path / "lab.xlsx"))
    result = impute(sheet, FillPlan(k=3))
    row = lab_fixture.FIRST_DATA_ROW + lab_fixture.GAP_ROWS["Ca"][0]
    story = describe_cell(result, row, "Ca", sheet.cell_notes)
    assert dict(story.facts)["Sample"] == f"S-{lab_fixture.GAP_ROWS['Ca'][0] + 1:03d}"
    assert len(story.donors) == 3
    for donor in story.donors:  # each donor named by its sample ID beside its row number
        assert donor.sample_id == f"S-{donor.label - lab_fixture.FIRST_DATA_ROW + 1:03d}"
