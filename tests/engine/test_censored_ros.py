"""Below-limit entries estimated by robust ROS through impute() (the default plan).

Sources: Helsel & Cohn 1988, Water Resources Research 24(12):1997-2004; Helsel 2005,
*Nondetects and Data Analysis*; Helsel 2006, Chemosphere 65:2434-2439 (substitution
bias). These references are quoted from memory.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from imputer_app.engine import impute
from imputer_app.engine._ros import ROS_MIN_MEASURED
from imputer_app.plan import CHOICES, FillPlan
from imputer_app.words import CHOICE_WORDS, SUBSTITUTION_PHRASES
from tests.engine.helpers import fake_sheet

LIMITS = (0.8, 1.2)


def _lognormal_sheet(seed: int, n: int = 300):  # type: ignore[no-untyped-def]
    """Lognormal(0, 0.5) values censored at 0.8 or 1.2 (about half below), plus a similarity column."""
    rng = np.random.default_rng(seed)
    truth = rng.lognormal(mean=0.0, sigma=0.5, size=n)
    limits = np.where(rng.random(n) < 0.5, *LIMITS)
    below = truth < limits
    frame = pd.DataFrame({"conc": np.where(below, np.nan, truth), "x": rng.normal(size=n)})
    frame.loc[[0, 1], "x"] = np.nan  # a few real gaps for the kNN part of the fill
    entries = [(int(i), "conc", f"<{limits[i]:g}", "<", float(limits[i])) for i in np.flatnonzero(below)]
    return fake_sheet(frame, entries), truth, limits, below


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_ros_is_the_default_and_recovers_the_mean_where_half_limit_misses(seed: int) -> None:
    # Helsel 2006 (quoted from memory): substituting half the limit biases the mean when
    # many values are censored; ROS stays within 5 % of the true mean on this data.
    sheet, truth, limits, below = _lognormal_sheet(seed)
    assert 0.4 < below.mean() < 0.6
    ros = impute(sheet, FillPlan(k=3))
    half = impute(sheet, FillPlan(k=3, censored="half_limit"))
    assert FillPlan().censored == "ros"
    assert abs(ros.frame["conc"].mean() / truth.mean() - 1) < 0.05
    assert abs(half.frame["conc"].mean() / truth.mean() - 1) > 0.05
    # each entry gets a value below its own limit; measured values are unchanged
    values = ros.frame["conc"].to_numpy()
    assert np.all(values[below] <= limits[below]) and np.all(values[below] > 0)
    np.testing.assert_array_equal(values[~below], truth[~below])
    log = ros.log.set_index(["row", "column"])
    cells = log.loc[[(int(i), "conc") for i in np.flatnonzero(below)]]
    assert set(cells["method"]) == {"ros"}
    assert cells["note"].str.contains("robust regression on order statistics").all()
    assert cells["note"].str.contains("fitted to").all()
    assert ros.censored["conc"].to_numpy()[below].all() and not ros.filled["conc"].to_numpy()[below].any()


def test_ros_values_follow_the_fit_and_the_row_labels_not_the_row_order() -> None:
    sheet, _, limits, below = _lognormal_sheet(5, n=120)
    first = impute(sheet, FillPlan(k=3)).frame["conc"]
    # within one limit, a later row label gets the larger estimate (order-free tie rule)
    for limit in LIMITS:
        at = first[below & (limits == limit)]
        assert at.is_monotonic_increasing and at.nunique() == len(at)
    # every entry's value, whatever the row order (labels kept)
    order = np.random.default_rng(9).permutation(len(sheet.frame))
    shuffled = fake_sheet(
        sheet.frame.iloc[order],
        [tuple(r) for r in sheet.cell_notes[["row", "column", "text", "side", "limit"]].to_numpy()],
    )
    again = impute(shuffled, FillPlan(k=3)).frame["conc"]
    np.testing.assert_allclose(again.loc[first.index].to_numpy(), first.to_numpy(), rtol=0, atol=1e-12)


def _few_measured_sheet():  # type: ignore[no-untyped-def]
    frame = pd.DataFrame(
        {"x": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0], "conc": [0.9, 1.4, 2.0, 2.5, np.nan, np.nan]},
        index=[10, 11, 12, 13, 14, 15],
    )
    return fake_sheet(frame, [(14, "conc", "<0.5", "<", 0.5), (15, "conc", ">2000", ">", 2000.0)])


def test_too_few_measured_values_fall_back_to_half_the_limit_and_say_why() -> None:
    sheet = _few_measured_sheet()
    assert ROS_MIN_MEASURED > 4
    result = impute(sheet, FillPlan(k=2, fill_columns=("conc",)))
    log = result.log.set_index(["row", "column"])
    assert result.frame.loc[14, "conc"] == pytest.approx(0.25)
    assert log.loc[(14, "conc"), "method"] == "half_limit"
    note = log.loc[(14, "conc"), "note"]
    assert "instead of a ROS estimate" in note and f"at least {ROS_MIN_MEASURED}" in note and "has 4" in note
    # an above-range entry keeps its limit under ROS too
    assert result.frame.loc[15, "conc"] == 2000.0 and log.loc[(15, "conc"), "method"] == "limit"


@pytest.mark.parametrize("mode", ["limit", "half_limit", "limit_sqrt2"])
def test_an_explicit_substitution_is_kept_and_named(mode: str) -> None:
    sheet, _, _, below = _lognormal_sheet(0, n=60)
    result = impute(sheet, FillPlan(k=3, censored=mode))
    methods = result.log.set_index(["row", "column"]).loc[[(int(i), "conc") for i in np.flatnonzero(below)]]
    assert set(methods["method"]) == {mode}
    assert "ROS" not in " ".join(methods["note"])


def test_every_censored_choice_has_words() -> None:
    assert set(CHOICE_WORDS["censored"]) == set(CHOICES["censored"])
    assert CHOICES["censored"][0] == "ros"
    assert "regression on order statistics" in CHOICE_WORDS["censored"]["ros"].explanation
    assert "(ROS)" in SUBSTITUTION_PHRASES["ros"]


def test_an_entry_the_fit_places_above_its_limit_keeps_the_limit_and_says_so() -> None:
    # Measured 1..6 all lie above "<0.5": the fitted line puts the entry above 0.5, so it
    # is cut back to its limit; "<0" has no place on a log scale and takes half the limit.
    frame = pd.DataFrame({"x": np.arange(8.0), "c": [1, 2, 3, 4, 5, 6, np.nan, np.nan]})
    sheet = fake_sheet(frame, [(6, "c", "<0", "<", 0.0), (7, "c", "<0.5", "<", 0.5)])
    log = impute(sheet, FillPlan(k=2)).log.set_index(["row", "column"])
    assert log.loc[(7, "c"), "method"] == "ros" and log.loc[(7, "c"), "value"] == 0.5
    assert "so the limit was used" in log.loc[(7, "c"), "note"]
    assert log.loc[(6, "c"), "method"] == "half_limit" and log.loc[(6, "c"), "value"] == 0.0
    assert "its limit is not above zero" in log.loc[(6, "c"), "note"]
