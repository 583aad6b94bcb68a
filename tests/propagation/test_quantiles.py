"""Normal and Student t quantiles without scipy (budget.propagation.quantiles), checked against
scipy.stats and scipy.special over a wide grid of p and ν.

The reference values are computed so that they keep the digits of p: for p >= ½ from the upper
tail, ``isf((1 − p)/2)`` (1 − p is exact there), for p < ½ from the inverse of the regularized
incomplete beta function, P(|T| <= t) = I_{t²/(ν+t²)}(½, ν/2) (Abramowitz and Stegun 26.7.1), or
√2·erfinv(p) for the normal. Tolerance 1e-11 relative: the engine's lgamma differences lose
about 1e-12 near ν = 2000, where the Cornish-Fisher series takes over.
"""

from __future__ import annotations

import math

import pytest
from scipy import special, stats

from budget.propagation import coverage_factor
from budget.propagation.quantiles import normal_quantile, t_quantile, t_two_sided

PS = [1e-12, 1e-9, 1e-6, 1e-3, 0.01, 0.1, 0.3, 0.4999, 0.5, 0.6827, 0.8, 0.9, 0.95, 0.9545, 0.99,
      0.9973, 0.999, 0.9999, 1 - 1e-6, 1 - 1e-9, 1 - 1e-12]
NUS = [0.1, 0.3, 0.5, 0.9, 1, 1.5, 2, 2.5, 3, 4, 5, 6, 7.5, 9, 10, 15, 20, 30, 50, 100, 200, 500,
       999, 1999, 2000, 2001, 5000, 1e4, 1e5, 1e6, 1e8, 1e12, math.inf]


def _reference(p: float, nu: float) -> float:
    if p >= 0.5:
        return float(stats.norm.isf(0.5 * (1 - p)) if math.isinf(nu) else stats.t.isf(0.5 * (1 - p), nu))
    if math.isinf(nu):
        return math.sqrt(2.0) * float(special.erfinv(p))
    y = float(special.betaincinv(0.5, nu / 2, p))  # t²/(ν + t²)
    if y < 0.5:
        return math.sqrt(nu * y / (1 - y))
    x = float(special.betaincinv(nu / 2, 0.5, 1 - p))  # ν/(ν + t²), for large t
    return math.sqrt(nu * (1 - x) / x)


@pytest.mark.parametrize("nu", NUS)
def test_t_quantile_matches_scipy_over_p(nu):
    for p in PS:
        assert t_quantile(p, nu) == pytest.approx(_reference(p, nu), rel=1e-11, abs=0), (p, nu)


@pytest.mark.parametrize("p", [0.6827, 0.90, 0.95, 0.9545, 0.99, 0.9973])
def test_coverage_factor_is_scipy_t_ppf(p):
    # JCGM 100 G.3.4: k = t_p(ν_eff), the (1 + p)/2 quantile; scipy.stats.t.ppf is the reference.
    for nu in (1, 2, 3, 4, 5, 8, 10, 14, 20, 50, 100, 1000, 123456, math.inf):
        ref = stats.norm.ppf(0.5 * (1 + p)) if math.isinf(nu) else stats.t.ppf(0.5 * (1 + p), nu)
        assert coverage_factor(p, nu) == pytest.approx(float(ref), rel=1e-11)


def test_normal_quantile_matches_scipy():
    for q in (1e-300, 1e-100, 1e-20, 1e-8, 1e-3, 0.025, 0.1, 0.5, 0.8, 0.975, 0.999, 1 - 1e-12):
        assert normal_quantile(q) == pytest.approx(float(stats.norm.ppf(q)), rel=1e-13, abs=1e-300)


@pytest.mark.parametrize("nu", [0.5, 1, 3, 7.5, 30, 1500])
def test_two_sided_probabilities_match_scipy(nu):
    # A&S 26.7.1 with scipy.special.betainc as the reference, each probability from the form
    # whose argument keeps its digits (stats.t.sf loses digits near t = 0 for ν = 1): the
    # smaller probability to 1e-11 relative, the other (1 minus it) to the same 5e-12 absolute.
    for t in (1e-8, 1e-3, 0.1, 0.5, 1.0, 1.96, 3.0, 10.0, 1e3, 1e8):
        central, tail = t_two_sided(t, nu)
        if t * t < nu:
            ref_central = float(special.betainc(0.5, nu / 2, t * t / (nu + t * t)))
            ref_tail = 1.0 - ref_central
        else:
            ref_tail = float(special.betainc(nu / 2, 0.5, nu / (nu + t * t)))
            ref_central = 1.0 - ref_tail
        small, ref_small, other, ref_other = (central, ref_central, tail, ref_tail) if central < tail \
            else (tail, ref_tail, central, ref_central)
        assert small == pytest.approx(ref_small, rel=1e-11), t
        assert other == pytest.approx(ref_other, rel=0, abs=5e-12), t


@pytest.mark.parametrize(("p", "nu"), [(0.0, 3), (1.0, 3), (-0.1, 3), (0.95, 0.0), (0.95, -1.0)])
def test_t_quantile_rejects_p_and_nu_outside_their_range(p, nu):
    with pytest.raises(ValueError):
        t_quantile(p, nu)
