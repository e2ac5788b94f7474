"""Robust ROS for below-limit entries (Helsel & Cohn 1988; Helsel 2005; quoted from memory)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from imputer_app.engine._ros import ROS_MIN_MEASURED, plotting_positions, ros_estimates, ros_usable


def _two_limit_example() -> tuple[np.ndarray, np.ndarray]:
    # Measured 0.3, 0.7, 1.2, 2.5, 3.0, 5.0; two entries "<0.5" and one "<1.0".
    values = np.array([0.3, 0.5, 0.7, 1.0, 1.2, 0.5, 2.5, 3.0, 5.0])
    censored = np.array([False, True, False, True, False, True, False, False, False])
    return values, censored


def test_plotting_positions_match_a_hand_worked_two_limit_example():
    # Worked by hand with the Helsel & Cohn (1988) formulas (quoted from memory):
    # limits 0, 0.5, 1.0 (0 added because 0.3 lies below the lowest limit);
    # A = (1, 1, 4), B = (0, 1 + 2, 2 + 3); pe = (1, 21/36, 4/9, 0).
    values, censored = _two_limit_example()
    expected = np.array([
        15 / 72,             # 0.3: (1 - 1) + (1 - 21/36) * 1/2
        5 / 36,              # first "<0.5": (1 - 21/36) * 1/3
        35 / 72,             # 0.7: (1 - 21/36) + (21/36 - 4/9) * 1/2
        5 / 18,              # "<1.0": (1 - 4/9) * 1/2
        29 / 45,             # 1.2: (1 - 4/9) + 4/9 * 1/5
        10 / 36,             # second "<0.5": (1 - 21/36) * 2/3
        33 / 45, 37 / 45, 41 / 45,
    ])  # fmt: skip
    np.testing.assert_allclose(plotting_positions(values, censored), expected, rtol=0, atol=1e-12)


def test_estimates_follow_the_least_squares_line_through_the_measured_points():
    values, censored = _two_limit_example()
    limits = np.where(censored, values, np.nan)
    measured = np.where(censored, np.nan, values)
    fit = ros_estimates(measured, censored, limits)
    pos = plotting_positions(values, censored)
    z, y = norm.ppf(pos[~censored]), np.log(values[~censored])
    slope = np.sum((z - z.mean()) * (y - y.mean())) / np.sum((z - z.mean()) ** 2)  # closed-form OLS
    intercept = y.mean() - slope * z.mean()
    expected = np.minimum(np.exp(intercept + slope * norm.ppf(pos[censored])), values[censored])
    assert fit.slope == pytest.approx(slope, abs=1e-12)
    assert fit.intercept == pytest.approx(intercept, abs=1e-12)
    np.testing.assert_allclose(fit.estimates[censored], expected, rtol=1e-12)
    assert np.all(np.isnan(fit.estimates[~censored]))
    assert np.all(fit.estimates[censored] <= values[censored])


def test_measured_values_are_never_changed_and_gaps_stay_gaps():
    values, censored = _two_limit_example()
    measured = np.where(censored, np.nan, values)
    measured[4] = np.nan  # a gap, neither measured nor censored
    fit = ros_estimates(measured, censored, np.where(censored, values, np.nan))
    assert np.isnan(fit.estimates[4])
    assert fit.n_measured == 5


def test_estimates_within_one_limit_follow_the_order_key_not_the_row_order():
    values, censored = _two_limit_example()
    limits = np.where(censored, values, np.nan)
    measured = np.where(censored, np.nan, values)
    order = np.zeros(values.size)
    order[1], order[5] = 9.0, 1.0  # row 1 should get the larger "<0.5" estimate
    fit = ros_estimates(measured, censored, limits, order=order)
    assert fit.estimates[1] > fit.estimates[5]
    perm = np.random.default_rng(3).permutation(values.size)
    shuffled = ros_estimates(measured[perm], censored[perm], limits[perm], order=order[perm])
    np.testing.assert_allclose(shuffled.estimates[np.argsort(perm)], fit.estimates, rtol=0, atol=1e-12)


@pytest.mark.parametrize("seed", [0, 1, 2, 3, 4])
def test_ros_recovers_the_mean_of_censored_lognormal_data_where_half_limit_misses(seed):
    # Simulated lognormal data censored at two known limits (Helsel 2006: substitution
    # biases summary statistics when many values are censored; quoted from memory).
    # About half the values lie below limits 0.8 and 1.2 of a lognormal(0, 0.5): the
    # censored values crowd just under their limits, so half the limit is far too low.
    rng = np.random.default_rng(seed)
    truth = rng.lognormal(mean=0.0, sigma=0.5, size=400)
    limits = np.where(rng.random(400) < 0.5, 0.8, 1.2)
    censored = truth < limits
    assert 0.4 < censored.mean() < 0.6
    measured = np.where(censored, np.nan, truth)
    fit = ros_estimates(measured, censored, np.where(censored, limits, np.nan))
    ros_mean = np.where(censored, fit.estimates, truth).mean()
    half_mean = np.where(censored, limits / 2, truth).mean()
    assert abs(ros_mean / truth.mean() - 1) < 0.05
    assert abs(half_mean / truth.mean() - 1) > 0.05


def test_too_few_measured_values_is_refused():
    values = np.array([np.nan, 1.0, 2.0, 3.0, np.nan])
    censored = np.array([True, False, False, False, True])
    assert not ros_usable(values, censored)
    with pytest.raises(ValueError, match=str(ROS_MIN_MEASURED)):
        ros_estimates(values, censored, np.array([0.5, np.nan, np.nan, np.nan, 0.5]))
