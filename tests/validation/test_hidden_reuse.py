"""A fill calibrates its intervals on the recovery test's hidden cells when given them."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import impute
from imputer_app.engine._conformal import FLOOR_SHARE, OWN_CELLS, TEST_CELLS, conformal_quantile
from imputer_app.plan import FillPlan
from imputer_app.sheets import methods_paragraph
from imputer_app.validation import recovery_test


@pytest.fixture(scope="module")
def sheet() -> pd.DataFrame:
    rng = np.random.default_rng(4)
    base = rng.normal(size=(150, 2))
    x = np.column_stack([base, base @ [[0.8, 0.3], [0.2, 0.9]] + 0.3 * rng.normal(size=(150, 2))])
    frame = pd.DataFrame(x, columns=["a", "b", "c", "d"])
    return frame.mask(rng.random(frame.shape) < 0.08)


@pytest.fixture(scope="module")
def report(sheet: pd.DataFrame) -> object:
    return recovery_test(sheet, FillPlan(), ks=(1, 3, 5, 7), repeats=2, hide_fraction=0.2, seed=3)


def test_reused_quantiles_are_those_of_the_tests_hidden_cells(sheet: pd.DataFrame, report: object) -> None:
    hidden = report.hidden  # type: ignore[attr-defined]
    assert hidden is not None and hidden.ks == (1, 3, 5, 7)
    result = impute(sheet, FillPlan(k=3), hidden=hidden)
    calibration = result.calibration
    assert calibration is not None and calibration.source == TEST_CELLS and calibration.remark == ""
    for column, cal in calibration.columns.items():
        rows = hidden.rows[column]
        assert sheet[column].iloc[rows].notna().all()  # the test hid known cells
        error, sd, _ = hidden.scores[column][hidden.ks.index(3)].astype(np.float64)
        known = sheet[column].dropna()
        floor = max(float(np.median(sd)), FLOOR_SHARE * float(known.std(ddof=1)))
        assert cal.n_hidden == len(rows)
        assert math.isclose(cal.quantile, conformal_quantile(error / (sd + floor), 0.9), rel_tol=1e-9)
    notes = result.log.loc[result.log["method"] == "knn", "note"]
    assert notes.str.contains("hidden known cells of the recovery test").all()


def test_run_record_says_which_cells_and_how_many(sheet: pd.DataFrame, report: object) -> None:
    plan = FillPlan(k=5)
    result = impute(sheet, plan, hidden=report.hidden)  # type: ignore[attr-defined]
    assert result.calibration is not None
    record = {
        "intervals": json.loads(json.dumps(result.calibration.to_dict())),  # as the run record holds it
        "methods_text": methods_paragraph(result, plan, report),  # type: ignore[arg-type]
    }
    intervals = record["intervals"]
    assert intervals["source"] == TEST_CELLS
    assert intervals["n_hidden"] == sum(len(r) for r in report.hidden.rows.values())  # type: ignore[attr-defined]
    own = impute(sheet, plan)
    assert own.calibration is not None and own.calibration.source == OWN_CELLS
    assert "hidden by the recovery test" in record["methods_text"]


@pytest.mark.parametrize(
    ("plan", "why"),
    [(FillPlan(k=4), "did not try k = 4"), (FillPlan(k=3, weights={"a": 2.0}), "differs from the fill's")],
)
def test_a_test_that_does_not_fit_is_not_reused(
    sheet: pd.DataFrame, report: object, plan: FillPlan, why: str
) -> None:
    result = impute(sheet, plan, hidden=report.hidden)  # type: ignore[attr-defined]
    calibration = result.calibration
    assert calibration is not None and calibration.source == OWN_CELLS
    assert why in calibration.remark
    own = impute(sheet, plan).calibration
    assert own is not None
    assert {c: v.quantile for c, v in calibration.columns.items()} == {
        c: v.quantile for c, v in own.columns.items()
    }
