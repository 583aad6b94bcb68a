"""Drawing the inputs of a Monte Carlo run (budget.propagation.sampling): the normal inputs a model
reads only through their sum drawn as one normal variate (issue 14).

Outside references: JCGM 101:2008 9.2.2 (four N(0, 1) inputs summed: Y ~ N(0, 4), 95 % interval
±3.92), and scipy.stats (the normal distribution's quantile, density and the Kolmogorov–Smirnov
statistic's distribution). Monte Carlo tolerances are four standard errors at the trials used
(u: u/√(2(M − 1)); a quantile: √(p(1 − p)/M)/f; normal theory), so a correct engine fails with
probability well below 10⁻³ for any seed.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget.propagation import Normal, Rectangular, monte_carlo
from budget.propagation.quantities import as_quantities
from budget.propagation.sampling import Sampler
from budget.rig import components as comp
from budget.rig.model import VirtualRig
from tests.rig.test_linear_paths_agree import RIGS


class _Summed:
    """y = Σ c_a·x_a, declared to the engine as read only through that sum."""

    def __init__(self, coefficients: dict[str, float]) -> None:
        self.c = coefficients

    def __call__(self, **kw):
        return sum(c * kw[k] for k, c in self.c.items())

    def additive_inputs(self, names):
        return [dict(self.c)]


def test_jcgm101_9_2_2_with_the_four_inputs_drawn_as_one():
    # JCGM 101:2008 9.2.2: Y = X1 + X2 + X3 + X4, Xi ~ N(0, 1), so Y ~ N(0, 4) exactly and the 95 %
    # interval is ±1.96·2 (the quantile from scipy.stats.norm). One normal variate per trial.
    inputs = {f"x{i}": Normal(0.0, 1.0) for i in range(1, 5)}
    model = _Summed({k: 1.0 for k in inputs})
    assert len(Sampler(as_quantities(inputs), None, model.additive_inputs(list(inputs))).normal) == 1
    m = 200_000
    mc = monte_carlo(model, inputs, trials=m, rng=np.random.default_rng(922))
    q975 = stats.norm.ppf(0.975, scale=2.0)
    tol = 4 * math.sqrt(0.025 * 0.975 / m) / stats.norm.pdf(q975, scale=2.0)
    assert mc.interval[0] == pytest.approx(-q975, abs=tol)
    assert mc.interval[1] == pytest.approx(q975, abs=tol)
    assert mc.u == pytest.approx(2.0, abs=4 * 2.0 / math.sqrt(2 * (m - 1)))
    assert mc.estimate == pytest.approx(0.0, abs=4 * 2.0 / math.sqrt(m))


def test_weighted_sum_with_means_has_the_exact_normal_distribution():
    # Y = 2a − 0.5b + c with a ~ N(1, 0.3²), b ~ N(−2, 0.8²), c ~ N(0.5, 0.1²) is N(3.5, 0.53) exactly
    # (the variances of independent normals add, JCGM 101 9.2.2); checked by the Kolmogorov–Smirnov
    # statistic against scipy.stats.norm: below its 0.1 % critical value 1.95/√M.
    inputs = {"a": Normal(1.0, 0.3), "b": Normal(-2.0, 0.8), "c": Normal(0.5, 0.1)}
    model = _Summed({"a": 2.0, "b": -0.5, "c": 1.0})
    m = 100_000
    mc = monte_carlo(model, inputs, trials=m, rng=np.random.default_rng(7))
    sd = math.sqrt(0.53)
    assert mc.estimate == pytest.approx(3.5, abs=4 * sd / math.sqrt(m))
    assert mc.u == pytest.approx(sd, abs=4 * sd / math.sqrt(2 * (m - 1)))
    ks = stats.kstest(mc.samples, stats.norm(3.5, sd).cdf).statistic
    assert ks < 1.95 / math.sqrt(m)


def test_only_uncorrelated_normal_members_are_merged():
    # Internal: which inputs are drawn. Rectangular and correlated members are drawn as they are;
    # the held members read their means as read-only views; without a declaration nothing merges.
    q = as_quantities({"a": Normal(1.0, 0.3), "b": Normal(-2.0, 0.8), "r": Rectangular(-1.0, 1.0),
                       "c": Normal(0.0, 0.5), "d": Normal(0.0, 0.2), "z": Normal(4.0, 0.1)})
    names = list(q)
    r = np.eye(len(names))
    r[names.index("c"), names.index("d")] = r[names.index("d"), names.index("c")] = 0.5
    s = Sampler(q, r, [{k: 1.0 for k in names}])
    assert [names[i] for i in s.normal] == ["a"] and list(s.held) == ["b", "z"]
    assert s.scale[0, 0] == pytest.approx(math.sqrt(0.3**2 + 0.8**2 + 0.1**2), rel=1e-15)
    out = s.draw(np.random.default_rng(1), 50)
    assert set(out) == set(names)
    assert out["b"].strides == (0,) and not out["b"].flags.writeable and np.all(out["b"] == -2.0)
    assert np.std(out["r"]) > 0 and np.std(out["c"]) > 0 and np.std(out["d"]) > 0
    assert Sampler(q, r).held == {} and len(Sampler(q, None).normal) == 5
    assert len(Sampler(q, None, [{k: 1.0 for k in names}]).normal) == 1


@pytest.mark.parametrize("name", ["gauge_static", "gain_sweep"])
def test_rig_monte_carlo_u_is_that_with_every_input_drawn(name):
    # The virtual rig's locator errors of one point along one axis are summed (its declaration, held
    # in tests/rig/test_additive_inputs.py); drawing them as one gives the same distribution of every
    # output, so u agrees with the run that draws each input, within four standard errors of the
    # difference of two independent runs (u·√(2/(2(M − 1)))).
    rig = RIGS[name]()
    inputs, _ = comp.build_inputs(rig)
    model = VirtualRig(rig)
    assert Sampler(inputs, None, model.additive_inputs(list(inputs))).held  # some inputs are merged
    m = 40_000
    merged = monte_carlo(model, inputs, trials=m, rng=np.random.default_rng(3), joint=False)
    each = monte_carlo(lambda **kw: model(**kw), inputs, trials=m, rng=np.random.default_rng(4), joint=False)
    for out in merged.names:
        u = each[out].u
        assert merged[out].u == pytest.approx(u, abs=4 * u * math.sqrt(1.0 / (m - 1))), out
