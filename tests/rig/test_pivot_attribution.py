"""Issue 10 item 4: with a fitted pivot the reports show what comes through the fit (the budget with an
exact pivot beside it) and say that a pivot mark or a longer arc would remove it."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from budget.commands.new import STARTERS
from budget.inputs.rig_file import load_rig
from budget.report.jsonout import run_to_dict
from budget.rig import components as comp
from budget.rig.budget import run_budget
from tests.paths import TEMPLATES


@pytest.fixture(scope="module")
def sweep():
    rig = load_rig(TEMPLATES / STARTERS["sweep"])
    return rig, run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(1)), trials=5000)


def test_the_sweep_templates_gain_comes_through_the_fit(sweep):
    """The template's u(K) is 8.8e-3 °/V with the fitted pivot; with an exact pivot the camera's tilt
    changes the angles only to second order (tan(θ′ − φ) = cos β·tan(θ − φ), geometry.rotate_tilt), so its
    linear term vanishes and what is left is the rest of the budget, about 1.9e-3 °/V."""
    _, res = sweep
    g = res.gain
    assert g.linear.u == pytest.approx(8.8e-3, rel=0.05)
    assert g.u_exact_pivot == pytest.approx(1.9e-3, rel=0.1)
    skew = next(c for c in g.components if c.name == comp.SKEW)
    assert skew.contribution > 8e-3 and skew.u_exact_pivot < 1e-9 * skew.contribution
    words = [w for w in g.warnings if "comes through the fit" in w]
    assert len(words) == 1 and "pivot mark" in words[0] and "longer arc" in words[0]
    assert "camera skew" in words[0] and "96 % of u²" in words[0]


def test_pointer_repeatability_in_the_gain_is_the_ols_slope_term(sweep):
    """[derived] OLS slope: u(K) = s/√Σ(V − V̄)² for independent reading errors of sd s (the zero image's
    shifts every angle alike and goes into the intercept): s = 0.01°, V = 1…9 V: Σ = 60, u = 1.291e-3 °/V,
    the same with the fitted and the exact pivot."""
    _, res = sweep
    rep = next(c for c in res.gain.components if c.name == comp.REPEAT)
    assert rep.contribution == pytest.approx(0.01 / math.sqrt(60.0), rel=1e-6)
    assert rep.u_exact_pivot == pytest.approx(0.01 / math.sqrt(60.0), rel=1e-6)


def test_the_json_shows_the_fit_beside_the_exact_pivot(sweep):
    _, res = sweep
    doc = json.loads(json.dumps(run_to_dict(res)))
    blob = json.dumps(doc)
    assert "pivot_fit" in blob and "u_exact_pivot" in blob
    fit = _find(doc, "pivot_fit")
    assert fit and all(0.0 <= f["percent_of_variance_through_fit"] <= 100.0 for f in fit)


def _find(node, key):
    out = []
    if isinstance(node, dict):
        for k, v in node.items():
            out += [v] if k == key else _find(v, key)
    elif isinstance(node, list):
        for v in node:
            out += _find(v, key)
    return out


def test_a_pivot_mark_has_no_fit_to_attribute():
    rig = load_rig(TEMPLATES / STARTERS["moving"])
    assert rig.pivot.method == "mark"
    res = run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(1)), trials=2000)
    assert all(ob.u_exact_pivot is None for ob in res.angles)
    assert not any("comes through the fit" in w for ob in res.angles for w in ob.warnings)


def test_a_contribution_at_the_rounding_floor_prints_as_zero():
    """With an exact pivot a tilt moves a gain only at second order, and the linear method's central
    differences leave about 1e-13 of u there: the words print it as 0 at u's digits, not as 6.1e-14."""
    from budget.rig.attribution import _at_digits_of
    assert _at_digits_of(6.1e-14, 0.0088) == "0"
    assert _at_digits_of(0.0, 0.0088) == "0"
    assert _at_digits_of(4.9e-5, 0.0088) == "0"  # below the last of u's two digits (0.0001 / 2)
    assert _at_digits_of(5.1e-5, 0.0088) == "5.1e-05"
    assert _at_digits_of(0.0019, 0.0088) == "0.0019"
