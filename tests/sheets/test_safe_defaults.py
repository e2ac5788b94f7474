"""Defaults that cannot damage a lab sheet: what is carried, and why (see README.md)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import default_role_reasons, default_roles, impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from tests.sheets import lab_fixture
from tests.sheets.libreoffice_support import convert, needs_soffice


@pytest.fixture(scope="module")
def lab(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return lab_fixture.build(tmp_path_factory.mktemp("lab") / "lab.xlsx")


def test_defaults_fill_only_measured_columns(lab: Path) -> None:
    sheet = read_sheet(lab)
    roles = default_roles(sheet)
    assert {c: roles[c] for c in ("Sample ID", "Sampled", "Base sum", "Notes")} == dict.fromkeys(
        ("Sample ID", "Sampled", "Base sum", "Notes"), "carried"
    )
    assert {c: roles[c] for c in ("pH", "Ca", "Mg", "K")} == dict.fromkeys(("pH", "Ca", "Mg", "K"), "fill")
    reasons = default_role_reasons(sheet)
    assert reasons["Base sum"].startswith("computed by formulas")
    assert reasons["Notes"] == "free text (mostly empty: 3 of 40 rows hold an entry)"
    assert reasons["Sample ID"].startswith("an identifier") and reasons["Sampled"] == "dates or times"
    assert sheet.column("Base sum").carry_reason is not None and sheet.column("pH").carry_reason is None
    assert sheet.column("Block").group_like and not sheet.column("Ca").group_like


def test_default_fill_leaves_carried_columns_and_formula_errors(lab: Path) -> None:
    sheet = read_sheet(lab)
    result = impute(sheet, FillPlan())
    for col in ("Sample ID", "Sampled", "Base sum", "Notes"):
        pd.testing.assert_series_equal(result.frame[col], sheet.frame[col])
        assert not result.filled[col].any()
    error_row = lab_fixture.FIRST_DATA_ROW + lab_fixture.ERROR_ROW
    assert sheet.states.loc[error_row, "Mg"] == "formula_error"
    assert np.isnan(result.frame.loc[error_row, "Mg"]) and not result.filled.loc[error_row, "Mg"]
    # every gap of the measured columns is filled (2 + 1 + 2 + 1), and the "n.d." pH,
    # below an unknown limit, is filled by kNN and stays flagged as censored
    assert int(result.filled.to_numpy().sum()) == 7
    nd_row = lab_fixture.FIRST_DATA_ROW + lab_fixture.ND_ROW
    states = result.log.set_index(["row", "column"])["original_state"]
    assert states.loc[(nd_row, "pH")] == "censored" and set(states.drop((nd_row, "pH"))) == {"missing"}
    assert result.censored.loc[nd_row, "pH"]


def test_formula_errors_are_filled_when_the_plan_says(lab: Path) -> None:
    sheet = read_sheet(lab)
    result = impute(sheet, FillPlan(fill_formula_errors=True))
    error_row = lab_fixture.FIRST_DATA_ROW + lab_fixture.ERROR_ROW
    assert result.filled.loc[error_row, "Mg"]
    log = result.log.set_index(["row", "column"])
    assert log.loc[(error_row, "Mg"), "original_state"] == "formula_error"


@pytest.mark.parametrize(
    ("values", "carried"),
    [
        (["a", "b"] * 10, False),  # 2 levels, 10 each
        ([f"s{i % 12}" for i in range(20)], True),  # 12 levels > max(10, sqrt(20))
        (["x"] * 3 + [None] * 17, True),  # mostly empty
        (["a long remark about the sample and its jar"] * 12 + ["b"] * 8, True),  # long text
    ],
)
def test_category_rule(values: list[str | None], carried: bool) -> None:
    frame = pd.DataFrame({"t": values, "x": np.arange(20.0), "y": np.r_[np.nan, np.arange(19.0)]})
    assert (default_roles(frame)["t"] == "carried") is carried
    assert ("t" in default_role_reasons(frame)) is carried


@needs_soffice
@pytest.mark.slow
@pytest.mark.parametrize("fmt", ["ods", "xls"])
def test_formula_column_of_ods_and_xls_is_carried(lab: Path, tmp_path: Path, fmt: str) -> None:
    # the lab workbook as LibreOffice writes it (an independent writer): its formula
    # column is found as computed there too, so a default fill leaves it alone
    converted = convert(lab, fmt, tmp_path)
    sheet = read_sheet(converted)
    reasons = default_role_reasons(sheet)
    assert reasons["Base sum"].startswith("computed by formulas")
    assert default_roles(sheet)["Base sum"] == "carried"
    result = impute(sheet, FillPlan())
    assert not result.filled["Base sum"].any()
