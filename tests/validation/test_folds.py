"""The standard error behind the one-SE rule is taken across folds, not repeats.

Hastie, Tibshirani & Friedman, *The Elements of Statistical Learning*, 2nd ed.,
sec. 7.10: the standard error of a cross-validation estimate is taken across the folds
of one cross-validation. Taken over repeated random hidings it shrinks like
1/sqrt(repeats) and the one-SE k drifts towards the best k as repeats are added.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from imputer_app.plan import FillPlan
from imputer_app.validation import recovery_test


def _clusters() -> pd.DataFrame:
    """Ten groups of twelve rows around random centres: a clear U-shaped error curve in k."""
    rng = np.random.default_rng(0)
    centres = rng.normal(scale=10.0, size=(10, 4))
    return pd.DataFrame(np.repeat(centres, 12, axis=0) + rng.normal(size=(120, 4)), columns=list("abcd"))


def test_se_is_across_the_folds_of_each_repeat_averaged_over_repeats() -> None:
    report = recovery_test(_clusters(), FillPlan(), ks=[1, 5, 10], hide_fraction=0.2, repeats=3, seed=1)
    scores = report.scores
    assert sorted(scores["fold"].unique()) == [0, 1, 2, 3, 4] and report.settings["folds"] == 5
    per_fold = scores.groupby(["k", "repeat", "fold"])["nrmse"].mean()  # mean over columns
    for k in report.ks:
        folds = per_fold.loc[k].unstack("fold").to_numpy()  # (repeats, folds)
        se = np.mean([stats.sem(row) for row in folds])  # scipy reference for one repeat's SE
        assert report.overall.loc[k, "se"] == pytest.approx(se, abs=1e-12)
        assert report.overall.loc[k, "score"] == pytest.approx(folds.mean(), abs=1e-12)
    # per column the same way
    column = scores[(scores["k"] == 5) & (scores["column"] == "a")].pivot(
        index="repeat", columns="fold", values="nrmse"
    )
    expected = np.mean([stats.sem(row) for row in column.to_numpy()])
    assert report.summary.loc[5, ("a", "se")] == pytest.approx(expected, abs=1e-12)


def test_every_known_cell_is_hidden_once_per_repeat() -> None:
    frame = _clusters()
    report = recovery_test(frame, FillPlan(), ks=[3], hide_fraction=0.2, repeats=2, seed=0, masking="random")
    hidden = report.scores.groupby(["repeat", "column"])["n_hidden"].sum()
    assert (hidden == len(frame)).all()  # no gaps: all 120 cells of every column, once


def test_one_se_k_is_stable_and_the_se_does_not_shrink_as_repeats_grow() -> None:
    frame = _clusters()
    reports = {
        r: recovery_test(frame, FillPlan(), ks=range(1, 25), hide_fraction=0.2, repeats=r, seed=0)
        for r in (2, 5, 10)
    }
    one_se = [reports[r].best_k_1se for r in (2, 5, 10)]
    se = [reports[r].overall.loc[reports[r].best_k, "se"] for r in (2, 5, 10)]
    assert {reports[r].best_k for r in (2, 5, 10)} == {10}
    # the one-SE k stays at the edge of the U (within one step of k), far from the best k
    assert max(one_se) - min(one_se) <= 1 and min(one_se) > 10
    # the SE keeps its size: five times the repeats would shrink a repeat-based SE to
    # 1 / sqrt(5) = 0.45 of its value
    assert 0.8 < se[2] / se[0] < 1.5
    # the SE over repeats (the old rule) does shrink on the same scores
    by_repeat = [
        stats.sem(reports[r].scores[reports[r].scores["k"] == 10].groupby("repeat")["nrmse"].mean())
        for r in (2, 10)
    ]
    assert by_repeat[1] < 0.6 * by_repeat[0]
