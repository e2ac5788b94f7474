"""prepare(): kinds from sheets, hidden cells, scaling and censored flags."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import SheetLike, default_roles, impute, nearest_donors, prepare
from imputer_app.engine._scaling import apply_scale, fit_scale
from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from tests.engine.helpers import fake_sheet, random_frame


def test_a_read_sheet_is_sheet_like() -> None:
    from imputer_app.sheets import read_sheet

    sheet = read_sheet("sample_sheets/river_survey.xlsx")
    assert isinstance(sheet, SheetLike)
    assert isinstance(fake_sheet(pd.DataFrame({"a": [1.0, np.nan]}), []), SheetLike)


@pytest.mark.parametrize(
    ("data", "named"),
    [
        (SimpleNamespace(frame=pd.DataFrame({"a": [1.0]})), "SimpleNamespace"),  # no states, no notes
        ([[1.0, 2.0]], "list"),
        (SimpleNamespace(frame=[[1.0]], states=None, cell_notes=None), "frame is not a table"),
    ],
)
def test_what_is_not_a_table_nor_sheet_like_is_refused(data: object, named: str) -> None:
    with pytest.raises(PlanError, match=named):
        prepare(data, FillPlan())  # type: ignore[arg-type]


def test_sheet_column_kinds_decide_roles() -> None:
    frame = pd.DataFrame(
        {
            "id": ["a", "a", "b", "b"],
            "when": ["x", "y", "z", "u"],
            "v": [1.0, np.nan, 3, 4],
            "w": [1.0, 2, 3, 5],
        }
    )
    sheet = fake_sheet(frame, [])
    sheet.columns = [
        SimpleNamespace(name="id", kind="identifier"),
        SimpleNamespace(name="when", kind="date"),
        SimpleNamespace(name="v", kind="number"),
        SimpleNamespace(name="w", kind="number"),
    ]
    assert default_roles(sheet) == {"id": "carried", "when": "carried", "v": "fill", "w": "similarity"}
    assert default_roles(frame)["id"] == "similarity"  # a DataFrame's repeated text is a category
    # ... used only with few levels, each seen twice on average: three of four is free text
    assert default_roles(frame.assign(id=["a", "b", "b", "c"]))["id"] == "carried"


@pytest.mark.parametrize("scaling", ["zscore", "range", "robust", "none"])
def test_scaling_statistics(scaling: str) -> None:
    # Common practice, no source: z-score (mean, population SD), range (min, max-min), robust (median, IQR).
    x = np.array([[1.0, 10.0], [2.0, np.nan], [4.0, 30.0], [7.0, 20.0], [np.nan, 60.0]])
    scaled = apply_scale(x, fit_scale(x, scaling))
    for j in range(2):
        col = x[:, j][~np.isnan(x[:, j])]
        if scaling == "zscore":
            want = (x[:, j] - col.mean()) / col.std()
        elif scaling == "range":
            want = (x[:, j] - col.min()) / (col.max() - col.min())
        elif scaling == "robust":
            q1, q3 = np.percentile(col, [25, 75])
            want = (x[:, j] - np.median(col)) / (q3 - q1)
        else:
            want = x[:, j]
        np.testing.assert_allclose(scaled[:, j], want, rtol=1e-12)


def test_constant_and_zero_iqr_columns() -> None:
    x = np.array([[5.0, 1.0], [5.0, 1.0], [5.0, 1.0], [np.nan, 9.0], [5.0, 1.0]])
    scale = fit_scale(x, "robust")
    assert scale.constant.tolist() == [True, False]
    assert scale.fallback.tolist() == [False, True]  # IQR 0 but not constant: the SD is used
    assert scale.spread[1] == pytest.approx(np.std([1.0, 1, 1, 9, 1]))
    assert np.isnan(apply_scale(x, scale)[:, 0]).all()


def test_hidden_cells_become_targets_and_leave_the_statistics() -> None:
    frame = random_frame(30, 3, 0.0, seed=1)
    hide = np.zeros(frame.shape, dtype=bool)
    hide[[2, 5], 0] = True
    plan = FillPlan(fill_columns=("c0",))
    table = prepare(frame, plan, hide=hide)
    assert np.flatnonzero(~table.observed["c0"]).tolist() == [2, 5]
    kept = frame["c0"].drop(index=[2, 5])
    want = (frame["c0"] - kept.mean()) / kept.std(ddof=0)
    want[[2, 5]] = np.nan
    np.testing.assert_allclose(table.features.numbers[:, 0], want.to_numpy(), rtol=1e-12)
    found = nearest_donors(table, kmax=3)["c0"]
    assert found.rows.tolist() == [2, 5] and not np.isin(found.index, [2, 5]).any()
    assert frame.notna().all().all()  # the input was not touched


def test_fill_column_outside_the_similarity_columns() -> None:
    frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 10.0], "t": [5.0, 6.0, np.nan, 50.0]})
    result = impute(frame, FillPlan(k=2, scaling="none", similarity_columns=("x",), fill_columns=("t",)))
    assert result.frame.loc[2, "t"] == pytest.approx(5.5)  # rows 1 and 0 by x alone


def test_censored_cells_are_flagged_in_every_column() -> None:
    frame = pd.DataFrame(
        {"note": [1.0, 2.0, 3.0, 4.0], "x": [1.0, 2.0, np.nan, 4.0], "t": [1.0, 2.0, 3.0, np.nan]},
    )
    sheet = fake_sheet(frame, [(0, "note", "<1", "<", 1.0), (2, "x", "<0.5", "<", 0.5)])
    plan = FillPlan(
        censored="fill_capped", carried_columns=("note",), similarity_columns=("x",), fill_columns=("t",)
    )
    result = impute(sheet, plan)
    assert result.censored.loc[0, "note"] and result.censored.loc[2, "x"]
    assert result.censored.to_numpy().sum() == 2
    assert np.isnan(result.frame.loc[2, "x"])  # capped fill only for fill columns
    reasons = {(r.row, r.column): r.reason for r in result.unfilled.itertuples()}
    assert reasons == {(2, "x"): "censored entry with no number to stand for it; 'x' is not a fill column"}
    assert result.frame.loc[0, "note"] == 1.0  # carried: untouched


def test_row_with_empty_group_is_explained() -> None:
    frame = pd.DataFrame({"g": ["A", "A", None], "x": [1.0, 2.0, 1.5], "t": [1.0, 2.0, np.nan]})
    result = impute(frame, FillPlan(group_column="g"))
    assert result.unfilled["reason"].tolist() == ["group column 'g' is empty in this row"]
