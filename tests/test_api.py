"""The Python API: ``budget.run`` and the result's DataFrames and correlated ``uncertainties`` values."""

from __future__ import annotations

import math

import numpy as np
import pytest
from uncertainties import correlation_matrix

import budget
from budget.inputs.rig_file import load_rig
from budget.propagation import monte_carlo
from budget.rig import components as comp
from budget.rig.model import VirtualRig
from tests.paths import TEMPLATES

TRIALS = 20_000


@pytest.fixture(scope="module")
def sweep():
    return budget.run(TEMPLATES / "gain_sweep.toml", seed=1, trials=TRIALS)


def test_public_names():
    assert {"run", "RunResult"} <= set(budget.__all__)
    assert isinstance(budget.run(load_rig(TEMPLATES / "gauge_static.toml"), seed=2, trials=10_000), budget.RunResult)


def test_summary_one_row_per_output(sweep):
    s = sweep.summary()
    assert list(s.index) == [ob.name for ob in sweep.outputs]
    for ob in sweep.outputs:
        row = s.loc[ob.name]
        assert row["method"] == ob.method
        assert (row["low"], row["high"]) == ob.result_interval
        assert (row["mc_low"], row["mc_high"]) == ob.monte_carlo.interval
        assert row["dominant"] == ob.dominant.name


def test_table_one_row_per_component(sweep):
    t = sweep.table()
    assert len(t) == sum(len(ob.components) for ob in sweep.outputs)
    for ob in sweep.outputs:
        sub = t[t["output"] == ob.name]
        # the components' contributions add in quadrature to u_c (JCGM 100 eq. (10), uncorrelated groups)
        assert math.isclose(math.sqrt((sub["contribution"] ** 2).sum()), ob.linear.u, rel_tol=0.02)
        has_u = sub["u_input"].notna() & (sub["u_input"] > 0)
        assert np.allclose(sub["effective_sensitivity"][has_u] * sub["u_input"][has_u], sub["contribution"][has_u])


def test_linear_values_carry_the_linear_covariance(sweep):
    uf = sweep.to_ufloats(method="linear")
    for ob in sweep.outputs:
        assert uf[ob.name].nominal_value == ob.linear.estimate
        assert math.isclose(uf[ob.name].std_dev, ob.linear.u, rel_tol=1e-9)
    r = correlation_matrix([uf["gain"], uf["intercept"]])[0, 1]
    assert math.isclose(r, sweep.gain_summary.correlation_linear, abs_tol=1e-9)


def test_mc_values_carry_the_monte_carlo_covariance(sweep):
    uf = sweep.to_ufloats()
    for ob in sweep.outputs:
        assert math.isclose(uf[ob.name].std_dev, ob.monte_carlo.u, rel_tol=1e-6)
    # the gain–intercept correlation the run computed from its trial-order values
    r = correlation_matrix([uf["gain"], uf["intercept"]])[0, 1]
    assert math.isclose(r, sweep.gain_summary.correlation_mc, abs_tol=1e-9)
    with pytest.raises(ValueError, match="method"):
        sweep.to_ufloats(method="other")


def test_angle_correlation_matches_an_independent_monte_carlo(sweep):
    """ρ(P1, P3) from to_ufloats() against the sample correlation of an independent Monte Carlo run
    (another seed, the trials kept in order) and u(P3 − P1) propagated by ``uncertainties`` against the
    sample standard deviation of the differences. Sampling error of a correlation coefficient:
    (1 − ρ²)/√M for a bivariate normal (Fisher 1915, from memory); of a standard deviation s/√(2(M − 1))."""
    uf = sweep.to_ufloats()
    rho = correlation_matrix([uf["P1"], uf["P3"]])[0, 1]
    rig = load_rig(TEMPLATES / "gain_sweep.toml")
    inputs, corr = comp.build_inputs(rig, None)
    mc = monte_carlo(VirtualRig(rig, None), inputs, p=0.95, trials=TRIALS, rng=np.random.default_rng(99),
                     correlation=corr or None, joint=("P1", "P3"))
    a, b = mc.joint["P1"], mc.joint["P3"]
    rho_ref = np.corrcoef(a, b)[0, 1]
    se = math.sqrt(2) * (1 - rho_ref**2) / math.sqrt(TRIALS)  # two independent estimates
    assert abs(rho - rho_ref) < 4 * se, (rho, rho_ref, se)
    d = (uf["P3"] - uf["P1"]).std_dev
    s = np.std(b - a, ddof=1)
    assert abs(d - s) < 4 * math.sqrt(2) * s / math.sqrt(2 * (TRIALS - 1)), (d, s)


def test_p_defaults_to_the_goal_p_as_the_command_does(tmp_path):
    import tomllib

    from budget.errors import BudgetInputError
    from budget.inputs.toml_text import dumps_toml

    doc = tomllib.loads((TEMPLATES / "gauge_static.toml").read_text(encoding="utf-8"))
    doc["goal"]["p"] = 0.99
    path = tmp_path / "gauge99.toml"
    path.write_text(dumps_toml(doc), encoding="utf-8")
    res = budget.run(path, seed=1, trials=10_000)
    assert res.p == 0.99 and all(g.p == 0.99 for g in res.goals)
    assert budget.run(path, seed=1, trials=10_000, p=0.99).p == 0.99
    with pytest.raises(BudgetInputError, match=r"^p = 0.95 differs from the 'p' field of \[goal\] \(0.99\)"):
        budget.run(path, seed=1, trials=10_000, p=0.95)
