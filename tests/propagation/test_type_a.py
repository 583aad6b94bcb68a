"""Type A evaluation of an ordered series (JCGM 100 4.2): mean, covariance, drift, autocorrelation.

References: numpy for the sample mean and covariance (JCGM 100 4.2.1, 4.2.2, C.3.6); the exact
variance of the mean of a first-order autoregressive series written as a matrix sum [derived];
scipy.stats.chi2 for the acceptance interval; simulated series for the tests' error rates, with
tolerances of three binomial standard errors (common practice) and fixed seeds.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget.errors import BudgetInputError
from budget.propagation.type_a import effective_n_ar1, type_a_series, variance_ratio_interval


def _ar1(rng: np.random.Generator, n: int, rho: float, dim: int = 2) -> np.ndarray:
    e = rng.normal(size=(n + 200, dim))
    x = np.zeros_like(e)
    for k in range(1, len(e)):
        x[k] = rho * x[k - 1] + e[k]
    return x[200:]


def test_mean_and_sample_covariance_are_numpys():
    rng = np.random.default_rng(1)
    x = rng.normal(size=(12, 2)) @ np.array([[1.0, 0.4], [0.0, 0.5]])
    s = type_a_series(x)
    np.testing.assert_allclose(s.mean, x.mean(axis=0), rtol=1e-14)
    np.testing.assert_allclose(s.scatter, np.cov(x, rowvar=False, ddof=1), rtol=1e-14)
    assert s.n == 12 and s.dof == 11 and s.n_eff == 12
    np.testing.assert_allclose(s.covariance_of_mean, np.cov(x, rowvar=False) / 12, rtol=1e-14)


@pytest.mark.parametrize("n, rho", [(5, 0.3), (30, 0.8), (100, 0.5), (10, 0.0)])
def test_effective_n_is_the_exact_ratio_for_an_ar1_series(n, rho):
    """[derived] With C_ij = ρ^|i−j| (unit variance): Var(x̄) = Σ_ij C_ij/n² and
    E[s²] = (n − n·Var(x̄))/(n − 1), so E[s²]/Var(x̄) is the n_eff with E[s²/n_eff] = Var(x̄)
    (Zhang 2006's unbiased form)."""
    i = np.arange(n)
    c = rho ** np.abs(i[:, None] - i[None, :])
    var_mean = c.sum() / n**2
    e_s2 = (n - n * var_mean) / (n - 1)
    assert effective_n_ar1(n, rho) == pytest.approx(e_s2 / var_mean, rel=1e-12)


def test_autocorrelated_frames_get_a_covering_uncertainty():
    """At a lag-1 correlation of 0.8 the plain s/√n is about 0.3 of the real u (JCGM 100 4.2.7 warns of
    this). With n_eff, the 95 % t interval of the mean covers the true mean in 95 % of series
    (tolerance 3 binomial standard errors over 1000 series)."""
    rng = np.random.default_rng(20261203)
    n, rho, runs = 60, 0.8, 1000
    cover = naive = 0
    for _ in range(runs):
        x = _ar1(rng, n, rho)
        s = type_a_series(x)
        u = math.sqrt(s.covariance_of_mean[0, 0])
        cover += abs(s.mean[0]) <= stats.t.ppf(0.975, s.dof) * u
        naive += abs(s.mean[0]) <= stats.t.ppf(0.975, n - 1) * s.sd[0] / math.sqrt(n)
    se = 3 * math.sqrt(0.95 * 0.05 / runs)
    assert abs(cover / runs - 0.95) <= se + 0.01
    assert naive / runs < 0.7  # without the correction the interval is far too short


def test_white_still_series_are_rarely_flagged():
    """Each test is at 5 % shared over the two axes: a white, still series is flagged as drifting or
    autocorrelated in at most about 5 % of cases each (3 binomial standard errors over 1000)."""
    rng = np.random.default_rng(7)
    runs = 1000
    drift = auto = 0
    for _ in range(runs):
        s = type_a_series(rng.normal(size=(20, 2)))
        drift += s.drifting
        auto += s.autocorrelated
    limit = 0.05 + 3 * math.sqrt(0.05 * 0.95 / runs)
    assert drift / runs <= limit and auto / runs <= limit


def test_a_drift_is_found_and_measured():
    """A trend of 0.1 px per frame over 10 frames with 0.02 px noise: slope found, total drift 0.9 px."""
    rng = np.random.default_rng(3)
    k = np.arange(10)
    x = np.column_stack([5.0 + 0.1 * k + rng.normal(scale=0.02, size=10), 3.0 + rng.normal(scale=0.02, size=10)])
    s = type_a_series(x)
    assert s.drifting and s.slope_p[0] < 1e-6
    # standard error of the total drift 9·b: 9·σ/√Σ(k − k̄)² = 9 × 0.02/√82.5 = 0.0198; four of them
    se = 9 * 0.02 / np.sqrt(np.sum((k - k.mean()) ** 2))
    assert s.drift_total[0] == pytest.approx(0.9, abs=4 * se)


def test_too_few_or_bad_observations_are_refused():
    with pytest.raises(BudgetInputError, match="at least 4 observations"):
        type_a_series(np.zeros((3, 2)))
    with pytest.raises(BudgetInputError, match="finite"):
        type_a_series(np.array([[0.0, 1.0], [np.nan, 1.0], [0.0, 1.0], [0.0, 1.0]]))


def test_variance_ratio_interval_is_chi2_over_nu():
    """νs²/σ² ~ χ²_ν (scipy.stats.chi2)."""
    lo, hi = variance_ratio_interval(10, 0.95)
    assert lo == pytest.approx(stats.chi2.ppf(0.025, 10) / 10, rel=1e-12)
    assert hi == pytest.approx(stats.chi2.ppf(0.975, 10) / 10, rel=1e-12)
