"""The gap check: Little's test on simulated mechanisms, the differences and pattern tables."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from scipy.stats import kstest

from imputer_app.errors import Cancelled
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from imputer_app.validation import GapCheck, gap_check
from imputer_app.validation._gaps import mcar_test

COV = [[1.0, 0.5, 0.2], [0.5, 1.0, 0.3], [0.2, 0.3, 1.0]]


def _random_gaps(seed: int, n: int = 80, rate: float = 0.1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    x = rng.multivariate_normal([0.0, 1.0, 2.0], COV, size=n)
    x[rng.random(x.shape) < rate] = np.nan
    return x


@pytest.mark.slow
def test_p_values_are_uniform_when_gaps_are_completely_at_random() -> None:
    # Under MCAR Little's d² is approximately chi-square (Little 1988), so p-values
    # spread uniformly: about 5 % fall below 0.05.
    p = np.array([mcar_test(_random_gaps(seed), ("a", "b", "c")).p_value for seed in range(200)])
    assert 0.02 <= np.mean(p < 0.05) <= 0.09
    assert kstest(p, "uniform").pvalue > 0.01


def _gaps_where_high(seed: int, n: int = 150) -> pd.DataFrame:
    """Nitrate has gaps mostly where Conductivity is high (missing at random, not MCAR)."""
    rng = np.random.default_rng(seed)
    x = rng.multivariate_normal([0.0, 1.0, 2.0], COV, size=n)
    frame = pd.DataFrame(x, columns=["Conductivity", "Nitrate", "pH"])
    high = frame["Conductivity"] > np.quantile(frame["Conductivity"], 0.7)
    frame.loc[high & (rng.random(n) < 0.6), "Nitrate"] = np.nan
    frame.loc[rng.random(n) < 0.03, "pH"] = np.nan
    return frame


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_gaps_where_another_column_is_high_give_a_small_p_value(seed: int) -> None:
    check = gap_check(_gaps_where_high(seed))
    assert isinstance(check, GapCheck)
    assert check.mcar.p_value < 0.01
    assert check.mcar.converged and not check.mcar.singular
    assert "not completely at random" in check.mcar.meaning
    assert check.mcar.columns == ("Conductivity", "Nitrate", "pH")


def test_differences_name_the_column_the_gaps_depend_on() -> None:
    frame = _gaps_where_high(0)
    check = gap_check(frame)
    top = check.differences.iloc[0]
    assert (top["gap_column"], top["other_column"], top["kind"]) == ("Nitrate", "Conductivity", "number")
    gap = frame["Nitrate"].isna()
    a, b = frame.loc[gap, "Conductivity"], frame.loc[~gap, "Conductivity"]
    pooled = np.sqrt(((a.size - 1) * a.var() + (b.size - 1) * b.var()) / (a.size + b.size - 2))
    assert top["difference"] == pytest.approx((a.mean() - b.mean()) / pooled, rel=1e-12)
    assert top["difference"] > 0.8
    assert (top["n_gap"], top["n_present"]) == (gap.sum(), (~gap).sum())
    assert check.headline.startswith("Gaps in Nitrate come with high Conductivity (")
    assert "Conductivity is a similarity column" in check.headline
    diffs = check.differences["difference"].abs().to_numpy()
    assert np.all(np.diff(diffs) <= 0)


def test_headline_asks_for_the_column_when_it_is_not_used_for_similarity() -> None:
    frame = _gaps_where_high(1)
    plan = FillPlan(
        similarity_columns=("Nitrate", "pH"),
        fill_columns=("Nitrate", "pH"),
        carried_columns=("Conductivity",),
    )
    check = gap_check(frame, plan)
    assert check.columns == ("Nitrate", "pH")
    assert "Conductivity" not in check.differences["other_column"].tolist()
    plan = FillPlan(weights={"Conductivity": 0.0})
    check = gap_check(frame, plan)
    assert "Conductivity" not in check.similarity_columns
    assert "if Conductivity is made a similarity column" in check.headline


def test_category_differences_give_the_largest_class_share_difference() -> None:
    station = np.array(["S1", "S2", "S3", "S1", "S2", "S3", "S1", "S2"])
    value = np.array([1.0, np.nan, 3.0, 4.0, np.nan, 6.0, np.nan, 8.0])
    other = np.arange(8, dtype=float)
    frame = pd.DataFrame({"Station": station, "Value": value, "Other": other})
    diffs = gap_check(frame).differences
    row = diffs[(diffs["gap_column"] == "Value") & (diffs["other_column"] == "Station")].iloc[0]
    # Gap rows 1, 4, 6: S2 share 2/3; other rows 0, 2, 3, 5, 7: S2 share 1/5.
    assert row["kind"] == "category"
    assert row["detail"] == "S2"
    assert row["difference"] == pytest.approx(2 / 3 - 1 / 5)
    assert (row["n_gap"], row["n_present"]) == (3, 5)


def test_pattern_table_counts_combinations_by_hand() -> None:
    frame = pd.DataFrame(
        {
            "a": [1.0, np.nan, 3.0, np.nan, 5.0, 6.0],
            "b": [1.0, 2.0, np.nan, np.nan, 5.0, 7.0],
            "c": [2.0, 1.0, 4.0, 3.0, 6.0, 5.0],
        }
    )
    patterns = gap_check(frame).patterns
    assert list(patterns.columns) == ["a", "b", "c", "count", "share"]
    rows = [(*(bool(v) for v in r[:3]), int(r[3])) for r in patterns.itertuples(index=False)]
    # Complete rows 0, 4, 5; a only: 1; b only: 2; both: 3 (ties: fewest gaps first).
    assert rows == [
        (False, False, False, 3),
        (True, False, False, 1),
        (False, True, False, 1),
        (True, True, False, 1),
    ] or rows == [
        (False, False, False, 3),
        (False, True, False, 1),
        (True, False, False, 1),
        (True, True, False, 1),
    ]
    assert patterns["share"].tolist() == pytest.approx([0.5, 1 / 6, 1 / 6, 1 / 6])


def test_gap_check_never_changes_its_input() -> None:
    frame = _gaps_where_high(2)
    frame["Station"] = np.where(np.arange(len(frame)) % 2 == 0, "S1", "S2")
    before = frame.copy()
    states = pd.DataFrame(
        np.where(frame.isna(), "missing", "observed"), index=frame.index, columns=frame.columns
    )
    sheet = SimpleNamespace(frame=frame, states=states, cell_notes=pd.DataFrame())
    states_before = states.copy()
    gap_check(sheet)
    gap_check(frame, FillPlan(k=3))
    pd.testing.assert_frame_equal(states, states_before)
    pd.testing.assert_frame_equal(frame, before)


def test_no_gaps_means_nothing_to_test() -> None:
    frame = pd.DataFrame(np.random.default_rng(0).normal(size=(20, 3)), columns=list("abc"))
    check = gap_check(frame)
    assert np.isnan(check.mcar.p_value) and check.mcar.df == 0
    assert check.mcar.meaning.startswith("Nothing to test")
    assert check.differences.empty
    assert check.patterns["count"].tolist() == [20]


def test_a_large_p_value_says_what_it_does_not_prove() -> None:
    check = gap_check(pd.DataFrame(_random_gaps(5, n=100), columns=list("abc")))
    assert check.mcar.p_value > 0.05
    assert "does not prove" in check.mcar.meaning and "only compares means" in check.mcar.meaning
    assert check.mcar.n_rows_used == 100 - int(np.all(np.isnan(_random_gaps(5, n=100)), axis=1).sum())


def test_the_demo_sheet_shows_its_nitrate_pattern(samples_dir: Path) -> None:
    # sample_sheets/generate.py drops most nitrate results where conductivity is high.
    sheet = read_sheet(samples_dir / "river_survey.xlsx")
    check = gap_check(sheet)
    assert check.mcar.p_value < 0.01
    top = check.differences.iloc[0]
    assert (top["gap_column"], top["other_column"]) == ("Nitrate", "Conductivity")
    assert top["difference"] > 1.0
    assert check.headline.startswith("Gaps in Nitrate come with high Conductivity")


def test_gap_check_reports_progress_and_stops_when_cancelled() -> None:
    seen: list[tuple[int, int]] = []
    gap_check(_gaps_where_high(0), progress=lambda done, total: seen.append((done, total)))
    assert len(seen) >= 2 and seen[-1][0] == seen[-1][1]
    assert [d for d, _t in seen] == sorted(d for d, _t in seen)
    with pytest.raises(Cancelled):
        gap_check(_gaps_where_high(0), cancel=lambda: True)
