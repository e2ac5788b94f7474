"""What impute accepts (any DataFrame, a 2-D array) and columns that cannot compare rows."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.impute import KNNImputer

from imputer_app.engine import impute
from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame

nan = np.nan


def test_integer_column_labels_are_kept_and_shown_as_text() -> None:
    # pd.DataFrame(X) has integer labels; the fill is the same as with text labels, the
    # result keeps the integers, the fill log names them as text.
    named = random_frame(40, 4, 0.15, seed=1)
    frame = pd.DataFrame(named.to_numpy())
    result = impute(frame, FillPlan())
    assert result.frame.columns.tolist() == [0, 1, 2, 3]
    assert result.filled.columns.tolist() == [0, 1, 2, 3] and result.censored.columns.tolist() == [0, 1, 2, 3]
    np.testing.assert_array_equal(result.frame.to_numpy(), impute(named, FillPlan()).frame.to_numpy())
    assert set(result.log["column"]) == {"0", "1", "2", "3"}
    assert result.plan.fill_columns == ("0", "1", "2", "3")


def test_a_2d_array_gives_the_filled_array_as_sklearn() -> None:
    # Reference: scikit-learn KNNImputer(n_neighbors=5).fit_transform(X) on an array
    # without constant columns and ties equals impute(X, FillPlan(scaling="none")).array.
    x = random_frame(60, 5, 0.1, seed=2).to_numpy()
    result = impute(x, FillPlan(scaling="none", no_donor="column_mean"))
    assert isinstance(result.array, np.ndarray) and result.array.shape == x.shape
    np.testing.assert_allclose(result.array, KNNImputer(n_neighbors=5).fit_transform(x), rtol=0, atol=1e-9)
    assert result.frame.columns.tolist() == [0, 1, 2, 3, 4]
    assert np.isnan(x).sum() > 0  # the input is never changed


@pytest.mark.parametrize(
    ("data", "message"),
    [
        (np.zeros((2, 2, 2)), "cannot fill an array of 3 dimensions; give a 2-D array (rows x columns)"),
        (pd.DataFrame([[1.0, nan], [2.0, 3.0]], columns=[1, "1"]), "two columns are both named '1' as text"),
    ],
)
def test_inputs_it_cannot_take_raise_one_line(data: object, message: str) -> None:
    with pytest.raises(PlanError) as caught:
        impute(data, FillPlan())  # type: ignore[arg-type]
    assert str(caught.value).startswith(message) and "\n" not in str(caught.value)


def test_constant_column_is_left_out_with_a_warning_as_sklearn_without_it() -> None:
    # Reference: scikit-learn KNNImputer on the table without the constant column. A
    # constant column says nothing about similarity; left in, it would still change the
    # Dixon factor (all columns / shared columns) of rows with gaps, so it is left out.
    frame = random_frame(50, 4, 0.15, seed=3)
    frame.insert(2, "flat", 7.0)
    # Named as a similarity column (a constant column is carried by default).
    plan = FillPlan(k=3, scaling="none", no_donor="column_mean", similarity_columns=tuple(frame.columns))
    result = impute(frame, plan)
    assert "column 'flat' is constant; left out of the distance" in result.warnings
    ref = KNNImputer(n_neighbors=3).fit_transform(frame.drop(columns="flat").to_numpy())
    np.testing.assert_allclose(result.frame.drop(columns="flat").to_numpy(), ref, rtol=0, atol=1e-9)


@pytest.mark.parametrize(
    "plan",
    [
        FillPlan(similarity_columns=("a", "b"), fill_columns=("t",)),  # both constant
        FillPlan(weights={"x": 0.0, "t": 0.0}),  # every weight 0
    ],
    ids=["constant", "weights-0"],
)
def test_no_column_that_can_compare_rows_raises_plan_error(plan: FillPlan) -> None:
    frame = pd.DataFrame(
        {"a": [1.0] * 4, "b": [2.0, 2.0, nan, 2.0], "x": [1.0, 2.0, 3.0, 4.0], "t": [1.0, nan, 3, 4]}
    )
    with pytest.raises(PlanError, match=r"^no similarity column can compare rows") as caught:
        impute(frame, plan)
    assert "\n" not in str(caught.value)


def test_reason_says_constant_when_only_a_constant_column_is_measured() -> None:
    frame = pd.DataFrame({"x": [nan, 1.0, 2.0, 3.0], "flat": [5.0] * 4, "t": [nan, 1.0, 2.0, 3.0]})
    result = impute(frame, FillPlan(similarity_columns=("x", "flat"), fill_columns=("t",)))
    assert result.unfilled["reason"].tolist() == [
        "this row's similarity values are all in constant columns (left out of the distance)"
    ]
