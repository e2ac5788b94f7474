"""check_k: the most donors a gap can have, and the k in effect."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.plan import FillPlan
from imputer_app.validation import check_k, known_counts


@pytest.mark.parametrize(
    ("k", "plan_extra", "used"),
    [
        (3, {}, 3),  # fits: 'a' has 7 known cells
        (50, {}, 7),  # the best-filled fill column ('a') has 7 known cells
        (50, {"fill_columns": ("b",)}, 5),  # 'b' alone: 5 known cells
        (50, {"group_column": "g"}, 4),  # donors never cross groups: the largest group holds 4 of 'a'
    ],
)
def test_the_k_in_effect_is_capped_by_the_known_cells(k, plan_extra, used):
    frame = pd.DataFrame(
        {
            "a": [np.nan, 1, 2, 3, 4, 5, 6, 7],
            "b": [1, np.nan, np.nan, np.nan, 4, 5, 6, 7],
            "g": ["x", "x", "x", "x", "x", "y", "y", "y"],
        }
    )
    plan = FillPlan(k=k, **plan_extra)
    if "group_column" not in plan_extra:
        frame = frame.drop(columns="g")
    check = check_k(frame, plan)
    assert (check.asked, check.used, check.too_large) == (k, used, used < k)
    assert (check.message() == "") == (used == k)


def test_known_counts_are_counted_once_per_frame() -> None:
    frame = pd.DataFrame({"a": [1.0, np.nan, 3.0], "b": [np.nan, np.nan, 2.0], "c": ["x", None, "y"]})
    first = known_counts(frame)
    assert first.to_dict() == frame.notna().sum().to_dict() == {"a": 2, "b": 1, "c": 2}
    assert known_counts(frame) is first  # the same frame again: not counted again
    other = frame.fillna({"a": 0.0, "b": 0.0, "c": "z"})
    assert known_counts(other).to_dict() == {"a": 3, "b": 3, "c": 3}
    assert known_counts(frame).to_dict() == {"a": 2, "b": 1, "c": 2}  # and back
