"""EM estimates and Little's statistic checked against independent computations."""

from __future__ import annotations

import threading

import numpy as np
import pytest

from imputer_app.errors import Cancelled
from imputer_app.validation._em import em_estimate, group_patterns, little_statistic


def _normal(n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    cov = np.array([[1.0, 0.6, 0.2], [0.6, 2.0, -0.4], [0.2, -0.4, 1.5]])
    return rng.multivariate_normal([1.0, -2.0, 5.0], cov, size=n)


def test_em_without_gaps_is_the_sample_mean_and_ml_covariance() -> None:
    x = _normal(40, 1)
    est = em_estimate(x)
    # Maximum-likelihood covariance divides by n (numpy: ddof=0).
    np.testing.assert_allclose(est.mean, x.mean(axis=0), rtol=1e-12)
    np.testing.assert_allclose(est.cov, np.cov(x, rowvar=False, ddof=0), rtol=1e-10, atol=1e-12)
    assert est.converged and not est.singular


def _anderson(y1: np.ndarray, y2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Closed-form ML estimates for a monotone bivariate sample (Anderson 1957, JASA 52:200-203;
    quoted from memory): y1 seen in all n rows, y2 only in the rows where it is not NaN."""
    seen = ~np.isnan(y2)
    a, b = y1[seen], y2[seen]
    s11 = np.mean((a - a.mean()) ** 2)
    s12 = np.mean((a - a.mean()) * (b - b.mean()))
    s22 = np.mean((b - b.mean()) ** 2)
    beta = s12 / s11
    mu1 = y1.mean()
    sigma11 = np.mean((y1 - mu1) ** 2)
    mu2 = b.mean() + beta * (mu1 - a.mean())
    sigma12 = beta * sigma11
    sigma22 = s22 - beta * s12 + beta**2 * sigma11
    return np.array([mu1, mu2]), np.array([[sigma11, sigma12], [sigma12, sigma22]])


def _monotone(seed: int) -> np.ndarray:
    x = _normal(50, seed)[:, :2]
    x[np.random.default_rng(seed + 100).random(50) < 0.3, 1] = np.nan
    return x


@pytest.mark.parametrize("seed", [0, 3, 7])
def test_em_matches_the_closed_form_for_a_monotone_pattern(seed: int) -> None:
    x = _monotone(seed)
    mean, cov = _anderson(x[:, 0], x[:, 1])
    est = em_estimate(x, tol=1e-12, max_iter=5000)
    assert est.converged
    np.testing.assert_allclose(est.mean, mean, rtol=1e-7)
    np.testing.assert_allclose(est.cov, cov, rtol=1e-7)


@pytest.mark.parametrize("seed", [0, 3])
def test_little_d2_matches_a_hand_computation_for_two_patterns(seed: int) -> None:
    x = _monotone(seed)
    mean, cov = _anderson(x[:, 0], x[:, 1])
    seen = ~np.isnan(x[:, 1])
    # Little 1988, eq. 5: complete rows use both columns, the others column 1 only.
    diff = x[seen].mean(axis=0) - mean
    by_hand = seen.sum() * diff @ np.linalg.inv(cov) @ diff
    by_hand += (~seen).sum() * (x[~seen, 0].mean() - mean[0]) ** 2 / cov[0, 0]
    stat = little_statistic(x, mean, cov)
    assert stat.statistic == pytest.approx(by_hand, rel=1e-10)
    assert stat.df == 2 + 1 - 2
    assert stat.n_patterns == 2


def test_little_d2_is_zero_with_one_pattern_at_the_sample_estimates() -> None:
    # One pattern (nothing missing): ybar equals the mean, so d² = 0 and df = p - p = 0.
    x = _normal(30, 2)
    stat = little_statistic(x, x.mean(axis=0), np.cov(x, rowvar=False, ddof=0))
    assert stat.statistic == pytest.approx(0.0, abs=1e-20)
    assert (stat.df, stat.n_patterns) == (0, 1)


def test_group_patterns_lists_each_row_once() -> None:
    x = np.array([[1.0, np.nan], [2.0, 3.0], [np.nan, 1.0], [4.0, np.nan], [5.0, 6.0]])
    groups = group_patterns(x)
    found = {tuple(m): sorted(r.tolist()) for m, r in zip(groups.missing, groups.rows, strict=True)}
    assert found == {(False, False): [1, 4], (False, True): [0, 3], (True, False): [2]}


def test_a_duplicated_column_is_flagged_singular_and_still_gives_numbers() -> None:
    x = _normal(40, 4)
    x = np.column_stack([x, 2 * x[:, 0]])
    x[np.random.default_rng(0).random(x.shape) < 0.1] = np.nan
    est = em_estimate(x)
    stat = little_statistic(x[~np.all(np.isnan(x), axis=1)], est.mean, est.cov)
    assert est.singular
    assert np.isfinite(stat.statistic) and np.all(np.isfinite(est.cov))


def test_the_iteration_cap_is_reported() -> None:
    x = _monotone(1)
    est = em_estimate(x, max_iter=1)
    assert (est.iterations, est.converged) == (1, False)


def test_em_reports_progress_and_stops_when_cancelled() -> None:
    seen: list[tuple[int, int]] = []
    em_estimate(_monotone(2), progress=lambda done, total: seen.append((done, total)))
    assert seen and seen[0] == (1, seen[0][1]) and all(t == seen[0][1] for _d, t in seen)
    flag = threading.Event()
    flag.set()
    with pytest.raises(Cancelled):
        em_estimate(_monotone(2), cancel=flag)
