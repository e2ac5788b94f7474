"""Lab markers: the list found with counts and meanings, a limit row, the plan's limits."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from imputer_app.engine import impute
from imputer_app.errors import SheetError
from imputer_app.plan import FillPlan
from imputer_app.sheets import MarkerFound, read_sheet

CSV = (
    "Sample,Cd,Pb,Zn\n"
    "S1,0.12,n.d.,4.1\n"
    "S2,n.d.,1.5,NA\n"
    "S3,0.10,ND,4.4\n"
    "S4,-,1.8,<LOD\n"
    "S5,0.15,1.6,4.0\n"
    "S6,0.11,1.7,4.2\n"
)


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "metals.csv"
    path.write_text(text, encoding="utf-8")
    return path


def test_markers_are_listed_with_meaning_and_count(tmp_path: Path) -> None:
    sheet = read_sheet(_write(tmp_path, CSV))
    found = {(m.text.lower(), m.meaning): m.count for m in sheet.markers}
    assert found == {
        ("n.d.", "below-limit"): 2,
        ("nd", "below-limit"): 1,
        ("<lod", "below-limit"): 1,
        ("na", "missing"): 1,
        ("-", "missing"): 1,
    }
    assert sheet.markers[0] == MarkerFound("n.d.", "below-limit", 2)  # most frequent first


def test_a_users_meaning_changes_the_state(tmp_path: Path) -> None:
    path = _write(tmp_path, CSV)
    sheet = read_sheet(path, markers={"n.d.": "missing", "-": "below-limit"})
    assert str(sheet.states.loc[3, "Cd"]) == "missing" and str(sheet.states.loc[5, "Cd"]) == "censored"
    assert str(sheet.states.loc[4, "Pb"]) == "censored"  # "ND" keeps its default meaning
    with pytest.raises(SheetError, match=r"marker 'n\.d\.' must mean one of missing, below-limit"):
        read_sheet(path, markers={"n.d.": "absent"})


def test_a_limit_row_gives_the_limits_and_is_not_a_sample(tmp_path: Path) -> None:
    text = CSV.replace("Sample,Cd,Pb,Zn\n", "Sample,Cd,Pb,Zn\nLOD,0.05,0.5,2\n")
    sheet = read_sheet(_write(tmp_path, text))
    assert sheet.source.limit_row == 2 and 2 not in sheet.frame.index
    notes = sheet.cell_notes.set_index(["row", "column"])
    assert notes.loc[(3, "Pb"), "limit"] == 0.5 and notes.loc[(4, "Cd"), "limit"] == 0.05
    assert notes.loc[(6, "Zn"), "limit"] == 2.0  # "<LOD" takes the row's limit too
    assert any("row 2 gives limits of detection" in p for p in sheet.problems)


def test_plan_limits_stand_for_unknown_ones(tmp_path: Path) -> None:
    sheet = read_sheet(_write(tmp_path, CSV))
    plan = FillPlan(censored="half_limit", limits={"Pb": 0.5}, fill_columns=("Pb",))
    result = impute(sheet, plan)
    # half the plan's limit, for both "n.d." (row 2) and "ND" (row 4) of Pb
    assert result.frame.loc[2, "Pb"] == pytest.approx(0.25) and result.frame.loc[4, "Pb"] == pytest.approx(
        0.25
    )
    unknown = impute(sheet, FillPlan(censored="half_limit", fill_columns=("Pb",)))
    assert not math.isclose(float(unknown.frame.loc[2, "Pb"]), 0.25)
    assert np.isfinite(unknown.frame.loc[2, "Pb"])
