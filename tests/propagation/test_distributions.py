"""Input distributions (JCGM 101:2008 6.4): moments, samplers, degrees of freedom, bad input.

Sampled moments are checked against closed forms with a tolerance of five standard errors of
the sample variance, se(s²) ≈ √((m₄ − s⁴)/n) with m₄ the sample fourth central moment (a
large-sample result for the variance of s², common practice), so a correct sampler fails
with probability well below 10⁻⁵; seeds are fixed so the outcome is reproducible.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget.errors import BudgetInputError
from budget.propagation import (
    Arcsine,
    CurvilinearTrapezoid,
    Normal,
    Rectangular,
    StudentT,
    Trapezoidal,
    Triangular,
)

N = 200_000


def _rng(seed: int = 20240611) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed))


def _check_sample_variance(x: np.ndarray, var: float, mean: float) -> None:
    """Sample mean within 5 se (s/√n) and sample variance within 5 se(s²) of the closed forms."""
    n = x.size
    s2 = x.var(ddof=1)
    m4 = np.mean((x - x.mean()) ** 4)
    se_var = math.sqrt((m4 - s2**2) / n)
    assert abs(s2 - var) <= 5.0 * se_var, (s2, var, se_var)
    assert abs(x.mean() - mean) <= 5.0 * math.sqrt(s2 / n)


# ---------------------------------------------------------------- closed-form standard deviations

def test_rectangular_sd_is_half_width_over_sqrt3():
    # JCGM 100 4.3.7, JCGM 101 6.4.2.3: u = a/√3 for half-width a [derived, exact arithmetic].
    d = Rectangular(low=1.0, high=5.0)
    assert d.mean == 3.0
    assert d.sd == pytest.approx(2.0 / math.sqrt(3.0), rel=1e-15)
    assert d.u == d.sd
    value, divisor = d.quoted
    assert (value, divisor) == (2.0, math.sqrt(3.0))


def test_triangular_sd_is_half_width_over_sqrt6():
    # JCGM 100 4.3.9, JCGM 101 6.4.5.3: u = a/√6 [derived, exact arithmetic].
    d = Triangular(low=-3.0, high=3.0)
    assert d.sd == pytest.approx(3.0 / math.sqrt(6.0), rel=1e-15)
    value, divisor = d.quoted
    assert value / divisor == pytest.approx(d.sd, rel=1e-15)


def test_arcsine_sd_is_half_width_over_sqrt2():
    # JCGM 101 6.4.6.3: u = a/√2 [derived, exact arithmetic].
    d = Arcsine(low=-0.054, high=0.054)
    assert d.sd == pytest.approx(0.054 / math.sqrt(2.0), rel=1e-15)


@pytest.mark.parametrize("beta", [0.0, 0.3, 0.7, 1.0])
def test_trapezoid_variance(beta):
    # JCGM 101 6.4.4.3: V = (b − a)²(1 + β²)/24 [formula of the clause, exact arithmetic].
    a, b = 2.0, 7.0
    d = Trapezoidal(low=a, high=b, beta=beta)
    assert d.sd**2 == pytest.approx((b - a) ** 2 * (1 + beta**2) / 24.0, rel=1e-14)
    value, divisor = d.quoted
    assert value / divisor == pytest.approx(d.sd, rel=1e-14)


def test_trapezoid_limits_are_triangle_and_rectangle():
    # β = 0 is the triangle and β = 1 the rectangle (JCGM 101 6.4.4.1) [derived].
    assert Trapezoidal(low=0.0, high=2.0, beta=0.0).sd == pytest.approx(Triangular(low=0.0, high=2.0).sd)
    assert Trapezoidal(low=0.0, high=2.0, beta=1.0).sd == pytest.approx(Rectangular(low=0.0, high=2.0).sd)


def test_curvilinear_trapezoid_variance():
    # JCGM 101 6.4.3.3: V = (b − a)²/12 + d²/9 = w²/3 + d²/9, w the half-width [derived].
    d = CurvilinearTrapezoid(low=-1.0, high=3.0, d=0.5)
    assert d.sd**2 == pytest.approx(2.0**2 / 3.0 + 0.5**2 / 9.0, rel=1e-15)
    value, divisor = d.quoted
    assert value / divisor == pytest.approx(d.sd, rel=1e-15)


def test_student_t_sd_and_u():
    # JCGM 101 6.4.9.3: V = s²·ν/(ν − 2) for ν > 2; the linear method uses u = s with ν
    # degrees of freedom (JCGM 100 4.2.3, G.3) [formula of the clause].
    d = StudentT(mean=10.0, scale=0.2, dof=9)
    assert d.sd == pytest.approx(0.2 * math.sqrt(9.0 / 7.0), rel=1e-15)
    assert d.u == 0.2
    assert d.dof == 9
    assert d.is_type_a
    # Variance infinite for ν ≤ 2 (JCGM 101 6.4.9.3).
    assert math.isinf(StudentT(mean=0.0, scale=1.0, dof=2).sd)


# ---------------------------------------------------------------- against scipy.stats

SCIPY_CASES = [
    # (ours, scipy frozen equivalent)
    (Normal(mean=1.5, sd=0.3), stats.norm(loc=1.5, scale=0.3)),
    (Rectangular(low=-2.0, high=4.0), stats.uniform(loc=-2.0, scale=6.0)),
    (Triangular(low=-2.0, high=4.0), stats.triang(c=0.5, loc=-2.0, scale=6.0)),
    (Trapezoidal(low=-2.0, high=4.0, beta=0.4), stats.trapezoid(c=0.3, d=0.7, loc=-2.0, scale=6.0)),
    (Arcsine(low=-2.0, high=4.0), stats.arcsine(loc=-2.0, scale=6.0)),
    (StudentT(mean=1.0, scale=0.5, dof=10), stats.t(df=10, loc=1.0, scale=0.5)),
]
IDS = ["normal", "rectangular", "triangular", "trapezoidal", "arcsine", "t"]


@pytest.mark.parametrize(("ours", "ref"), SCIPY_CASES, ids=IDS)
def test_mean_and_variance_match_scipy(ours, ref):
    # scipy.stats (general-purpose reference): same mean and variance to rounding (rel 1e-12).
    assert ours.mean == pytest.approx(ref.mean(), rel=1e-12, abs=1e-12)
    assert ours.sd**2 == pytest.approx(ref.var(), rel=1e-12)


@pytest.mark.parametrize(("ours", "ref"), SCIPY_CASES, ids=IDS)
def test_sampler_matches_scipy_distribution(ours, ref):
    # Kolmogorov–Smirnov test of our sampler against the scipy CDF: with a fixed seed the
    # p-value must not be tiny (a wrong shape at n = 2·10⁵ gives p ≈ 0). Threshold 10⁻³.
    x = ours.sample(_rng(7), N)
    assert stats.kstest(x, ref.cdf).pvalue > 1e-3


# ---------------------------------------------------------------- samplers against closed forms

SAMPLE_CASES = [
    Normal(mean=-4.0, sd=2.5),
    Rectangular(low=10.0, high=10.5),
    Triangular(low=0.0, high=1.0),
    Trapezoidal(low=-1.0, high=1.0, beta=0.5),
    CurvilinearTrapezoid(low=-1.0, high=1.0, d=0.4),
    CurvilinearTrapezoid(low=0.0, high=2.0, d=1.0),  # d at its upper bound w
    Arcsine(low=-0.1, high=0.3),
]


@pytest.mark.parametrize("dist", SAMPLE_CASES, ids=lambda d: d.describe())
def test_sample_moments_match_closed_form(dist):
    x = dist.sample(_rng(11), N)
    assert x.shape == (N,)
    _check_sample_variance(x, dist.sd**2, dist.mean)


def test_student_t_sample_variance():
    # JCGM 101 6.4.9.3: V = s²ν/(ν − 2); ν = 10 so the fourth moment (needed for se) is finite.
    d = StudentT(mean=3.0, scale=0.1, dof=10)
    _check_sample_variance(d.sample(_rng(13), N), 0.01 * 10 / 8, 3.0)


@pytest.mark.parametrize(
    "dist",
    [Rectangular(low=1.0, high=2.0), Triangular(low=1.0, high=2.0), Arcsine(low=1.0, high=2.0),
     Trapezoidal(low=1.0, high=2.0, beta=0.2), CurvilinearTrapezoid(low=1.0, high=2.0, d=0.2)],
    ids=lambda d: d.kind,
)
def test_samples_stay_within_support(dist):
    # Support of each PDF (JCGM 101 6.4): [a, b], or [a − d, b + d] for the curvilinear trapezoid.
    x = dist.sample(_rng(3), 50_000)
    d = getattr(dist, "d", 0.0)
    assert x.min() >= dist.low - d and x.max() <= dist.high + d


def test_same_generator_state_same_samples():
    d = Trapezoidal(low=0.0, high=1.0, beta=0.3)
    np.testing.assert_array_equal(d.sample(_rng(5), 1000), d.sample(_rng(5), 1000))


# ---------------------------------------------------------------- degrees of freedom

def test_dof_from_relative_uncertainty_of_u():
    # JCGM 100 G.4.2, eq. (G.3): ν ≈ ½(Δu/u)⁻²; Δu/u = 0.25 gives ν = 8 (the example of G.4.2,
    # value from memory; the number is also derived exactly from eq. G.3).
    assert Normal(mean=0.0, sd=1.0, rel_u_of_u=0.25).dof == pytest.approx(8.0, rel=1e-14)
    assert Rectangular(low=0.0, high=1.0, rel_u_of_u=0.1).dof == pytest.approx(50.0, rel=1e-14)
    assert Triangular(low=0.0, high=1.0, rel_u_of_u=0.5).dof == pytest.approx(2.0, rel=1e-14)
    assert Arcsine(low=0.0, high=1.0, rel_u_of_u=0.2).dof == pytest.approx(12.5, rel=1e-14)
    assert CurvilinearTrapezoid(low=0.0, high=1.0, d=0.1, rel_u_of_u=1.0).dof == pytest.approx(0.5)


def test_dof_defaults_to_infinite():
    for d in (Normal(mean=0.0, sd=1.0), Rectangular(low=0.0, high=1.0), Arcsine(low=0.0, high=1.0),
              Trapezoidal(low=0.0, high=1.0, beta=0.5), CurvilinearTrapezoid(low=0.0, high=1.0, d=0.1)):
        assert math.isinf(d.dof)
        assert not d.is_type_a


def test_normal_explicit_dof():
    assert Normal(mean=0.0, sd=1.0, dof=4).dof == 4.0


# ---------------------------------------------------------------- bad input

BAD = [
    (lambda: Normal(mean=0.0, sd=0.0), "sd"),
    (lambda: Normal(mean=0.0, sd=-1.0), "sd"),
    (lambda: Normal(mean=0.0, sd=math.nan), "sd"),
    (lambda: Normal(mean=0.0, sd=math.inf), "sd"),
    (lambda: Normal(mean=math.nan, sd=1.0), "mean"),
    (lambda: Normal(mean=math.inf, sd=1.0), "mean"),
    (lambda: Normal(mean="one", sd=1.0), "mean"),
    (lambda: Normal(mean=0.0, sd=1.0, dof=0), "dof"),
    (lambda: Normal(mean=0.0, sd=1.0, dof=-3), "dof"),
    (lambda: Normal(mean=0.0, sd=1.0, dof=math.nan), "dof"),
    (lambda: Normal(mean=0.0, sd=1.0, dof="many"), "dof"),
    (lambda: Normal(mean=0.0, sd=1.0, rel_u_of_u=0.0), "rel_u_of_u"),
    (lambda: Normal(mean=0.0, sd=1.0, rel_u_of_u=math.inf), "rel_u_of_u"),
    (lambda: Normal(mean=0.0, sd=1.0, dof=5, rel_u_of_u=0.1), "rel_u_of_u"),
    (lambda: Rectangular(low=1.0, high=1.0), "high"),
    (lambda: Rectangular(low=2.0, high=1.0), "high"),
    (lambda: Rectangular(low=math.nan, high=1.0), "low"),
    (lambda: Rectangular(low=0.0, high=math.inf), "high"),
    (lambda: Rectangular(low=0.0, high=1.0, rel_u_of_u=-0.1), "rel_u_of_u"),
    (lambda: Triangular(low=3.0, high=-3.0), "high"),
    (lambda: Triangular(low=0.0, high=1.0, beta=0.5), "beta"),
    (lambda: Trapezoidal(low=0.0, high=1.0, beta=-0.1), "beta"),
    (lambda: Trapezoidal(low=0.0, high=1.0, beta=1.5), "beta"),
    (lambda: Trapezoidal(low=0.0, high=1.0, beta=math.nan), "beta"),
    (lambda: Trapezoidal(low=1.0, high=0.0, beta=0.5), "high"),
    (lambda: CurvilinearTrapezoid(low=0.0, high=1.0, d=0.0), "d"),
    (lambda: CurvilinearTrapezoid(low=0.0, high=1.0, d=-0.1), "d"),
    (lambda: CurvilinearTrapezoid(low=0.0, high=1.0, d=0.6), "d"),
    (lambda: CurvilinearTrapezoid(low=0.0, high=1.0, d=math.nan), "d"),
    (lambda: CurvilinearTrapezoid(low=1.0, high=1.0, d=0.1), "high"),
    (lambda: Arcsine(low=0.0, high=0.0), "high"),
    (lambda: Arcsine(low=-math.inf, high=0.0), "low"),
    (lambda: StudentT(mean=0.0, scale=0.0, dof=5), "scale"),
    (lambda: StudentT(mean=0.0, scale=1.0, dof=0), "dof"),
    (lambda: StudentT(mean=0.0, scale=1.0, dof=-2), "dof"),
    (lambda: StudentT(mean=0.0, scale=1.0, dof=math.nan), "dof"),
    (lambda: StudentT(mean=math.nan, scale=1.0, dof=5), "mean"),
]


@pytest.mark.parametrize(("make", "field"), BAD, ids=[f"{i}-{f}" for i, (_, f) in enumerate(BAD)])
def test_bad_input_raises_naming_the_field(make, field):
    with pytest.raises(BudgetInputError) as info:
        make()
    msg = str(info.value)
    assert isinstance(info.value, ValueError)
    assert f"'{field}' field" in msg
    assert "must be" in msg and "Got" in msg
    assert "\n" not in msg
