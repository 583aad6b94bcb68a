"""The linear method (JCGM 100:2008 clause 5, annex G): sensitivities, eq. (13), eq. (14),
Welch–Satterthwaite, k, budget rows and groups, several outputs, bad input.

External references: analytic derivatives [derived]; the `uncertainties` package (exact
derivatives by automatic differentiation: the general-purpose reference); scipy.stats.t.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import uncertainties
from scipy import stats
from uncertainties import umath

from budget.errors import BudgetInputError
from budget.propagation import (
    InputQuantity,
    Normal,
    Rectangular,
    StudentT,
    Triangular,
    coverage_factor,
    linear,
)

# The five-point central difference with h = 10⁻²·u has truncation error ~h⁴f⁽⁵⁾/30 and
# rounding error ~ε|f|/h; for the well-scaled models below both are below 10⁻¹¹ relative,
# so 10⁻⁹ leaves two orders of margin [derived].
SENS_RTOL = 1e-9


def _sens(result) -> dict[str, float]:
    return {r.name: r.sensitivity for r in result.rows}


# ---------------------------------------------------------------- sensitivities vs analytic

def test_sensitivities_product_exponential_sine():
    # y = x·exp(z) + sin(w)/v; partial derivatives by hand [derived].
    x, z, w, v = 1.3, -0.4, 0.7, 2.5

    def model(x, z, w, v):
        return x * np.exp(z) + np.sin(w) / v

    inputs = {"x": Normal(x, 0.02), "z": Normal(z, 0.01), "w": Rectangular(w - 0.05, w + 0.05),
              "v": Triangular(v - 0.1, v + 0.1)}
    res = linear(model, inputs)
    expect = {"x": math.exp(z), "z": x * math.exp(z), "w": math.cos(w) / v, "v": -math.sin(w) / v**2}
    got = _sens(res)
    for k, val in expect.items():
        assert got[k] == pytest.approx(val, rel=SENS_RTOL), k
    assert res.estimate == pytest.approx(x * math.exp(z) + math.sin(w) / v, rel=1e-15)
    # u_c² = Σ (c_i u_i)² for uncorrelated inputs, JCGM 100 eq. (10).
    u_expect = math.sqrt(sum((expect[k] * inputs[k].u) ** 2 for k in expect))
    assert res.u == pytest.approx(u_expect, rel=SENS_RTOL)


def test_sensitivities_power_and_quotient():
    # y = a³/b² + log(a·b) [derived]: ∂y/∂a = 3a²/b² + 1/a, ∂y/∂b = −2a³/b³ + 1/b.
    a, b = 2.0, 0.8
    res = linear(lambda a, b: a**3 / b**2 + np.log(a * b), {"a": Normal(a, 0.01), "b": Normal(b, 0.004)})
    got = _sens(res)
    assert got["a"] == pytest.approx(3 * a**2 / b**2 + 1 / a, rel=SENS_RTOL)
    assert got["b"] == pytest.approx(-2 * a**3 / b**3 + 1 / b, rel=SENS_RTOL)


def test_sensitivities_atan2():
    # θ = atan2(y, x): ∂θ/∂x = −y/r², ∂θ/∂y = x/r² [derived].
    x, y = 150.0, 85.0
    res = linear(lambda x, y: np.arctan2(y, x), {"x": Normal(x, 0.1), "y": Normal(y, 0.1)})
    r2 = x * x + y * y
    got = _sens(res)
    assert got["x"] == pytest.approx(-y / r2, rel=SENS_RTOL)
    assert got["y"] == pytest.approx(x / r2, rel=SENS_RTOL)


# ---------------------------------------------------------------- against `uncertainties`

POINTS = {  # pixel coordinates: zero image target, reading target, pivot
    "x0": (520.0, 0.05), "y0": (250.0, 0.05),
    "x1": (420.0, 0.07), "y1": (415.0, 0.04),
    "xc": (320.4, 0.3), "yc": (240.7, 0.25),
}


def _angle(x0, y0, x1, y1, xc, yc):
    return np.arctan2(y1 - yc, x1 - xc) - np.arctan2(y0 - yc, x0 - xc)


def test_angle_model_against_uncertainties():
    # The `uncertainties` package propagates with exact (automatic) derivatives, JCGM 100
    # eq. (10); our central differences must give the same u to 1e-8 relative [see SENS_RTOL].
    inputs = {k: Normal(m, s) for k, (m, s) in POINTS.items()}
    res = linear(_angle, inputs)
    uv = {k: uncertainties.ufloat(m, s) for k, (m, s) in POINTS.items()}
    theta = umath.atan2(uv["y1"] - uv["yc"], uv["x1"] - uv["xc"]) - umath.atan2(
        uv["y0"] - uv["yc"], uv["x0"] - uv["xc"])
    assert res.estimate == pytest.approx(theta.nominal_value, rel=1e-14)
    assert res.u == pytest.approx(theta.std_dev, rel=1e-8)
    for row in res.rows:
        assert row.sensitivity == pytest.approx(theta.derivatives[uv[row.name]], rel=1e-8)


def test_correlated_inputs_eq13_against_uncertainties():
    # JCGM 100 eq. (13): u_c² = Σ_ij c_i c_j r_ij u_i u_j, checked against
    # uncertainties.correlated_values (exact derivatives, same covariance) to 1e-8 relative.
    means = np.array([1.5, -0.8, 0.3])
    u = np.array([0.02, 0.03, 0.05])
    r = np.array([[1.0, 0.6, -0.3], [0.6, 1.0, 0.2], [-0.3, 0.2, 1.0]])
    cov = r * np.outer(u, u)

    def model(a, b, c):
        return a * b + np.sin(c) * a**2

    res = linear(model, {"a": Normal(means[0], u[0]), "b": Normal(means[1], u[1]),
                         "c": Normal(means[2], u[2])},
                 correlation={("a", "b"): 0.6, ("c", "a"): -0.3, ("b", "c"): 0.2})
    a, b, c = uncertainties.correlated_values(means, cov)
    ref = a * b + umath.sin(c) * a**2
    assert res.u == pytest.approx(ref.std_dev, rel=1e-8)
    # A row's percent is its covariance share; the shares sum to 100 % (linear.py docstring).
    assert sum(row.percent for row in res.rows) == pytest.approx(100.0, rel=1e-12)
    # A negative correlation makes the result differ from the uncorrelated one [derived].
    res0 = linear(model, {"a": Normal(means[0], u[0]), "b": Normal(means[1], u[1]),
                          "c": Normal(means[2], u[2])})
    assert abs(res.u - res0.u) > 1e-3 * res0.u


def test_full_correlation_is_allowed():
    # r = +1 between a and b in y = a − b: u_c = |u_a − u_b| (JCGM 100 5.2.2 note 1) [derived].
    res = linear(lambda a, b: a - b, {"a": Normal(1.0, 0.3), "b": Normal(1.0, 0.1)},
                 correlation={("a", "b"): 1.0})
    assert res.u == pytest.approx(0.2, rel=1e-12)


# ---------------------------------------------------------------- second-order terms

def test_second_order_product_of_normals():
    # y = x1·x2, independent normals: u² = x2²u1² + x1²u2² + u1²u2² (JCGM 100 5.1.2 note,
    # eq. (14) [derived]; exact variance of a product of independent normals). Differences of a
    # bilinear function are exact up to rounding: 1e-9 relative.
    x1, u1, x2, u2 = 3.0, 0.4, -2.0, 0.5
    res = linear(lambda a, b: a * b, {"a": Normal(x1, u1), "b": Normal(x2, u2)}, second_order=True)
    assert res.u == pytest.approx(math.sqrt(x2**2 * u1**2 + x1**2 * u2**2 + u1**2 * u2**2), rel=1e-9)
    assert res.u_first_order == pytest.approx(math.hypot(x2 * u1, x1 * u2), rel=1e-9)
    assert res.u_second_order == pytest.approx(u1 * u2, rel=1e-6)
    assert res.second_order


def test_second_order_square_at_zero():
    # y = x², x ~ N(0, u²): first order gives 0; eq. (14) gives ½(2)²u⁴ = 2u⁴, the exact
    # variance of x² [derived]. The second difference of a quadratic is exact: 1e-9 relative.
    u = 0.3
    res = linear(lambda x: x**2, {"x": Normal(0.0, u)}, second_order=True)
    assert res.u_first_order == 0.0
    assert res.u == pytest.approx(math.sqrt(2.0) * u**2, rel=1e-9)
    assert res.warnings == ()


def test_second_order_third_derivative_term():
    # y = x³ at x0: eq. (14) diagonal term ½(6x0)² u⁴ + (3x0²)(6) u⁴ [derived]. The stencil is
    # exact for a cubic up to rounding (~ε|f|/h³ ≈ 1e-10 here): 1e-6 relative.
    x0, u = 1.5, 0.2
    res = linear(lambda x: x**3, {"x": Normal(x0, u)}, second_order=True)
    second = 0.5 * (6 * x0) ** 2 * u**4 + 3 * x0**2 * 6 * u**4
    assert res.u == pytest.approx(math.sqrt((3 * x0**2 * u) ** 2 + second), rel=1e-6)


# ---------------------------------------------------------------- ν_eff, k, U

def test_welch_satterthwaite_by_hand():
    # JCGM 100 eq. (G.2b): ν_eff = u_c⁴ / Σ u_i⁴(y)/ν_i, truncated to the next lower integer
    # (G.4.1 note 1); k = t_p(ν_eff) from scipy.stats.t.ppf (JCGM 100 G.3.4). Hand computation.
    inputs = {
        "a": StudentT(mean=10.0, scale=0.3, dof=4),     # c = 1
        "b": Normal(mean=2.0, sd=0.2, dof=9),           # c = 3
        "c": Rectangular(low=-0.5, high=0.5),           # c = −2, ν = ∞
    }
    res = linear(lambda a, b, c: a + 3 * b - 2 * c, inputs, p=0.95)
    ui = np.array([0.3, 3 * 0.2, 2 * 0.5 / math.sqrt(3.0)])
    uc = math.sqrt(float(np.sum(ui**2)))
    nu = uc**4 / (ui[0] ** 4 / 4 + ui[1] ** 4 / 9)
    assert res.u == pytest.approx(uc, rel=1e-10)
    # By hand: u_c² = 0.09 + 0.36 + 1/3 = 0.78333, u_c⁴ = 0.613611;
    # Σ u_i⁴/ν_i = 0.0081/4 + 0.1296/9 = 0.016425; ν = 37.358 before truncation (G.6.4).
    assert res.nu_eff == math.floor(nu)
    assert res.k == pytest.approx(stats.t.ppf(0.975, 37), rel=1e-12)
    assert res.U == pytest.approx(res.k * res.u, rel=1e-15)
    assert res.interval == pytest.approx((res.estimate - res.U, res.estimate + res.U))
    assert [r.dof for r in res.rows][:2] == [4.0, 9.0]
    assert [r.evaluation for r in res.rows] == ["A", "B", "B"]


def test_infinite_dof_gives_normal_quantile():
    # All ν infinite: ν_eff = ∞, k = z_0.975 = 1.95996... (scipy.stats.norm.ppf).
    res = linear(lambda a, b: a + b, {"a": Normal(0.0, 1.0), "b": Rectangular(-1.0, 1.0)})
    assert math.isinf(res.nu_eff)
    assert res.k == pytest.approx(stats.norm.ppf(0.975), rel=1e-15)


@pytest.mark.parametrize(("p", "nu"), [(0.6827, 3), (0.9545, 10), (0.99, 16), (0.95, 1), (0.9973, 50)])
def test_coverage_factor_against_scipy(p, nu):
    # k = t_p(ν) = t.ppf((1 + p)/2, ν) (JCGM 100 G.3.4); scipy is the general-purpose reference.
    assert coverage_factor(p, nu) == pytest.approx(stats.t.ppf(0.5 * (1 + p), nu), rel=1e-14)


def test_coverage_probability_sets_k():
    res = linear(lambda a: 2 * a, {"a": Normal(0.0, 1.0)}, p=0.99)
    assert res.k == pytest.approx(stats.norm.ppf(0.995), rel=1e-14)
    assert res.p == 0.99


# ---------------------------------------------------------------- rows and groups

def test_group_contribution_is_root_sum_square():
    # A group's contribution is the square root of its share of the variance; for uncorrelated
    # members that is the root-sum-square of their c_i u_i [derived from JCGM 100 eq. (10)].
    inputs = {
        "n1": InputQuantity(Normal(0.0, 0.03), unit="px", group="centroid noise", source="frames"),
        "n2": InputQuantity(Normal(0.0, 0.04), unit="px", group="centroid noise", source="frames"),
        "q": InputQuantity(Rectangular(-0.5, 0.5), unit="px", group="quantization", source="1 px"),
        "t": InputQuantity(Normal(0.0, 0.01), unit="rad", source="datasheet"),
    }
    res = linear(lambda n1, n2, q, t: 2 * n1 - n2 + 0.1 * q + 5 * t, inputs)
    groups = {g.name: g for g in res.groups}
    assert list(groups) == ["centroid noise", "quantization", "t"]
    assert groups["centroid noise"].contribution == pytest.approx(math.hypot(0.06, 0.04), rel=1e-10)
    assert groups["centroid noise"].inputs == ("n1", "n2")
    assert groups["centroid noise"].sources == ("frames",)
    assert groups["quantization"].contribution == pytest.approx(0.1 / math.sqrt(12.0), rel=1e-10)
    assert groups["t"].contribution == pytest.approx(0.05, rel=1e-10)
    assert sum(g.percent for g in res.groups) == pytest.approx(100.0, rel=1e-12)
    assert sum(r.percent for r in res.rows) == pytest.approx(100.0, rel=1e-12)
    # Rows carry what a reader needs: unit, source, the quoted value and divisor.
    row_q = next(r for r in res.rows if r.name == "q")
    assert (row_q.unit, row_q.source, row_q.group) == ("px", "1 px", "quantization")
    assert row_q.value / row_q.divisor == pytest.approx(row_q.u, rel=1e-15)
    assert res.u == pytest.approx(math.sqrt(sum(g.contribution**2 for g in res.groups)), rel=1e-12)


def test_percent_of_uncorrelated_rows():
    # percent_i = (c_i u_i)²/u_c² [derived].
    res = linear(lambda a, b: a + b, {"a": Normal(0.0, 3.0), "b": Normal(0.0, 4.0)})
    assert [r.percent for r in res.rows] == pytest.approx([36.0, 64.0], rel=1e-10)
    assert [r.contribution for r in res.rows] == pytest.approx([3.0, 4.0], rel=1e-10)


def test_dominant_component_warning():
    res = linear(lambda a, b: a + b, {"a": Normal(0.0, 10.0), "b": Normal(0.0, 1.0)})
    assert any("Component 'a'" in w for w in res.warnings)


def test_zero_sensitivity_warning_square_at_zero():
    # y = x² at x = 0: first-order sensitivity zero (JCGM 100 5.1.2 note); the budget must say so.
    res = linear(lambda x: x**2, {"x": Normal(0.0, 1.0)})
    assert res.u == 0.0
    assert any("Input 'x' has zero first-order sensitivity" in w for w in res.warnings)
    res2 = linear(lambda x, z: x**2 + z, {"x": Normal(0.0, 1.0), "z": Normal(1.0, 0.1)})
    assert any("Input 'x'" in w and "zero first-order" in w for w in res2.warnings)
    assert not any("Input 'z'" in w for w in res2.warnings)


# ---------------------------------------------------------------- several outputs

def test_multi_output_covariance_by_hand():
    # U_y = C U_x Cᵀ (JCGM 102 6.2.1.3; JCGM 100 F.1.2.3 for the covariance of two outputs),
    # with C computed by hand: s = a + b, m = a·b → C = [[1, 1], [b, a]] [derived].
    a, ua, b, ub, r = 2.0, 0.1, 5.0, 0.2, 0.4
    res = linear(lambda a, b: {"s": a + b, "m": a * b}, {"a": Normal(a, ua), "b": Normal(b, ub)},
                 correlation={("a", "b"): r})
    c = np.array([[1.0, 1.0], [b, a]])
    ux = np.array([[ua**2, r * ua * ub], [r * ua * ub, ub**2]])
    expect = c @ ux @ c.T
    assert res.names == ("s", "m")
    np.testing.assert_allclose(res.jacobian, c, rtol=1e-9)
    np.testing.assert_allclose(res.covariance, expect, rtol=1e-9)
    assert res["s"].u == pytest.approx(math.sqrt(expect[0, 0]), rel=1e-9)
    assert res["m"].u == pytest.approx(math.sqrt(expect[1, 1]), rel=1e-9)
    assert res["m"].estimate == pytest.approx(a * b, rel=1e-15)
    assert res.correlation[0, 1] == pytest.approx(expect[0, 1] / math.sqrt(expect[0, 0] * expect[1, 1]))


# ---------------------------------------------------------------- bad input

def _ab():
    return {"a": Normal(1.0, 0.1), "b": Normal(2.0, 0.1), "c": Normal(3.0, 0.1)}


def _sum(a, b, c):
    return a + b + c


@pytest.mark.parametrize("p", [0.0, 1.0, -0.5, 1.5, math.nan, "high"])
def test_bad_p(p):
    with pytest.raises(BudgetInputError, match=r"'p' field.*\(0, 1\)"):
        linear(_sum, _ab(), p=p)


@pytest.mark.parametrize(
    ("corr", "pattern"),
    [
        ({("a", "b"): 1.5}, r"'correlation\[\('a', 'b'\)\]' field.*\[-1, 1\].*1\.5"),
        ({("a", "b"): -1.01}, r"\[-1, 1\]"),
        ({("a", "b"): math.nan}, r"\[-1, 1\]"),
        ({("a", "b"): "strong"}, r"'correlation\[\('a', 'b'\)\]' field.*strong"),
        ({("a", "zz"): 0.3}, r"'correlation' field.*known inputs.*'zz'"),
        ({("a", "a"): 0.3}, r"'correlation' field.*two different inputs"),
        ({("a", "b", "c"): 0.3}, r"'correlation' field.*pairs"),
        ({("a", "b"): 0.2, ("b", "a"): 0.3}, r"one value"),
        # r_ab = r_bc = 0.9, r_ac = −0.9: not positive semi-definite (smallest eigenvalue < 0).
        ({("a", "b"): 0.9, ("b", "c"): 0.9, ("a", "c"): -0.9}, r"positive semi-definite"),
    ],
)
def test_bad_correlation(corr, pattern):
    with pytest.raises(BudgetInputError, match=pattern):
        linear(_sum, _ab(), correlation=corr)


def test_model_returning_nan_names_the_input_values():
    def model(x, z):
        with np.errstate(invalid="ignore"):
            return np.sqrt(x) + z

    with pytest.raises(BudgetInputError) as info:
        linear(model, {"x": Normal(0.0, 1.0), "z": Normal(7.0, 0.5)})
    msg = str(info.value)
    assert "nan" in msg and "x=" in msg and "z=7" in msg and "finite" in msg


@pytest.mark.parametrize(
    "model",
    [lambda a, b, c: 1.0, lambda a, b, c: np.stack([a, b]), lambda a, b, c: (a + b)[:-1]],
    ids=["scalar", "2-d", "short"],
)
def test_model_returning_wrong_shape(model):
    with pytest.raises(BudgetInputError, match=r"'model' field.*shape"):
        linear(model, _ab())


def test_second_order_with_correlation_is_refused():
    with pytest.raises(BudgetInputError, match="'second_order' field"):
        linear(_sum, _ab(), correlation={("a", "b"): 0.5}, second_order=True)


@pytest.mark.parametrize(
    ("inputs", "field"),
    [({}, "inputs"), ({"a": 1.0}, r"inputs\['a'\]"), ({"not a name": Normal(0.0, 1.0)}, "inputs"),
    ],
)
def test_bad_inputs_mapping(inputs, field):
    with pytest.raises(BudgetInputError, match=f"'{field}' field"):
        linear(lambda **kw: sum(kw.values()), inputs)


def test_bad_input_quantity():
    with pytest.raises(BudgetInputError, match="'evaluation' field of InputQuantity"):
        InputQuantity(Normal(0.0, 1.0), evaluation="C")
    with pytest.raises(BudgetInputError, match="'distribution' field of InputQuantity"):
        InputQuantity(0.1)


@pytest.mark.parametrize(("n", "nu_i"), [(2, 5.0), (3, 4.0), (4, 9.0), (5, 3.0)])
@pytest.mark.parametrize("scale", [0.00123, 0.0417, 0.3, 1.7, 2.9, 7.3])
def test_welch_satterthwaite_of_equal_contributions_is_exact(n, nu_i, scale):
    # [derived] from JCGM 100 eq. (G.2b): n equal contributions u each with ν_i dof give
    # u_c⁴ = n²u⁴ and Σ u⁴/ν_i = n·u⁴/ν_i, so ν_eff = n·ν_i exactly. The truncation of
    # G.4.1 note 1 must not turn a rounding error of 1 ulp (e.g. 9.999999999999998) into
    # ν_eff − 1. Exact equality: the value is an integer by the algebra.
    inputs = {f"x{i}": Normal(mean=1.0, sd=scale, dof=nu_i) for i in range(n)}
    res = linear(lambda **kw: sum(kw.values()), inputs)
    assert res.nu_eff == n * nu_i
    assert res.k == pytest.approx(stats.t.ppf(0.975, n * nu_i), rel=1e-12)


def test_correlation_of_an_output_with_zero_u_is_zero():
    # [derived] an output with zero sensitivity to every input has u = 0 and zero covariance
    # with the others (C U_x Cᵀ, JCGM 102 6.2); its correlation is reported as 0 (1 with
    # itself), not 0/0 = NaN. r(a + b, a − b) = (0.01 − 0.04)/0.05 = −0.6 by hand.
    res = linear(lambda a, b: {"s": a + b, "c": 0.0 * a + 3.0, "d": a - b},
                 {"a": Normal(1.0, 0.1), "b": Normal(2.0, 0.2)})
    r = res.correlation
    assert res["c"].u == 0.0
    assert np.all(np.isfinite(r))
    assert r[1, 1] == 1.0 and r[0, 1] == r[1, 0] == r[1, 2] == 0.0
    assert r[0, 2] == pytest.approx(-0.6, rel=1e-9)


@pytest.mark.parametrize("scale", [1e-200, 1e150])
def test_second_order_terms_survive_tiny_and_huge_uncertainties(scale):
    """[derived] JCGM 100 5.1.2 note, eq. (14) for y = x1·x2 with normal inputs:
    u² = x2²u1² + x1²u2² + u1²u2². With u1 = scale the terms must neither under- nor overflow
    (the stencil steps are proportional to u; relative 1e-6 covers the difference quotients)."""
    x1, x2, u1, u2 = 3.0, 2.0, scale, 0.5
    res = linear(lambda a, b: a * b, {"a": Normal(x1, u1), "b": Normal(x2, u2)}, second_order=True)
    want = math.sqrt(x2**2 * u1**2 + x1**2 * u2**2 + u1**2 * u2**2)
    assert math.isfinite(res.u) and res.u == pytest.approx(want, rel=1e-6)
