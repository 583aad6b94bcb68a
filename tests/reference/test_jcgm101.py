"""JCGM 101:2008 (GUM Supplement 1) clause 9 examples and the clause 8 verdicts.

The reference figures are those of the case files in ``references/jcgm101_*.toml``;
they were recalled from memory, not verified against the text (mark "recalled"),
except where a value is derived exactly from the stated inputs ("derived",
recomputed by tools/reference_tolerances.py). Monte Carlo tolerances come from
the Monte Carlo standard error at the number of trials used here:

* estimate: u/√M; standard uncertainty: u·√(1/(2(M−1))) (normal theory);
* endpoint of a probabilistically symmetric interval (a sample quantile):
  √(p(1−p)/M)/f(y_p), f the output density at the quantile (asymptotic
  variance of a sample quantile, no bootstrap), with f from the exact output
  distribution;

each times four, so a correct engine fails with probability well below 10⁻³
(and so for any seed, not only the fixed one).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.propagation import linear, monte_carlo, validate
from budget.reference_cases import MODELS, case_inputs, load_cases, run_case
from tests.paths import load_tool

CASES = {c.id: c for c in load_cases() if c.id.startswith("jcgm101")}

# [derived] exact outputs, recomputed from the stated inputs by tools/reference_tolerances.py:
TOOL = load_tool("reference_tolerances")
_EXACT = TOOL.exact_outputs()
Q975_9_2_2 = _EXACT["q_9.2.2"]                 # N(0, 4): 3.919928
Q975_9_2_3 = _EXACT["q_9.2.3"]                 # Irwin–Hall (n = 4), scaled to sd 2: 3.879407
F_9_2_3 = _EXACT["f_9.2.3"]                    # its density there
Q975_9_2_4 = _EXACT["q_9.2.4"]                 # Irwin–Hall (n = 3) * rectangular sd 10: 17.0158
F_9_2_4 = _EXACT["f_9.2.4"]


def quantile_se(p_tail: float, trials: int, density: float) -> float:
    """Standard error of a sample quantile: √(p(1−p)/M)/f (asymptotic normal theory)."""
    return math.sqrt(p_tail * (1.0 - p_tail) / trials) / density


def _run(case_id: str, trials: int | None, seed: int):
    case = CASES[case_id]
    inputs = case_inputs(case)
    model = MODELS[case.model]
    lin = linear(model, inputs, p=case.p)
    mc = monte_carlo(model, inputs, p=case.p, trials=trials, rng=np.random.default_rng(seed))
    return case, inputs, model, lin, mc


@pytest.mark.parametrize("case_id", sorted(CASES))
def test_reference_values(case_id):
    """Every expected value of the case file, with the tolerance stated there."""
    rows = run_case(CASES[case_id], rng=np.random.default_rng(101))
    bad = [f"{r.quantity} ({r.provenance}): reference {r.reference}, computed {r.computed}, tol {r.tolerance}"
           for r in rows if not r.passed]
    assert not bad, "\n".join(bad)


def test_9_2_2_interval_against_exact_normal():
    """[derived] JCGM 101 9.2.2: Y ~ N(0, 4) exactly, so the 95 % interval is ±1.96·2."""
    _, _, _, lin, mc = _run("jcgm101-9.2.2", 200_000, 1)
    tol = 4 * quantile_se(0.025, 200_000, _EXACT["f_9.2.2"])
    assert lin.U == pytest.approx(Q975_9_2_2, abs=1e-9)
    assert mc.interval[0] == pytest.approx(-Q975_9_2_2, abs=tol)
    assert mc.interval[1] == pytest.approx(Q975_9_2_2, abs=tol)


def test_9_2_3_interval_against_exact_irwin_hall():
    """[derived] JCGM 101 9.2.3: the exact 95 % interval of the sum of four R(−√3, √3) is ±3.8794."""
    _, _, _, _, mc = _run("jcgm101-9.2.3", 200_000, 2)
    tol = 4 * quantile_se(0.025, 200_000, F_9_2_3)       # 0.043
    assert mc.interval[0] == pytest.approx(-Q975_9_2_3, abs=tol)
    assert mc.interval[1] == pytest.approx(Q975_9_2_3, abs=tol)
    assert mc.u == pytest.approx(2.0, abs=4 * 2.0 / math.sqrt(2 * (200_000 - 1)))


def test_9_2_3_verdict_depends_on_n_dig():
    """JCGM 101 9.2.3 with the clause 8 rule, worked out from the numbers [derived].

    u(y) = 2 gives δ = 0.5, 0.05, 0.005 at n_dig = 1, 2, 3 (7.9.2). The GUF
    endpoint 3.9199 and the exact MCM endpoint 3.8794 differ by d = 0.0405, so:
    validated at n_dig = 1 and 2 (0.0405 < 0.05), not validated at n_dig = 3.
    REFERENCES.md recalls "not validated at n_dig = 2" [recalled]; that does not
    follow from δ = 0.05 and the published ±3.92 / ±3.88, so this test asserts
    what the numbers imply. The margin at n_dig = 2 is only 0.0095, hence
    M = 8·10⁶: quantile SE 0.0017, a margin of 5.6 SE.
    """
    m = 8_000_000
    _, _, _, lin, mc = _run("jcgm101-9.2.3", m, 3)
    se = quantile_se(0.025, m, F_9_2_3)
    d_exact = Q975_9_2_2 - Q975_9_2_3
    deltas = {1: 0.5, 2: 0.05, 3: 0.005}
    verdicts = {1: True, 2: True, 3: False}
    for n_dig, delta in deltas.items():
        v = validate(lin, mc, n_dig=n_dig)
        assert v.delta == pytest.approx(delta, rel=1e-12)
        assert v.d_low == pytest.approx(d_exact, abs=4 * se)
        assert v.d_high == pytest.approx(d_exact, abs=4 * se)
        assert v.validated is verdicts[n_dig], n_dig


def test_9_2_4_interval_against_exact_convolution():
    """[derived] JCGM 101 9.2.4: exact 95 % endpoint 17.016 (published MCM ±17.0 [recalled])."""
    _, _, _, lin, mc = _run("jcgm101-9.2.4", 200_000, 4)
    tol = 4 * quantile_se(0.025, 200_000, F_9_2_4)       # 0.086
    assert mc.interval[0] == pytest.approx(-Q975_9_2_4, abs=tol)
    assert mc.interval[1] == pytest.approx(Q975_9_2_4, abs=tol)
    v = validate(lin, mc, n_dig=2)
    assert v.delta == 0.5
    assert not v.validated
    assert v.d_high == pytest.approx(lin.U - Q975_9_2_4, abs=tol)   # 2.88


def test_9_3_second_order_terms_exact():
    """[derived] JCGM 100 eq. (14) for the JCGM 101 9.3 model has two non-zero cross terms.

    At ρa = ρa0 only ∂²δm/∂ρa∂ρW = −m/ρW² and ∂²δm/∂ρa∂ρR = m/ρR² survive
    (m = 100 001.234 mg, ρW = ρR = 8000 kg/m³); each enters once per ordered pair,
    ½·c² twice. Numerical differentiation is the only error (tolerance 1e-4 relative).
    """
    case = CASES["jcgm101-9.3"]
    inputs = case_inputs(case)
    model = MODELS[case.model]
    lin1 = linear(model, inputs, p=case.p)
    lin2 = linear(model, inputs, p=case.p, second_order=True)
    m = 100_001.234
    u_a, u_w, u_r = (inputs[k].sd for k in ("rho_a", "rho_w", "rho_r"))
    extra = (m / 8000.0**2 * u_a * u_w) ** 2 + (m / 8000.0**2 * u_a * u_r) ** 2
    # rel 1e-6: cancellation in (m_Rc + δm_Rc)·(…) − m_nom at 10⁵ mg limits the differences
    assert lin1.u == pytest.approx(math.hypot(0.050, 0.020), rel=1e-6)
    assert lin2.u**2 - lin1.u**2 == pytest.approx(extra, rel=1e-4)
    assert lin2.u == pytest.approx(0.074964, abs=2e-6)


def test_9_3_verdicts():
    """JCGM 101 9.3 verdicts from the published figures and the clause 8 rule [derived].

    First order: d_low = |1.1285 − 1.0834| = 0.045, not validated at n_dig = 1 or 2.
    Second order: d = 0.0036 and 0.0015 against δ = 0.005 (n_dig = 1): validated;
    against δ = 0.0005 (n_dig = 2): not validated.

    Seed-robust: over 20 seeds at M = 10⁶ (tools/reference_tolerances.py, and the
    replication study there) the symmetric interval's d is 0.0026 ± 0.00025, so
    its verdicts sit 9 sd inside δ = 0.005 and 8 sd above δ = 0.0005; the
    shortest interval's d is 0.0027 ± 0.0009, only 2.5 sd inside δ = 0.005 (its
    verdict failed for 1 seed in 20). So the verdicts are asserted on the
    symmetric interval, and the shortest interval's d only within 4 sd.
    """
    case = CASES["jcgm101-9.3"]
    inputs = case_inputs(case)
    model = MODELS[case.model]
    lin1 = linear(model, inputs, p=case.p)
    lin2 = linear(model, inputs, p=case.p, second_order=True)
    mc = monte_carlo(model, inputs, p=case.p, trials=1_000_000, rng=np.random.default_rng(93))
    assert not validate(lin1, mc, n_dig=1, interval="shortest").validated   # d = 0.045: 40 sd
    assert not validate(lin1, mc, n_dig=2, interval="shortest").validated
    v1 = validate(lin2, mc, n_dig=1)
    v2 = validate(lin2, mc, n_dig=2)
    assert (v1.delta, v2.delta) == (pytest.approx(0.005), pytest.approx(0.0005))
    assert v1.validated and not v2.validated
    shortest = validate(lin2, mc, n_dig=1, interval="shortest")
    sd = TOOL.SHORTEST_SD_9_3
    # the published shortest interval [1.0834, 1.3825] against 1.2340 ± 1.96 × 0.07496 [derived]
    assert shortest.d_low == pytest.approx(abs(lin2.interval[0] - 1.0834), abs=4 * sd)
    assert shortest.d_high == pytest.approx(abs(lin2.interval[1] - 1.3825), abs=4 * sd)


def test_adaptive_procedure_9_2_2():
    """JCGM 101 7.9.4 on 9.2.2 (n_dig = 2, δ = 0.05).

    Sequences of M = max(J, 10⁴) = 10⁴ trials (J = 100/(1 − p) = 2000); at least
    two sequences; at the stop 2·s ≤ δ for y, u, y_low, y_high: s, the standard
    deviation of the average over the sequences, is at most δ/2, so four of those
    standard errors are 2δ = 0.1 (exact: 0, 2, ±3.9199). A tolerance of δ, two
    standard errors, failed for 1 seed in 6.
    """
    case = CASES["jcgm101-9.2.2"]
    mc = monte_carlo(MODELS[case.model], case_inputs(case), p=case.p, trials=None,
                     rng=np.random.default_rng(7), n_dig=2)
    assert mc.trials % 10_000 == 0 and mc.trials >= 20_000
    tol = 4 * 0.05 / 2
    assert mc.estimate == pytest.approx(0.0, abs=tol)
    assert mc.u == pytest.approx(2.0, abs=tol)
    assert mc.interval[0] == pytest.approx(-Q975_9_2_2, abs=tol)
    assert mc.interval[1] == pytest.approx(Q975_9_2_2, abs=tol)


def test_adaptive_procedure_stops_at_first_stable_sequence():
    """JCGM 101 7.9.4 h): the criterion is checked after every sequence.

    [derived] Replaying the criterion on 20 seeds of 9.2.2 (sequences of 10⁴ normal
    sums) it is first met at h = 2 … 9; h ≤ 20 (2·10⁵ trials) leaves a wide margin.
    """
    case = CASES["jcgm101-9.2.2"]
    mc = monte_carlo(MODELS[case.model], case_inputs(case), p=case.p, trials=None,
                     rng=np.random.default_rng(7), n_dig=2)
    assert mc.trials <= 200_000
