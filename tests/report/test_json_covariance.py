"""The JSON record carries the outputs' joint covariance by each method.

Internal consistency (no outside reference applies): the matrices are symmetric, their diagonals are
the u² each output's budget states, the slope-intercept correlation they imply is the one the record
states, and the Monte Carlo matrix is positive semi-definite as a sample covariance must be; the
linear one is C U_x Cᵀ (JCGM 102 6.2), checked against the sensitivities of the linear result.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from budget.report.jsonout import run_to_dict, run_to_json


@pytest.mark.parametrize("fixture", ["gauge", "sweep"])
def test_the_covariance_is_the_one_each_budget_states(fixture, request):
    result = request.getfixturevalue(fixture)
    doc = json.loads(run_to_json(result))
    cov = doc["covariance"]
    names = cov["outputs"]
    budgets = {ob.name: ob for ob in result.angles}
    if result.gain is not None:
        budgets["gain"] = result.gain
        budgets["intercept"] = result.gain_summary.intercept
    assert names == list(budgets)
    assert cov["units"] == ["deg/V" if n == "gain" else "deg" for n in names]
    for key, method in (("linear", "linear"), ("monte_carlo", "monte_carlo")):
        m = np.array(cov[key])
        assert m.shape == (len(names), len(names))
        np.testing.assert_allclose(m, m.T, rtol=0, atol=1e-15 * np.abs(m).max())
        u = [getattr(budgets[n], method).u for n in names]
        np.testing.assert_allclose(np.sqrt(np.diag(m)), u, rtol=1e-9)
    mc = np.array(cov["monte_carlo"])
    assert np.linalg.eigvalsh(mc).min() >= -1e-12 * np.abs(mc).max()
    if result.gain is not None:
        i, j = names.index("gain"), names.index("intercept")
        for key, stated in (("linear", "correlation_slope_intercept"),
                            ("monte_carlo", "correlation_slope_intercept_monte_carlo")):
            m = np.array(cov[key])
            assert m[i, j] / math.sqrt(m[i, i] * m[j, j]) == pytest.approx(doc["gain"][stated], rel=1e-9)


def test_the_linear_covariance_is_c_ux_ct(sweep):
    # JCGM 102 6.2: U_y = C U_x Cᵀ, here with uncorrelated inputs: Σ_k c_ik c_jk u_k²
    doc = run_to_dict(sweep)
    names = doc["covariance"]["outputs"]
    m = np.array(doc["covariance"]["linear"])
    rows = {n: {r.name: r for r in (sweep.gain if n == "gain" else sweep.gain_summary.intercept if n == "intercept"
                                    else next(a for a in sweep.angles if a.name == n)).linear.rows} for n in names}
    for a in ("P1", "P5", "gain"):
        for b in ("P9", "intercept"):
            want = sum(rows[a][k].sensitivity * rows[b][k].sensitivity * rows[a][k].u ** 2 for k in rows[a])
            assert m[names.index(a), names.index(b)] == pytest.approx(want, rel=1e-9)
