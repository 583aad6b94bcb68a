"""Joint input quantities: the multivariate t (JCGM 102 6.5.3), sampled jointly and counted once.

References outside the project: ``scipy.stats.multivariate_t`` (the same distribution drawn by
a general-purpose library), ``scipy.stats.f`` and ``scipy.stats.t`` for exact properties of the
multivariate t [derived: (x − μ)ᵀΣ⁻¹(x − μ)/N ~ F(N, ν), and aᵀx ~ t_ν(aᵀμ, aᵀΣa)].
Kolmogorov–Smirnov tests use a fixed seed and a 10⁻³ level, so a correct sampler passes
with probability 0.999 per test and the seed makes the outcome reproducible.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget.errors import BudgetInputError
from budget.propagation import InputQuantity, JointComponent, MultivariateT, Normal, linear, monte_carlo

MU = (1.0, -2.0, 0.5)
SIGMA = ((4.0, 1.2, -0.6), (1.2, 1.0, 0.3), (-0.6, 0.3, 0.5))
NU = 6.0
N = 200_000


def _rng(seed: int = 7) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed))


def test_draws_match_scipy_multivariate_t():
    """Two-sample KS of the Mahalanobis distances and of a projection against scipy's own draws."""
    mvt = MultivariateT(MU, SIGMA, NU)
    ours = mvt.sample(_rng(), N)
    ref = stats.multivariate_t(loc=MU, shape=SIGMA, df=NU).rvs(size=N, random_state=_rng(8))
    inv = np.linalg.inv(np.array(SIGMA))
    d_ours = np.einsum("ij,jk,ik->i", ours - MU, inv, ours - MU)
    d_ref = np.einsum("ij,jk,ik->i", ref - MU, inv, ref - MU)
    assert stats.ks_2samp(d_ours, d_ref).pvalue > 1e-3
    a = np.array([0.3, -1.0, 2.0])
    assert stats.ks_2samp(ours @ a, ref @ a).pvalue > 1e-3


def test_exact_distributions_of_the_draws():
    """[derived] (x − μ)ᵀΣ⁻¹(x − μ)/N ~ F(N, ν); aᵀx ~ t_ν(aᵀμ, aᵀΣa) (scipy.stats.f, .t)."""
    mvt = MultivariateT(MU, SIGMA, NU)
    x = mvt.sample(_rng(3), N)
    inv = np.linalg.inv(np.array(SIGMA))
    d = np.einsum("ij,jk,ik->i", x - MU, inv, x - MU) / 3
    assert stats.kstest(d, stats.f(3, NU).cdf).pvalue > 1e-3
    a = np.array([1.0, 2.0, -1.0])
    scale = math.sqrt(a @ np.array(SIGMA) @ a)
    assert stats.kstest(x @ a, stats.t(NU, loc=a @ np.array(MU), scale=scale).cdf).pvalue > 1e-3


def test_component_alone_is_the_univariate_t():
    """JCGM 101 6.4.9: a component alone is t_ν(μ_i, Σ_ii); u is its scale, sd √(ν/(ν−2)) more."""
    c = MultivariateT(MU, SIGMA, NU).components()[0]
    assert isinstance(c, JointComponent)
    assert c.mean == 1.0 and c.u == 2.0 and c.dof == NU
    assert c.sd == pytest.approx(2.0 * math.sqrt(NU / (NU - 2)), rel=1e-15)
    assert stats.kstest(c.sample(_rng(4), N), stats.t(NU, loc=1.0, scale=2.0).cdf).pvalue > 1e-3
    assert InputQuantity(c).evaluation == "A"


def test_joint_quantity_counted_once_in_welch_satterthwaite():
    """[derived] y = x1 + x2 from n = 5 observations of the vector (x1, x2): ȳ's Type A variance
    is s_y²/n, with exactly n − 1 = 4 degrees of freedom whatever the correlation of x1 and x2.
    Counting x1 and x2 as two independent inputs of 4 dof would give ν_eff = 8."""
    for r in (0.0, 0.5, -0.3):
        mvt = MultivariateT((0.0, 0.0), ((1.0, r), (r, 1.0)), 4.0)
        a, b = mvt.components()
        res = linear(lambda x1, x2: x1 + x2, {"x1": a, "x2": b})
        assert res.u == pytest.approx(math.sqrt(2 + 2 * r), rel=1e-9)
        assert res.nu_eff == 4
        assert res.groups[0].dof == 4 and res.groups[1].dof == 4  # each component alone keeps ν = 4
    # With an independent Type B input of infinite ν: ν_eff = u_c⁴/(u_g⁴/ν) (JCGM 100 G.2b), u_g² = 2.
    mvt = MultivariateT((0.0, 0.0), ((1.0, 0.0), (0.0, 1.0)), 4.0)
    a, b = mvt.components()
    res = linear(lambda x1, x2, z: x1 + x2 + z, {"x1": a, "x2": b, "z": Normal(0.0, 1.0)})
    assert res.nu_eff == math.floor(3.0**2 / (2.0**2 / 4.0))


def test_two_joint_quantities_are_two_terms():
    """Two independent points, each a joint pair of ν = 4: ν_eff = u_c⁴/Σ u_g⁴/ν = 8 for equal terms."""
    p1 = MultivariateT((0.0, 0.0), ((1.0, 0.2), (0.2, 1.0)), 4.0, label="A").components()
    p2 = MultivariateT((0.0, 0.0), ((1.0, 0.2), (0.2, 1.0)), 4.0, label="B").components()
    res = linear(lambda a1, a2, b1, b2: a1 + a2 + b1 + b2, {"a1": p1[0], "a2": p1[1], "b1": p2[0], "b2": p2[1]})
    assert res.nu_eff == 8


def test_monte_carlo_draws_the_components_together():
    """y = x1 − x2 of a joint t: exactly t_ν(μ1 − μ2, Σ11 + Σ22 − 2Σ12) [derived]; its 95 % interval
    is ±t_0.975(ν)·scale (scipy.stats.t.ppf). Independent draws of x1 and x2 would give another
    distribution (a sum of two t's). Tolerance: 5 Monte Carlo standard errors of a quantile
    (√(p(1−p)/M)/f(y_p), f the t density; common practice)."""
    mvt = MultivariateT((1.0, 3.0), ((1.0, 0.8), (0.8, 1.0)), 5.0)
    a, b = mvt.components()
    m = 400_000
    res = monte_carlo(lambda x1, x2: x1 - x2, {"x1": a, "x2": b}, p=0.95, trials=m, rng=_rng(11))
    scale = math.sqrt(1.0 + 1.0 - 1.6)
    t = stats.t(5.0, loc=-2.0, scale=scale)
    lo, hi = res.interval
    se = 5 * math.sqrt(0.025 * 0.975 / m) / t.pdf(t.ppf(0.975))
    assert lo == pytest.approx(t.ppf(0.025), abs=se)
    assert hi == pytest.approx(t.ppf(0.975), abs=se)
    assert res.u == pytest.approx(scale * math.sqrt(5.0 / 3.0), rel=0.03)


def test_refuses_bad_parameters():
    with pytest.raises(BudgetInputError, match="symmetric"):
        MultivariateT((0.0, 0.0), ((1.0, 0.5), (0.4, 1.0)), 4.0)
    with pytest.raises(BudgetInputError, match="semi-definite"):
        MultivariateT((0.0, 0.0), ((1.0, 2.0), (2.0, 1.0)), 4.0)
    with pytest.raises(BudgetInputError, match="dof"):
        MultivariateT((0.0,), ((1.0,),), 0.0)
    with pytest.raises(BudgetInputError, match="index"):
        JointComponent(MultivariateT((0.0,), ((1.0,),), 3.0), 1)
