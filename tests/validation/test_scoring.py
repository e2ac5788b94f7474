"""Scores, summaries over repeats and the choice of k, on hand-made numbers."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from sklearn.metrics import accuracy_score, mean_absolute_error, root_mean_squared_error

from imputer_app.validation import one_se_rule
from imputer_app.validation._report import build_report
from imputer_app.validation._scoring import (
    ColumnOutcome,
    best_k,
    cell_errors,
    overall_by_k,
    score_repeat,
    standard_error,
    summarise,
)

# A hand-made score table (mean error and SE over repeats for each k).
KS = [1, 3, 5, 7, 9, 11]
MEANS = [0.62, 0.48, 0.45, 0.47, 0.52, 0.60]
SES = [0.03, 0.03, 0.03, 0.02, 0.02, 0.02]


def test_one_se_rule_on_a_hand_made_table() -> None:
    # Hastie, Tibshirani & Friedman, ESL 2nd ed., sec. 7.10: the most parsimonious model
    # whose error is within one SE of the best. Best is k=5 (0.45, SE 0.03), so the band
    # reaches 0.48: k=3 (0.48) and k=7 (0.47) are inside, k=9 (0.52) is not. The simplest
    # fill is the largest k, so the rule picks 7.
    assert best_k(KS, MEANS) == 5
    assert one_se_rule(KS, MEANS, SES) == 7


@pytest.mark.parametrize(
    ("se_best", "expected"),
    [(0.0, 5), (0.019, 5), (0.02, 7), (0.07, 9), (0.2, 11), (np.nan, 5)],
)
def test_one_se_rule_band_uses_the_best_ks_se(se_best: float, expected: int) -> None:
    # ESL 7.10: only the SE of the best model sets the band; a missing SE (one repeat)
    # leaves the best k (our choice, common practice, no source).
    ses = list(SES)
    ses[2] = se_best
    assert one_se_rule(KS, MEANS, ses) == expected


def test_best_k_ignores_nan_and_prefers_smaller_k_on_ties() -> None:
    # Smallest k on a tie is our convention (common practice, no source).
    assert best_k([1, 2, 3, 4], [np.nan, 0.3, 0.2, 0.2]) == 3
    with pytest.raises(ValueError, match="no k"):
        best_k([1, 2], [np.nan, np.nan])


def _numeric_outcome(seed: int = 0, m: int = 25) -> ColumnOutcome:
    rng = np.random.default_rng(seed)
    truth = rng.normal(10, 2, size=m)
    filled = truth + rng.normal(0, 1, size=(3, m)) * np.array([[0.5], [1.0], [2.0]])
    return ColumnOutcome("x", "number", truth, filled, np.full(m, truth.mean()), spread=2.5)


def test_numeric_errors_match_scikit_learn_metrics() -> None:
    # Reference: scikit-learn root_mean_squared_error / mean_absolute_error.
    out = _numeric_outcome()
    scored = np.ones(out.truth.size, dtype=bool)
    got = cell_errors(out, out.filled, scored)
    for i in range(3):
        rmse = root_mean_squared_error(out.truth, out.filled[i])
        assert got["rmse"][i] == pytest.approx(rmse, rel=1e-12)
        assert got["mae"][i] == pytest.approx(mean_absolute_error(out.truth, out.filled[i]), rel=1e-12)
        # NRMSE = RMSE / SD of the column's observed values (Troyanskaya et al. 2001
        # normalise RMSE by the data's spread; exact form ours, common practice).
        assert got["nrmse"][i] == pytest.approx(rmse / 2.5, rel=1e-12)
    assert np.isnan(got["error_rate"]).all()


def test_category_error_rate_matches_scikit_learn_accuracy() -> None:
    # Reference: error rate = 1 - scikit-learn accuracy_score.
    truth = np.array(["a", "b", "b", "c", "a", "a"], dtype=object)
    filled = np.array([["a", "b", "c", "c", "a", "b"], ["a", "a", "a", "a", "a", "a"]], dtype=object)
    out = ColumnOutcome("cls", "category", truth, filled, np.full(6, "a", dtype=object), spread=np.nan)
    got = cell_errors(out, out.filled, np.ones(6, dtype=bool))
    for i in range(2):
        assert got["error_rate"][i] == pytest.approx(1 - accuracy_score(list(truth), list(filled[i])))
    assert np.isnan(got["nrmse"]).all()


def test_cells_without_donor_are_counted_not_scored() -> None:
    out = _numeric_outcome(m=5)
    filled = out.filled.copy()
    filled[:, 0] = np.nan  # no donor reached the first hidden cell
    out = ColumnOutcome("x", "number", out.truth, filled, out.baseline, out.spread)
    scores, base = score_repeat([out], [1, 2, 3], repeat=0)
    assert scores["n_hidden"].tolist() == [4, 4, 4]
    assert scores["n_unfilled"].tolist() == [1, 1, 1]
    expected = root_mean_squared_error(out.truth[1:], filled[0, 1:])
    assert scores.loc[0, "rmse"] == pytest.approx(expected)
    # The baseline is scored on the same four cells.
    assert base.loc[0, "rmse"] == pytest.approx(root_mean_squared_error(out.truth[1:], out.baseline[1:]))


def test_standard_error_matches_scipy_sem() -> None:
    # Reference: scipy.stats.sem (ddof=1).
    values = np.array([0.41, 0.47, 0.44, 0.52, np.nan])
    assert standard_error(values) == pytest.approx(stats.sem(values[:4]))
    assert np.isnan(standard_error(np.array([0.4])))


def _long_table() -> tuple[pd.DataFrame, dict[str, str]]:
    """Two number columns and one category column, 3 ks, 3 repeats, made-up errors."""
    rows = []
    for repeat in range(3):
        for k in (1, 2, 3):
            rows.append((k, "a", repeat, np.nan, np.nan, 0.3 + 0.1 * k + 0.01 * repeat, np.nan))
            rows.append((k, "b", repeat, np.nan, np.nan, 0.9 - 0.1 * k - 0.02 * repeat, np.nan))
            rows.append((k, "cls", repeat, np.nan, np.nan, np.nan, 0.2 + 0.05 * repeat))
    frame = pd.DataFrame(rows, columns=["k", "column", "repeat", "rmse", "mae", "nrmse", "error_rate"])
    frame["n_hidden"] = 10
    frame["n_unfilled"] = 0
    return frame, {"a": "number", "b": "number", "cls": "category"}


def test_overall_is_mean_over_number_columns_with_se_over_repeats() -> None:
    scores, kinds = _long_table()
    overall = overall_by_k(scores, kinds)
    # Per repeat r the mean of a and b is 0.6 - 0.005 r for every k.
    per_repeat = np.array([0.6, 0.595, 0.59])
    np.testing.assert_allclose(overall["score"], per_repeat.mean())
    np.testing.assert_allclose(overall["se"], stats.sem(per_repeat))  # scipy reference
    np.testing.assert_allclose(overall["category_error"], 0.25)
    np.testing.assert_allclose(overall["category_se"], stats.sem([0.2, 0.25, 0.3]))


def test_summary_is_k_by_column_mean_and_se() -> None:
    scores, kinds = _long_table()
    summary = summarise(scores, kinds)
    assert list(summary.index) == [1, 2, 3]
    assert list(summary.columns.get_level_values("column").unique()) == ["a", "b", "cls"]
    assert summary[("a", "mean")].loc[2] == pytest.approx(0.51)
    assert summary[("b", "se")].loc[1] == pytest.approx(stats.sem([0.8, 0.78, 0.76]))
    assert summary[("cls", "mean")].loc[3] == pytest.approx(0.25)


def test_built_report_picks_k_and_exports_every_k() -> None:
    scores, kinds = _long_table()
    base = scores[scores["k"] == 1].drop(columns="k").assign(nrmse=1.0, error_rate=0.6)
    report = build_report(scores, base, kinds, (1, 2, 3), {"seed": 0})
    assert report.best_k_by_column == {"a": 1, "b": 3, "cls": 1}
    assert report.baseline.loc["overall", "score"] == pytest.approx(1.0)
    assert report.baseline.loc["cls", "score"] == pytest.approx(0.6)
    table = report.to_frame()
    assert list(table.index) == [1, 2, 3]
    assert {"score", "se", "choice", "a NRMSE", "a NRMSE SE", "cls error rate"} <= set(table.columns)
