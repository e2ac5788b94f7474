"""The no-donor rule ``column_mean`` with a group column: the mean of the row's own group.

Hand-worked example (common practice, no source: a group mean is the mean of the
group's measured values; the most common class is the class counted most often).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import impute
from imputer_app.plan import FillPlan


def _sites() -> pd.DataFrame:
    # Only rows with a gap have "x", so a row with a gap shares no similarity column with
    # any row holding a value: no gap has a donor.
    return pd.DataFrame(
        {
            "site": ["a", "a", "a", "b", "b", "b", "c", "c", None],
            "x": [np.nan, np.nan, 1.0, np.nan, 2.0, np.nan, 3.0, 4.0, 5.0],
            "y": [1.0, 2.0, np.nan, 10.0, np.nan, 20.0, np.nan, np.nan, np.nan],
            "cls": ["u", "v", None, "w", None, "w", None, None, None],
        },
        index=[11, 12, 13, 14, 15, 16, 17, 18, 19],
    )


def _plan(**changes: object) -> FillPlan:
    plan = FillPlan(
        k=2,
        similarity_columns=("x",),
        fill_columns=("y", "cls"),
        no_donor="column_mean",
    )
    return plan.replace(**changes)


def test_a_row_without_donor_takes_its_own_groups_mean_and_class() -> None:
    result = impute(_sites(), _plan(group_column="site"))
    frame = result.frame
    assert frame.loc[13, "y"] == pytest.approx(1.5)  # group a: (1 + 2) / 2
    assert frame.loc[15, "y"] == pytest.approx(15.0)  # group b: (10 + 20) / 2
    assert frame.loc[15, "cls"] == "w"  # group b: w twice
    assert frame.loc[13, "cls"] == "u"  # group a: u and v once each -> the first class in order
    log = result.log.set_index(["row", "column"])
    assert log.loc[(13, "y"), "method"] == "column_mean"
    assert "column mean of group 'a'" in log.loc[(13, "y"), "note"]
    assert "most common class of group 'b'" in log.loc[(15, "cls"), "note"]
    # group c has no value, row 19 has no group: left empty, each with its reason
    unfilled = result.unfilled.set_index(["row", "column"])["reason"]
    assert np.isnan(frame.loc[17, "y"]) and np.isnan(frame.loc[19, "y"])
    assert "no row of group 'c' has a value in 'y'" in unfilled.loc[(17, "y")]
    assert "group column 'site' is empty in this row" in unfilled.loc[(19, "y")]
    assert {(17, "y"), (18, "y"), (19, "y"), (17, "cls"), (18, "cls"), (19, "cls")} <= set(unfilled.index)


def test_without_a_group_column_the_whole_column_counts() -> None:
    result = impute(_sites(), _plan())
    assert result.frame.loc[13, "y"] == pytest.approx((1 + 2 + 10 + 20) / 4)
    assert result.frame.loc[19, "y"] == pytest.approx(8.25)
    assert result.frame.loc[13, "cls"] == "w"  # w twice, u and v once
    assert "filled with the column mean" in result.log.set_index(["row", "column"]).loc[(13, "y"), "note"]
