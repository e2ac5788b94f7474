"""The recovery test's one actionable sentence, from hand-made reports."""

from __future__ import annotations

import math
from types import SimpleNamespace

import pandas as pd
import pytest

from imputer_app.validation import about_as_good, advice


def report(scores, ses, baseline, best_k):
    ks = tuple(range(1, len(scores) + 1))
    overall = pd.DataFrame({"score": scores, "se": ses}, index=pd.Index(ks, name="k"))
    base = pd.DataFrame({"score": [baseline]}, index=["overall"])
    return SimpleNamespace(score_name="score", overall=overall, baseline=base, best_k=best_k, ks=ks)


@pytest.mark.parametrize(
    ("scores", "ses", "baseline", "best_k", "expected"),
    [
        # best 0.61 at k = 3 against 1.00: 39 % less error; k 2-4 within 0.61 + 0.05
        (
            [0.70, 0.64, 0.61, 0.65, 0.80],
            [0.05] * 5,
            1.0,
            3,
            "Use k = 3: hidden values came back with 39 % less error than column averages; "
            "any k from 2 to 4 does about as well.",
        ),
        # flat to the end of the range
        (
            [0.90, 0.55, 0.50, 0.51, 0.52],
            [0.03] * 5,
            1.0,
            3,
            "Use k = 3: hidden values came back with 50 % less error than column averages; any k from 3 to 5 "
            "does about as well. The curve is flat up to the largest k tested (5); "
            "the range could go further.",
        ),
        (
            [1.10, 1.05, 1.20],
            [0.01] * 3,
            1.0,
            2,
            "Neighbours do not beat column averages here (best k = 2): "
            "check the similarity columns before filling.",
        ),
        (
            [0.5, 0.7],
            [math.nan] * 2,
            1.0,
            1,
            "Use k = 1: hidden values came back with 50 % less error than column averages.",
        ),
    ],
)
def test_advice_leads_with_the_k_to_use(scores, ses, baseline, best_k, expected):
    made = report(scores, ses, baseline, best_k)
    assert advice(made) == expected  # type: ignore[arg-type]


def test_about_as_good_is_the_span_within_one_standard_error():
    made = report([0.70, 0.64, 0.61, 0.65, 0.80], [0.05] * 5, 1.0, 3)
    assert about_as_good(made) == (2, 4)  # type: ignore[arg-type]
