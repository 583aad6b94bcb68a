"""JCGM 100:2008 (GUM): Table G.2, the G.4.1 example and the H.1 end-gauge calibration.

The reference figures are those of ``references/jcgm100_*.toml``, recalled from memory
and not verified against the text (mark "recalled"); exact consequences of the stated
inputs are marked "derived" and recomputed by tools/reference_tolerances.py.
Independent references: ``scipy.stats.t`` for Table G.2 and the ``uncertainties``
package for the first-order propagation of H.1.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from uncertainties import ufloat

from budget.propagation import Normal, linear
from budget.reference_cases import MODELS, case_inputs, load_cases, run_case

CASES = {c.id: c for c in load_cases() if c.id.startswith("jcgm100")}


def _identity(x):
    return x


@pytest.mark.parametrize("case_id", sorted(CASES))
def test_reference_values(case_id):
    """Every expected value of the case file, with the tolerance stated there."""
    rows = run_case(CASES[case_id], rng=np.random.default_rng(100))
    bad = [f"{r.quantity} ({r.provenance}): reference {r.reference}, computed {r.computed}, tol {r.tolerance}"
           for r in rows if not r.passed]
    assert not bad, "\n".join(bad)


# JCGM 100 Table G.2 rows ν = 1 and ν = ∞ and three single entries [recalled]; digits quoted
# (tolerance 0.005), scipy.stats.t.ppf as the reference. The columns headed 68.27, 95.45 and
# 99.73 are the fractions 2Φ(k) − 1 of a normal distribution within ±k σ, k = 1, 2, 3 (Table G.2
# footnote, value from memory): with p = 0.9973 rounded, t_p(1) would be 235.78, not 235.80.
P1, P2, P3 = (2.0 * stats.norm.cdf(k) - 1.0 for k in (1, 2, 3))
TABLE_G2 = [
    (P1, 1, 1.84), (0.90, 1, 6.31), (0.95, 1, 12.71), (P2, 1, 13.97),
    (0.99, 1, 63.66), (P3, 1, 235.80),
    (P1, math.inf, 1.00), (0.90, math.inf, 1.645), (0.95, math.inf, 1.960),
    (P2, math.inf, 2.00), (0.99, math.inf, 2.576), (P3, math.inf, 3.00),
    (P2, 10, 2.28), (0.95, 19, 2.09), (0.99, 16, 2.92),
]


@pytest.mark.parametrize(("p", "nu", "published"), TABLE_G2)
def test_table_g2_through_the_engine(p, nu, published):
    """k of a one-input model whose u carries ν degrees of freedom is t_p(ν) (G.3.4, Table G.2)."""
    lin = linear(lambda x: _identity(x), {"x": Normal(0.0, 1.0, dof=nu)}, p=p)
    assert lin.nu_eff == nu
    exact = stats.norm.ppf(0.5 * (1 + p)) if math.isinf(nu) else stats.t.ppf(0.5 * (1 + p), nu)
    assert lin.k == pytest.approx(exact, rel=1e-10)          # scipy: the general reference
    assert lin.k == pytest.approx(published, abs=0.005)      # Table G.2, digits quoted
    assert lin.U == pytest.approx(lin.k * lin.u, rel=1e-12)


def test_g4_1_welch_satterthwaite_derived():
    """[derived] G.4.1 inputs 0.25 %, 0.57 %, 0.82 % with ν = 9, 4, 14.

    Eq. (G.2b) gives 18.9987 from the published (rounded) inputs; JCGM 100 G.6.4
    allows either truncating ν_eff to the next lower integer or interpolating, so
    the engine's ν_eff is 18 or 18.9987 and k = t_95(ν_eff) in either case.
    """
    case = CASES["jcgm100-G.4.1"]
    lin = linear(MODELS[case.model], case_inputs(case), p=case.p)
    rel = [0.25, 0.57, 0.82]
    u_c = math.sqrt(sum(r * r for r in rel))
    nu = u_c**4 / sum(r**4 / n for r, n in zip(rel, [9, 4, 14], strict=True))
    assert lin.u == pytest.approx(u_c, rel=1e-8)
    assert lin.nu_eff in (math.floor(nu), pytest.approx(nu, rel=1e-8))
    assert lin.k == pytest.approx(stats.t.ppf(0.975, lin.nu_eff), rel=1e-10)


def test_h1_against_uncertainties_package():
    """H.1 first order cross-checked with the ``uncertainties`` package (linear propagation)."""
    case = CASES["jcgm100-H.1"]
    inputs = case_inputs(case)
    lin = linear(MODELS[case.model], inputs, p=case.p)
    x = {k: ufloat(d.mean, d.sd) for k, d in inputs.items()}
    theta = x["theta_mean"] + x["theta_cyclic"]
    ell = x["l_s"] + x["d"] - x["l_s"] * (x["delta_alpha"] * theta
                                          + x["alpha_s"] * x["delta_theta"])
    assert lin.estimate == pytest.approx(ell.nominal_value, abs=1e-6)
    assert lin.u == pytest.approx(ell.std_dev, rel=1e-6)


def test_h1_budget_shares_and_second_order_derived():
    """[derived] H.1: shares of u_c² and the second-order terms of JCGM 100 eq. (14).

    Shares: 25², 9.7², (l_s θ u(δα))², (l_s α_s u(δθ))² over u_c²; they sum to 100 %.
    Second order adds (l_s u(δα) u(θ))² + (l_s u(α_s) u(δθ))², u(θ)² = 0.2² + 0.5²/2.
    """
    case = CASES["jcgm100-H.1"]
    inputs = case_inputs(case)
    lin1 = linear(MODELS[case.model], inputs, p=case.p)
    lin2 = linear(MODELS[case.model], inputs, p=case.p, second_order=True)
    rows = {r.name: r for r in lin1.rows}
    assert sum(r.percent for r in lin1.rows) == pytest.approx(100.0, abs=1e-9)
    assert rows["l_s"].percent == pytest.approx(100 * 25.0**2 / lin1.u**2, rel=1e-6)
    assert rows["delta_theta"].percent == pytest.approx(
        100 * rows["delta_theta"].contribution**2 / lin1.u**2, rel=1e-12)
    l_s = 50_000_623.0
    u_theta2 = 0.2**2 + 0.5**2 / 2
    extra = (l_s**2 * inputs["delta_alpha"].sd ** 2 * u_theta2
             + l_s**2 * inputs["alpha_s"].sd ** 2 * inputs["delta_theta"].sd ** 2)
    assert lin2.u**2 - lin1.u**2 == pytest.approx(extra, rel=1e-4)
    assert math.sqrt(extra) == pytest.approx(11.85, abs=0.01)
