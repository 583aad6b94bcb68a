"""Engine corrections of issue 10: no silent clamp of a negative second-order variance, Welch–Satterthwaite
with correlated inputs, coverage-interval ends rounded outward."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.propagation import InputQuantity, Normal, StudentT, interval_statement, linear, monte_carlo
from budget.propagation.rounding import outward_interval


def test_negative_second_order_variance_is_said_and_monte_carlo_gives_u():
    # y = sin x, x ~ N(0, 2²). Eq. (14): c² u² + (c·f''' ) u⁴ = 4 − 16 = −12 < 0 [derived].
    # Exact: var(sin x) = (1 − e^{−2σ²})/2 for x ~ N(0, σ²) [derived from E cos 2x = e^{−2σ²}],
    # so u = √((1 − e^{−8})/2) = 0.70699.
    lin = linear(lambda x: np.sin(x), {"x": Normal(0.0, 2.0)}, second_order=True)
    assert any("negative u_c²" in w and "Monte Carlo" in w for w in lin.warnings)
    assert lin.u == pytest.approx(2.0, rel=1e-6)  # the first-order u is kept, not 0
    mc = monte_carlo(lambda x: np.sin(x), {"x": Normal(0.0, 2.0)}, trials=200_000, rng=np.random.default_rng(1))
    assert mc.u == pytest.approx(math.sqrt((1 - math.exp(-8)) / 2), rel=0.01)
    assert math.sqrt((1 - math.exp(-8)) / 2) == pytest.approx(0.707, abs=5e-4)


def _two_t(r: float, nu: float = 4.0):
    inputs = {"a": InputQuantity(StudentT(0.0, 1.0, nu)), "b": InputQuantity(StudentT(0.0, 1.0, nu))}
    return linear(lambda a, b: a + b, inputs, correlation={("a", "b"): r} if r else None)


def test_welch_satterthwaite_fully_correlated_inputs_count_once():
    # y = a + b with r = 1: y = 2a, one input of ν = 4, so ν_eff = 4 (G.2b with one term) [derived];
    # the uncorrelated formula would give (2u²)²/(2u⁴/4) ... with u_c² = 4u²: 16u⁴/(2u⁴/4) = 32.
    res = _two_t(1.0)
    assert res.nu_eff == 4
    assert any("Willink 2007" in w for w in res.warnings)


def test_welch_satterthwaite_uncorrelated_unchanged():
    # JCGM 100 G.2b: two equal terms of ν = 4 each: ν_eff = (2u²)²/(2u⁴/4) = 8 [derived].
    res = _two_t(0.0)
    assert res.nu_eff == 8
    assert not any("Willink" in w for w in res.warnings)


def test_welch_satterthwaite_partly_correlated_uses_the_set():
    # r = 0.5: u_c² = 2 + 2·0.5 = 3; one term √3 with ν = 4: ν_eff = 9/(9/4) = 4 [derived].
    assert _two_t(0.5).nu_eff == 4


def test_coverage_interval_ends_rounded_outward():
    # Outward rounding (common practice): the low end down, the high end up, at the place of u.
    assert outward_interval((1.0839, 1.3821), 3) == ("1.083", "1.383")
    assert outward_interval((-0.0004, 0.0004), 3) == ("-0.001", "0.001")
    assert outward_interval((2.0, 3.0), 2) == ("2.00", "3.00")  # exact ends stay
    text = interval_statement("y", 1.23412, 0.0754, (1.0839, 1.3821), 0.95, "mg")
    assert text.endswith("[1.083, 1.383] mg")  # nearest would give [1.084, 1.382]
