"""Monte Carlo propagation (JCGM 101:2008 clause 7): coverage intervals, agreement with the
linear method, correlated sampling, the adaptive procedure, chunking, seeds, bad input.

Monte Carlo tolerances are four standard errors of the quantity compared (given beside each
check), so a correct engine fails with probability below about 10⁻⁴ per check; the seeds are
fixed, so the outcome is reproducible.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from budget.errors import BudgetInputError
from budget.propagation import (
    Normal,
    Rectangular,
    coverage_intervals,
    linear,
    monte_carlo,
)
from budget.propagation import montecarlo as mc_module


def _rng(seed: int = 1234) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed))


# ---------------------------------------------------------------- JCGM 101 7.7 / 7.8 index rules

@pytest.mark.parametrize(
    ("m", "p", "symmetric"),
    [
        # y_(i) = i. 7.7.2: q = pM if an integer, else int(pM + ½); r = (M − q)/2 if an
        # integer, else int((M − q + 1)/2); interval [y_(r), y_(r+q)] (1-based) [derived].
        (20, 0.90, (1, 19)),   # pM = 18 integer, q = 18, M − q = 2 → r = 1
        (21, 0.90, (1, 20)),   # pM = 18.9 → q = int(19.4) = 19, M − q = 2 → r = 1
        (20, 0.85, (2, 19)),   # pM = 17, q = 17, M − q = 3 odd → r = int(4/2) = 2
        (10, 0.75, (1, 9)),    # pM = 7.5 → q = int(8.0) = 8, M − q = 2 → r = 1
        (100, 0.95, (3, 98)),  # q = 95, M − q = 5 → r = 3
        (101, 0.95, (3, 99)),  # pM = 95.95 → q = 96, M − q = 5 → r = 3
        (40, 0.5, (10, 30)),   # q = 20, M − q = 20 → r = 10
    ],
)
def test_probabilistically_symmetric_interval_index_rule(m, p, symmetric):
    y = np.arange(1, m + 1, dtype=float)
    sym, _ = coverage_intervals(y, p)
    assert sym == symmetric


def test_shortest_interval_on_a_skewed_sample():
    # JCGM 101 7.8.2: r* minimizes y_(r+q) − y_(r), r = 1 … M − q. M = 10, p = 0.5 → q = 5;
    # widths y6 − y1 = 1, y7 − y2 = 1.9, … → r* = 1: [0, 1]. Symmetric: M − q = 5 odd →
    # r = int(6/2) = 3: [y3, y8] = [0.2, 4] [derived].
    y = np.array([0.0, 0.1, 0.2, 0.3, 0.4, 1.0, 2.0, 4.0, 8.0, 16.0])
    sym, short = coverage_intervals(y, 0.5)
    assert sym == (0.2, 4.0)
    assert short == (0.0, 1.0)


def test_shortest_interval_picks_the_dense_end():
    # Mirror image of the sample above: the shortest interval is at the top end [derived].
    y = np.sort(-np.array([0.0, 0.1, 0.2, 0.3, 0.4, 1.0, 2.0, 4.0, 8.0, 16.0]))
    sym, short = coverage_intervals(y, 0.5)
    assert short == (-1.0, 0.0)
    assert sym == (-4.0, -0.2)


# ---------------------------------------------------------------- Monte Carlo vs the linear method

def test_linear_model_normal_inputs_agrees_with_linear_method():
    # For a linear model with normal inputs the output is exactly normal (JCGM 101 5.7 / 9.2.2),
    # so Monte Carlo must reproduce y and u of the linear method within sampling error:
    # se(ȳ) = u/√M, se(s) ≈ u/√(2(M − 1)); the 2.5 % and 97.5 % quantiles y ∓ 1.96u have
    # se = u·√(0.025·0.975/M)/φ(1.96) (asymptotic variance of a sample quantile, common
    # practice). Tolerance 4 se throughout [derived].
    inputs = {"a": Normal(1.0, 0.2), "b": Normal(-2.0, 0.5), "c": Normal(0.3, 0.05)}

    def model(a, b, c):
        return 2.0 * a - 3.0 * b + 10.0 * c

    lin = linear(model, inputs)
    m = 200_000
    mc = monte_carlo(model, inputs, trials=m, rng=_rng(1))
    assert mc.trials == m and mc.samples.size == m
    assert abs(mc.estimate - lin.estimate) <= 4 * lin.u / math.sqrt(m)
    assert abs(mc.u - lin.u) <= 4 * lin.u / math.sqrt(2 * (m - 1))
    z = stats.norm.ppf(0.975)
    se_q = math.sqrt(0.025 * 0.975 / m) / stats.norm.pdf(z) * lin.u
    assert mc.interval[0] == pytest.approx(lin.estimate - z * lin.u, abs=4 * se_q)
    assert mc.interval[1] == pytest.approx(lin.estimate + z * lin.u, abs=4 * se_q)
    # For a symmetric unimodal PDF the shortest and symmetric intervals coincide within
    # sampling error (JCGM 101 5.3.4) [derived].
    assert mc.shortest[0] == pytest.approx(mc.interval[0], abs=8 * se_q)


def test_estimate_and_u_come_from_all_values():
    # JCGM 101 7.6: ỹ = mean of the M values, u(ỹ) their standard deviation with M − 1.
    mc = monte_carlo(lambda a: a**2, {"a": Rectangular(0.0, 1.0)}, trials=5000, rng=_rng(2))
    assert mc.estimate == pytest.approx(float(np.mean(mc.samples)), rel=1e-12)
    assert mc.u == pytest.approx(float(np.std(mc.samples, ddof=1)), rel=1e-12)
    assert np.all(np.diff(mc.samples) >= 0)


def test_correlated_normal_inputs_have_the_requested_correlation():
    # JCGM 101 6.4.8: multivariate normal. The sample correlation has se ≈ (1 − ρ²)/√M
    # (large-sample result for normal data, common practice); tolerance 4 se.
    m, rho = 100_000, 0.7
    res = monte_carlo(lambda a, b, c: {"a": a, "b": b, "c": c},
                      {"a": Normal(5.0, 2.0), "b": Normal(-1.0, 0.1), "c": Rectangular(0.0, 1.0)},
                      trials=m, rng=_rng(3), correlation={("a", "b"): rho})
    assert res.names == ("a", "b", "c")
    corr = res.correlation
    assert corr[0, 1] == pytest.approx(rho, abs=4 * (1 - rho**2) / math.sqrt(m))
    assert abs(corr[0, 2]) <= 4 / math.sqrt(m)
    assert res["a"].u == pytest.approx(2.0, abs=4 * 2.0 / math.sqrt(2 * m))
    assert res["b"].estimate == pytest.approx(-1.0, abs=4 * 0.1 / math.sqrt(m))


def test_full_negative_correlation_is_sampled():
    # r = −1 is semi-definite: a + b is then constant for equal sd [derived].
    res = monte_carlo(lambda a, b: a + b, {"a": Normal(1.0, 0.3), "b": Normal(2.0, 0.3)},
                      trials=5000, rng=_rng(4), correlation={("a", "b"): -1.0})
    assert res.u < 1e-12


def test_correlated_non_normal_input_is_refused():
    with pytest.raises(BudgetInputError, match=r"'correlation' field.*Normal.*b \(rectangular\)"):
        monte_carlo(lambda a, b: a + b, {"a": Normal(0.0, 1.0), "b": Rectangular(0.0, 1.0)},
                    trials=5000, rng=_rng(), correlation={("a", "b"): 0.5})


# ---------------------------------------------------------------- adaptive procedure (7.9)

def test_adaptive_procedure_converges():
    # JCGM 101 7.9.4: at least two sequences of max(J, 10⁴) trials, J = ⌈100/(1 − p)⌉.
    mc = monte_carlo(lambda a, b: a + b, {"a": Normal(0.0, 1.0), "b": Rectangular(-1.0, 1.0)},
                     rng=_rng(5))
    assert mc.adaptive and mc.converged
    assert mc.trials >= 2 * 10**4
    assert mc.trials % 10**4 == 0
    assert mc.warnings == ()


def test_adaptive_sequence_length_follows_p():
    # p = 0.999: J = 100/(1 − p) = 10⁵ > 10⁴, so sequences hold 10⁵ trials (JCGM 101 7.9.4 a).
    mc = monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, p=0.999, rng=_rng(6))
    assert mc.trials >= 2 * 10**5 and mc.trials % 10**5 == 0


def test_adaptive_procedure_reports_no_convergence():
    mc = monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, rng=_rng(7), n_dig=4, max_trials=20_000)
    assert not mc.converged
    assert mc.trials == 20_000
    assert any("did not stabilize 4 significant digits" in w for w in mc.warnings)


# ---------------------------------------------------------------- fixed trials, chunking, seeds

@pytest.mark.parametrize(("p", "least"), [(0.95, 2000), (0.99, 10_000), (0.6827, 316)])
def test_fixed_trials_below_100_over_1_minus_p_raise(p, least):
    # JCGM 101 7.9.4 a) / 7.2.3: M should be at least 100/(1 − p).
    model, inputs = (lambda a: a), {"a": Normal(0.0, 1.0)}
    with pytest.raises(BudgetInputError, match=rf"'trials' field.*>= {least}.*{least - 1}"):
        monte_carlo(model, inputs, p=p, trials=least - 1, rng=_rng())
    assert monte_carlo(model, inputs, p=p, trials=least, rng=_rng()).trials == least


@pytest.mark.parametrize("trials", [2.5e4, "20000", 0, -5])
def test_bad_trials(trials):
    with pytest.raises(BudgetInputError, match="'trials' field"):
        monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, trials=trials, rng=_rng())


def test_model_returning_nan_raises():
    def model(a, b):
        return np.where(a > 2.5, np.nan, a + b)

    with pytest.raises(BudgetInputError) as info:
        monte_carlo(model, {"a": Normal(0.0, 1.0), "b": Normal(0.0, 1.0)}, trials=10_000, rng=_rng())
    msg = str(info.value)
    assert "nan" in msg and "a=" in msg and "b=" in msg
    a_value = float(msg.split("a=")[1].split(",")[0])
    assert a_value > 2.5  # the reported input values are those of the bad point


def test_chunking_gives_exactly_m_values(monkeypatch):
    # Chunks of 1000 trials; M = 2500 is not a multiple: calls of 1000, 1000, 500.
    monkeypatch.setattr(mc_module, "CHUNK_VALUES", 1000)
    sizes = []

    def model(a, b):
        sizes.append(a.size)
        return a - b

    mc = monte_carlo(model, {"a": Normal(0.0, 1.0), "b": Normal(0.0, 1.0)}, trials=2500, rng=_rng())
    assert sizes == [1000, 1000, 500]
    assert mc.trials == 2500 and mc.samples.size == 2500


def test_a_model_may_ask_for_fewer_trials_per_call():
    # Two inputs: CHUNK_VALUES // 2 is above MAX_CHUNK, so a call gets MAX_CHUNK trials, or the model's max_chunk.
    class Capped:
        max_chunk = 700

        def __init__(self) -> None:
            self.sizes: list[int] = []

        def __call__(self, a, b):
            self.sizes.append(a.size)
            return a - b

    inputs = {"a": Normal(0.0, 1.0), "b": Normal(0.0, 1.0)}
    capped = Capped()
    monte_carlo(capped, inputs, trials=2000, rng=_rng())
    assert capped.sizes == [700, 700, 600]
    sizes = []

    def plain(a, b):
        sizes.append(a.size)
        return a - b

    monte_carlo(plain, inputs, trials=mc_module.MAX_CHUNK + 5, rng=_rng())
    assert sizes == [mc_module.MAX_CHUNK, 5]


def test_seed_entropy_is_recorded():
    mc = monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, trials=2000, rng=_rng(1234))
    assert mc.seed == 1234
    multi = monte_carlo(lambda a: {"x": a, "y": -a}, {"a": Normal(0.0, 1.0)}, trials=2000, rng=_rng(99))
    assert multi.seed == 99 and multi["x"].seed == 99


def test_same_seed_same_result():
    inputs = {"a": Normal(0.0, 1.0), "b": Rectangular(-1.0, 1.0)}
    one = monte_carlo(lambda a, b: a * b, inputs, trials=20_000, rng=_rng(42))
    two = monte_carlo(lambda a, b: a * b, inputs, trials=20_000, rng=_rng(42))
    other = monte_carlo(lambda a, b: a * b, inputs, trials=20_000, rng=_rng(43))
    np.testing.assert_array_equal(one.samples, two.samples)
    assert (one.estimate, one.u, one.interval, one.shortest) == (two.estimate, two.u, two.interval,
                                                                 two.shortest)
    assert one.u != other.u


def test_rng_must_be_a_generator():
    with pytest.raises(BudgetInputError, match="'rng' field"):
        monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, trials=2000, rng=np.random.RandomState(1))


def test_bad_p_for_monte_carlo():
    with pytest.raises(BudgetInputError, match="'p' field"):
        monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, p=1.0, trials=2000, rng=_rng())


def test_progress_is_reported():
    seen = []
    monte_carlo(lambda a: a, {"a": Normal(0.0, 1.0)}, trials=3000, rng=_rng(), progress=seen.append)
    assert seen == [3000]


# ---------------------------------------------------------------- property tests (hypothesis)

@settings(max_examples=30, deadline=None, derandomize=True)
@given(
    values=st.lists(st.floats(min_value=-1e6, max_value=1e6, allow_nan=False), min_size=40,
                    max_size=400),
    p=st.floats(min_value=0.5, max_value=0.95),
)
def test_shortest_never_wider_than_symmetric(values, p):
    # The symmetric interval is one of the candidates of 7.8.2, so the shortest cannot be wider.
    y = np.sort(np.array(values))
    (lo, hi), (slo, shi) = coverage_intervals(y, p)
    assert shi - slo <= hi - lo
    assert lo <= hi and slo <= shi


@settings(max_examples=20, deadline=None, derandomize=True)
@given(
    coeffs=st.lists(st.floats(min_value=0.1, max_value=5.0), min_size=1, max_size=4),
    signs=st.lists(st.booleans(), min_size=4, max_size=4),
    sds=st.lists(st.floats(min_value=0.01, max_value=10.0), min_size=4, max_size=4),
    seed=st.integers(min_value=0, max_value=2**32 - 1),
)
def test_mc_u_matches_linear_u_for_linear_normal_models(coeffs, signs, sds, seed):
    # Linear model, normal inputs: the MC u estimates the exact u with se ≈ u/√(2(M − 1));
    # tolerance 4 se (JCGM 101 9.2.2-type case) [derived].
    c = np.array([v if s else -v for v, s in zip(coeffs, signs, strict=False)])
    names = [f"x{i}" for i in range(c.size)]
    inputs = {nm: Normal(float(i), sds[i]) for i, nm in enumerate(names)}

    def model(**kw):
        return sum(ci * kw[nm] for ci, nm in zip(c, names, strict=True))

    m = 20_000
    lin = linear(model, inputs)
    mc = monte_carlo(model, inputs, trials=m, rng=_rng(seed))
    assert abs(mc.u - lin.u) <= 4 * lin.u / math.sqrt(2 * (m - 1))


@settings(max_examples=20, deadline=None, derandomize=True)
@given(seed=st.integers(min_value=0, max_value=2**63), half=st.floats(min_value=0.1, max_value=3.0))
def test_same_seed_same_result_property(seed, half):
    inputs = {"a": Rectangular(-half, half), "b": Normal(1.0, half)}
    one = monte_carlo(lambda a, b: a * b + b, inputs, trials=20_000, rng=_rng(seed))
    two = monte_carlo(lambda a, b: a * b + b, inputs, trials=20_000, rng=_rng(seed))
    assert (one.estimate, one.u, one.interval, one.shortest, one.seed) == (
        two.estimate, two.u, two.interval, two.shortest, two.seed)


@pytest.mark.parametrize(("m", "p"), [(10, 0.96), (100, 0.996), (1, 0.5), (0, 0.95)])
def test_coverage_interval_needs_more_values_than_q(m, p):
    # JCGM 101 7.7.2 [derived]: the interval [y_(r), y_(r+q)] needs r >= 1 and r + q <= M, so
    # M >= q + 1; at M = 10, p = 0.96, q = int(9.6 + ½) = 10 = M and y_(r+q) does not exist.
    # The request is refused with the field named, not answered by an IndexError.
    with pytest.raises(BudgetInputError, match=r"'sorted_y' field.*values"):
        coverage_intervals(np.arange(float(m)), p)


def test_coverage_interval_at_q_equal_m_minus_one():
    # JCGM 101 7.7.2: M = 10, p = 0.9: q = 9, M − q = 1 odd → r = int(2/2) = 1: [y_(1), y_(10)].
    sym, short = coverage_intervals(np.arange(1.0, 11.0), 0.9)
    assert sym == (1.0, 10.0) and short == (1.0, 10.0)


def test_correlation_of_an_output_without_spread_is_zero():
    # [derived] an output that does not vary has zero covariance with every other output; its
    # correlation is reported as 0 (1 with itself), not 0/0 = NaN, as the run's gain–intercept
    # correlation already does.
    res = monte_carlo(lambda a, b: {"s": a + b, "c": 0.0 * a + 3.0, "d": a - b},
                      {"a": Normal(0.0, 1.0), "b": Normal(0.0, 2.0)}, trials=5000, rng=_rng(8))
    r = res.correlation
    assert np.all(np.isfinite(r))
    assert r[1, 1] == 1.0 and r[0, 1] == r[1, 0] == r[1, 2] == 0.0
    # the others as usual: r(a + b, a − b) = (1 − 4)/5 = −0.6, sampling se ≈ (1 − r²)/√M ≈ 0.009
    assert r[0, 2] == pytest.approx(-0.6, abs=0.05)
