"""An export exported again: the newest "About this fill (N)" gives the plan back."""

from __future__ import annotations

from pathlib import Path

import openpyxl

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_export_plan, read_sheet, write_result
from imputer_app.sheets._export_plan import newest_about_sheet
from tests.sheets import lab_fixture


def test_newest_about_sheet_is_chosen_by_its_number() -> None:
    names = [
        "Results",
        "About this fill",
        "About this fill (2)",
        "About this fill (10)",
        "About this fill (x)",
    ]
    assert newest_about_sheet(names) == "About this fill (10)"
    assert newest_about_sheet(["Results", "About this fill"]) == "About this fill"
    assert newest_about_sheet(["Results"]) is None


def test_plan_from_an_export_of_an_export_is_the_latest(tmp_path: Path) -> None:
    source = lab_fixture.build(tmp_path / "lab.xlsx")
    first_plan, second_plan = FillPlan(k=2), FillPlan(k=4, markers={"n.d.": "missing"}, limits={"Ca": 0.05})
    sheet = read_sheet(source)
    write_result(tmp_path / "first.xlsx", sheet, impute(sheet, first_plan), first_plan)
    again = read_sheet(tmp_path / "first.xlsx", sheet="Results")
    write_result(tmp_path / "second.xlsx", again, impute(again, second_plan), second_plan)
    names = openpyxl.load_workbook(tmp_path / "second.xlsx", read_only=True).sheetnames
    assert "About this fill" in names and "About this fill (2)" in names
    assert read_export_plan(tmp_path / "first.xlsx") == first_plan
    assert read_export_plan(tmp_path / "second.xlsx") == second_plan
