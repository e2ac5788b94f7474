"""The command line's options laid over a plan (``kinfill fill --k 3 --carry ...``)."""

from __future__ import annotations

from typing import Any

import pytest

from imputer_app.cli.plan_options import build_plan
from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan


@pytest.mark.parametrize(
    ("base", "options", "expected"),
    [
        # --similarity / --fill take a column out of the plan's carried columns
        (FillPlan(carried_columns=("ID", "pH")), {"similarity": ("pH", "NO3")}, FillPlan(
            similarity_columns=("pH", "NO3"), carried_columns=("ID",))),
        # --carry replaces the carried columns and leaves similarity/fill
        (FillPlan(similarity_columns=("pH", "NO3"), fill_columns=("NO3",)), {"carry": ("NO3",)}, FillPlan(
            similarity_columns=("pH",), fill_columns=(), carried_columns=("NO3",))),
        # weights merge, the option winning
        (FillPlan(weights={"pH": 2.0, "NO3": 3.0}), {"weights": [("NO3", 0.0)]}, FillPlan(
            weights={"pH": 2.0, "NO3": 0.0})),
        (FillPlan(k=9, scaling="robust"), {"k": 3, "scaling": "none", "group": "Station"}, FillPlan(
            k=3, scaling="none", group_column="Station")),
        (FillPlan(k=9), {}, FillPlan(k=9)),
    ],
)  # fmt: skip
def test_options_override_the_plan(base: FillPlan, options: dict[str, Any], expected: FillPlan) -> None:
    assert build_plan(base, **options) == expected


@pytest.mark.parametrize(
    ("options", "words"),
    [({"k": 0}, "k must be at least 1"), ({"weights": [("pH", -2.0)]}, "0 or more")],
)
def test_bad_options_are_plan_errors(options: dict[str, Any], words: str) -> None:
    with pytest.raises(PlanError, match=words):
        build_plan(FillPlan(), **options)
