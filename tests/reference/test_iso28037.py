"""ISO/TS 28037:2010 clause 6 examples (WLS, known u(y_i)) through budget.fit, and the inverse use.

Source and what it proves (see references/iso28037_clause6_wls.toml for the provenance):
the data are those of the standard's two clause 6 examples (checked against NPL's software
to support ISO/TS 28037:2010(E)); the expected numbers are computed here by the clause 6
algorithm as published there (tests/oracles/iso28037.py) and by numpy.polyfit with
cov="unscaled", because the standard's printed results could not be read. The inverse
(clause 11.1, prediction of x from a measured y) is checked against the `uncertainties`
package with the fit's correlated (a, b); the y0 used are ours, not the standard's.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest
import uncertainties

from budget.fit import straight_line
from tests.oracles.iso28037 import inverse_clause11, wls_clause6
from tests.paths import REFERENCES

with open(REFERENCES / "iso28037_clause6_wls.toml", "rb") as _f:
    DATA = tomllib.load(_f)
EXAMPLES = ("equal_weights", "unequal_weights")


def _fit(name):
    d = DATA[name]
    return d, straight_line(d["x"], d["y"], u_y=d["u_y"]), wls_clause6(d["x"], d["y"], d["u_y"])


def test_provenance_is_stated():
    assert DATA["mark"] == "checked" and "NPL" in DATA["checked_against"]
    assert "clause 6" in DATA["citation"]


@pytest.mark.parametrize("name", EXAMPLES)
def test_clause6_example_against_the_published_algorithm(name):
    # Tolerance: floating-point rounding of two different computations of the same sums.
    _, line, ref = _fit(name)
    assert line.method == "wls"
    assert line.intercept == pytest.approx(ref["a"], rel=1e-12)
    assert line.slope == pytest.approx(ref["b"], rel=1e-12)
    assert line.u_intercept**2 == pytest.approx(ref["u2a"], rel=1e-12)
    assert line.u_slope**2 == pytest.approx(ref["u2b"], rel=1e-12)
    assert line.covariance[0, 1] == pytest.approx(ref["uab"], rel=1e-12)
    assert line.chi2 == pytest.approx(ref["chi2"], rel=1e-12)
    assert line.dof == ref["nu"] == 4
    assert line.chi2_p95 == pytest.approx(ref["chi2_95"], rel=1e-9)
    assert line.chi2_consistent is (ref["chi2"] <= ref["chi2_95"])


@pytest.mark.parametrize("name", EXAMPLES)
def test_clause6_example_against_numpy_polyfit(name):
    # numpy.polyfit with w = 1/u and cov="unscaled": the covariance from the weights alone,
    # as clause 6 prescribes for known uncertainties (no rescaling by chi2/nu).
    d, line, _ = _fit(name)
    coef, cov = np.polyfit(d["x"], d["y"], 1, w=1.0 / np.asarray(d["u_y"]), cov="unscaled")
    assert [line.slope, line.intercept] == pytest.approx(coef, rel=1e-10)
    np.testing.assert_allclose(line.covariance, cov, rtol=1e-9)


@pytest.mark.parametrize("name", EXAMPLES)
@pytest.mark.parametrize(("y0", "u_y0"), [(10.5, 0.5), (4.0, 0.2), (7.0, 0.05)])
def test_inverse_evaluation(name, y0, u_y0):
    # y0, u(y0) are ours (the clause 11.1 examples' values were not readable).
    _, line, ref = _fit(name)
    x0, u_x0 = line.inverse(y0, u_y0)
    b, a = uncertainties.correlated_values([line.slope, line.intercept], line.covariance.tolist())
    y = uncertainties.ufloat(y0, u_y0)
    expected = (y - a) / b
    assert x0 == pytest.approx(expected.nominal_value, rel=1e-12)
    assert u_x0 == pytest.approx(expected.std_dev, rel=1e-9)
    assert (x0, u_x0) == pytest.approx(inverse_clause11(ref, y0, u_y0), rel=1e-9)


@pytest.mark.parametrize("name", EXAMPLES)
def test_inverse_is_the_forward_evaluation_undone(name):
    _, line, _ = _fit(name)
    y0, u_y0 = line.predict(4.5)
    x0, _ = line.inverse(y0)
    assert x0 == pytest.approx(4.5, rel=1e-12)
