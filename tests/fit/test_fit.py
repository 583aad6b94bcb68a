"""Unit and derived checks of budget.fit (published-value checks: tests/reference/)."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from budget.errors import BudgetInputError
from budget.fit import (
    FitConvergenceError,
    StraightLine,
    ols_batch,
    ols_batch_residuals,
    straight_line,
)

X = np.array([0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0])
Y = np.array([0.12, 10.3, 19.7, 30.4, 39.8, 50.6, 59.7, 70.2])
U = np.array([0.1, 0.2, 0.15, 0.3, 0.2, 0.25, 0.1, 0.4])


def test_method_follows_the_uncertainties_given():
    assert straight_line(X, Y).method == "ols"
    assert straight_line(X, Y, u_y=U).method == "wls"
    assert straight_line(X, Y, cov_y=np.diag(U**2)).method == "gls"
    assert straight_line(X, Y, u_x=0.01, u_y=U).method == "york"


def test_ols_reports_rss_and_no_consistency_check():
    # [derived] OLS: chi2 is the plain residual sum of squares; s² = RSS/(n − 2).
    line = straight_line(X, Y)
    assert line.chi2 == pytest.approx((line.residuals**2).sum(), rel=1e-14)
    assert line.residual_sd == pytest.approx(np.sqrt(line.chi2 / 6), rel=1e-14)
    assert line.chi2_p95 is None and line.chi2_consistent is None
    np.testing.assert_allclose(line.residuals, Y - (line.intercept + line.slope * X), atol=1e-13)


def test_wls_covariance_is_not_rescaled_and_chi2_check():
    # [derived] ISO/TS 28037 clause 6: covariance (AᵀWA)⁻¹ from the weights alone.
    line = straight_line(X, Y, u_y=U)
    A = np.column_stack([X, np.ones_like(X)]) / U[:, None]
    np.testing.assert_allclose(line.covariance, np.linalg.inv(A.T @ A), rtol=1e-12)
    assert line.chi2 > line.chi2_p95 and line.chi2_consistent is False
    # The same x and y but with u scaled up 3×: chi2/9, now consistent; covariance × 9.
    wide = straight_line(X, Y, u_y=3 * U)
    assert wide.chi2 == pytest.approx(line.chi2 / 9, rel=1e-12)
    assert wide.chi2_consistent is True
    np.testing.assert_allclose(wide.covariance, 9 * line.covariance, rtol=1e-12)
    assert wide.slope == pytest.approx(line.slope, rel=1e-14)


def test_gls_with_diagonal_covariance_equals_wls():
    # [derived] V = diag(u²) makes the Gauss–Markov estimator the weighted one.
    wls = straight_line(X, Y, u_y=U)
    gls = straight_line(X, Y, cov_y=np.diag(U**2))
    assert gls.slope == pytest.approx(wls.slope, rel=1e-13)
    assert gls.intercept == pytest.approx(wls.intercept, rel=1e-12)
    np.testing.assert_allclose(gls.covariance, wls.covariance, rtol=1e-12)
    assert gls.chi2 == pytest.approx(wls.chi2, rel=1e-12)


def test_gls_against_normal_equations():
    # [derived] Gauss–Markov: β = (AᵀV⁻¹A)⁻¹AᵀV⁻¹y, C = (AᵀV⁻¹A)⁻¹, χ² = rᵀV⁻¹r,
    # evaluated here with explicit inverses on a well-conditioned random SPD matrix.
    rng = np.random.default_rng(seed=7)
    M = rng.normal(loc=0.0, scale=0.1, size=(8, 8))
    V = M @ M.T + np.diag(U**2)
    line = straight_line(X, Y, cov_y=V)
    A = np.column_stack([X, np.ones_like(X)])
    Vi = np.linalg.inv(V)
    C = np.linalg.inv(A.T @ Vi @ A)
    beta = C @ A.T @ Vi @ Y
    r = Y - A @ beta
    np.testing.assert_allclose([line.slope, line.intercept], beta, rtol=1e-10)
    np.testing.assert_allclose(line.covariance, C, rtol=1e-10)
    assert line.chi2 == pytest.approx(r @ Vi @ r, rel=1e-9)


def test_gls_systematic_terms_in_the_column_space_add_in_quadrature():
    # [derived] If V = D + A S Aᵀ (effects that the line itself can absorb), the GLS
    # estimate equals the fit with D alone and its covariance is (AᵀD⁻¹A)⁻¹ + S
    # (Woodbury identity). Common offset: A·(0, 1) = 1, adds u_o² to u²(intercept).
    # Common gain g on the true values t = a0 + b0·x: A·(b0, a0) = t, adds
    # u_g²·(b0, a0)(b0, a0)ᵀ.
    u_o, u_g, b0, a0 = 0.3, 2e-3, 10.0, 0.5
    t = a0 + b0 * X
    V = np.diag(U**2) + u_o**2 * np.ones((8, 8)) + u_g**2 * np.outer(t, t)
    random_only = straight_line(X, Y, u_y=U)
    full = straight_line(X, Y, cov_y=V)
    p = np.array([b0, a0])
    expected = random_only.covariance + u_o**2 * np.diag([0.0, 1.0]) + u_g**2 * np.outer(p, p)
    np.testing.assert_allclose(full.covariance, expected, rtol=1e-10)
    assert full.slope == pytest.approx(random_only.slope, rel=1e-11)
    assert full.intercept == pytest.approx(random_only.intercept, rel=1e-9, abs=1e-12)


def test_york_reduces_to_wls_when_x_is_exact():
    # [derived] York et al. 2004 with ω(X) → ∞: W_i → ω(Y_i), β_i → U_i, so the slope,
    # intercept and σ formulas become those of WLS. u_x = 1e-9 leaves terms of order
    # (b·u_x/u_y)² ≈ 1e-14, hence rtol 1e-10.
    wls = straight_line(X, Y, u_y=U)
    york = straight_line(X, Y, u_x=1e-9, u_y=U)
    assert york.slope == pytest.approx(wls.slope, rel=1e-10)
    assert york.intercept == pytest.approx(wls.intercept, rel=1e-10)
    np.testing.assert_allclose(york.covariance, wls.covariance, rtol=1e-10)
    assert york.chi2 == pytest.approx(wls.chi2, rel=1e-10)


def test_york_is_symmetric_in_the_axes():
    # [derived] The York (generalized distance) line treats x and y alike: fitting x on y
    # with the uncertainties swapped gives slope 1/b and intercept −a/b.
    u_x = np.linspace(0.02, 0.08, 8)
    line = straight_line(X, Y, u_x=u_x, u_y=U)
    swapped = straight_line(Y, X, u_x=U, u_y=u_x)
    assert swapped.slope == pytest.approx(1 / line.slope, rel=1e-12)
    assert swapped.intercept == pytest.approx(-line.intercept / line.slope, rel=1e-11)
    assert swapped.chi2 == pytest.approx(line.chi2, rel=1e-11)


def test_york_iteration_cap_raises():
    with pytest.raises(FitConvergenceError, match="2 iterations"):
        straight_line(X, Y, u_x=0.5, u_y=U, max_iter=2)
    assert straight_line(X, Y, u_x=0.5, u_y=U).iterations > 2


def test_covariance_order_and_correlation():
    line = straight_line(X, Y, u_y=U)
    assert line.u_slope == pytest.approx(np.sqrt(line.covariance[0, 0]))
    assert line.u_intercept == pytest.approx(np.sqrt(line.covariance[1, 1]))
    assert line.correlation == pytest.approx(
        line.covariance[0, 1] / (line.u_slope * line.u_intercept))
    assert -1 < line.correlation < 0  # x > 0 everywhere: slope and intercept anticorrelated


def test_result_is_frozen_and_serializable():
    line = straight_line(X, Y, u_y=U)
    assert isinstance(line, StraightLine)
    with pytest.raises(AttributeError):
        line.slope = 1.0
    with pytest.raises(ValueError):
        line.covariance[0, 0] = 1.0
    with pytest.raises(ValueError):
        line.residuals[0] = 1.0
    d = json.loads(json.dumps(line.as_dict()))
    assert d["method"] == "wls" and d["dof"] == 6 and d["span"] == [0.0, 7.0]


def test_predict_and_inverse_shapes_and_round_trip():
    line = straight_line(X, Y, u_y=U)
    y0, u0 = line.predict(3.5)
    assert isinstance(y0, float) and isinstance(u0, float)
    x0, _ = line.inverse(y0)
    assert x0 == pytest.approx(3.5, rel=1e-14)
    ys, us = line.predict(np.array([1.0, 2.0, 3.0]), u_x0=0.1)
    assert ys.shape == us.shape == (3,)
    xs, uxs = line.inverse(np.array([5.0, 6.0]), u_y0=np.array([0.1, 0.2]))
    assert xs.shape == uxs.shape == (2,)
    # [derived] u(y0) is narrowest at x0 = −cov(a,b)/u²(b) where it equals the
    # conditional standard deviation of the intercept at that point.
    c = line.covariance
    x_min = -c[0, 1] / c[0, 0]
    _, u_min = line.predict(x_min)
    assert u_min == pytest.approx(np.sqrt(c[1, 1] - c[0, 1] ** 2 / c[0, 0]), rel=1e-12)
    assert line.predict(x_min + 1.0)[1] > u_min


def test_exact_line_ols():
    line = straight_line([0.0, 1.0, 2.0, 3.0], [1.0, 3.0, 5.0, 7.0])
    assert (line.slope, line.intercept) == (2.0, 1.0)
    assert line.predict(10.0) == (21.0, 0.0)
    assert line.r_squared == 1.0


def test_extrapolation_amount():
    line = straight_line(X, Y)
    assert line.span == (0.0, 7.0)
    assert line.extrapolation(3.0) == 0.0
    np.testing.assert_array_equal(line.extrapolation([-2.0, 0.0, 7.0, 9.5]), [2.0, 0, 0, 2.5])


@pytest.mark.parametrize("xs", [np.linspace(0.0, 10.0, 10), None])
def test_ols_batch_equals_straight_line_row_by_row(xs):
    rng = np.random.default_rng(seed=3)
    M, n = 50, 10
    x = xs if xs is not None else rng.uniform(low=-5.0, high=5.0, size=(M, n))
    Yb = rng.normal(loc=100.0 + 26.98 * x, scale=0.05, size=(M, n))
    slope, intercept = ols_batch(x, Yb)
    s2, i2, res = ols_batch_residuals(x, Yb)
    np.testing.assert_array_equal(slope, s2)
    np.testing.assert_array_equal(intercept, i2)
    for m in range(M):
        row_x = x if x.ndim == 1 else x[m]
        line = straight_line(row_x, Yb[m])
        assert slope[m] == pytest.approx(line.slope, rel=1e-12)
        assert intercept[m] == pytest.approx(line.intercept, rel=1e-12)
        np.testing.assert_allclose(res[m], line.residuals, rtol=0, atol=1e-11)


@pytest.mark.parametrize(
    ("call", "field"),
    [
        (lambda: straight_line([1, 2], [1, 2]), "x"),
        (lambda: straight_line([1, 2, 3], [1, 2]), "y"),
        (lambda: straight_line([2, 2, 2], [1, 2, 3]), "x"),
        (lambda: straight_line([1, np.nan, 3], [1, 2, 3]), "x"),
        (lambda: straight_line([1, 2, 3], [1, np.inf, 3]), "y"),
        (lambda: straight_line([[1, 2, 3]], [1, 2, 3]), "x"),
        (lambda: straight_line(["a", 2, 3], [1, 2, 3]), "x"),
        (lambda: straight_line(X, Y, u_y=0.0), "u_y"),
        (lambda: straight_line(X, Y, u_y=-U), "u_y"),
        (lambda: straight_line(X, Y, u_y=np.where(X == 3, np.nan, U)), "u_y"),
        (lambda: straight_line(X, Y, u_y=np.inf), "u_y"),
        (lambda: straight_line(X, Y, u_y=U[:5]), "u_y"),
        (lambda: straight_line(X, Y, u_x=0.1), "u_y"),
        (lambda: straight_line(X, Y, u_x=0.0, u_y=U), "u_x"),
        (lambda: straight_line(X, Y, u_x=np.full(8, np.nan), u_y=U), "u_x"),
        (lambda: straight_line(X, Y, u_x=0.1, u_y=U, max_iter=0), "max_iter"),
        (lambda: straight_line(X, Y, u_y=U, cov_y=np.eye(8)), "cov_y"),
        (lambda: straight_line(X, Y, u_x=0.1, cov_y=np.eye(8)), "u_x"),
        (lambda: straight_line(X, Y, cov_y=np.eye(7)), "cov_y"),
        (lambda: straight_line(X, Y, cov_y=np.eye(8) * np.nan), "cov_y"),
        (lambda: straight_line(X, Y, cov_y=np.eye(8) - 2 * np.eye(8)), "cov_y"),
        (lambda: straight_line(X, Y, cov_y=np.eye(8) + np.triu(np.ones((8, 8)), 1)), "cov_y"),
        (lambda: straight_line([0, 1, 2], [0, 1, 2], cov_y=np.ones((3, 3))), "cov_y"),
        (lambda: straight_line(X, Y).predict(np.nan), "x0"),
        (lambda: straight_line(X, Y).predict(1.0, u_x0=-0.1), "u_x0"),
        (lambda: straight_line(X, Y).inverse(1.0, u_y0=np.inf), "u_y0"),
        (lambda: straight_line(X, Y).inverse(np.inf), "y0"),
        (lambda: straight_line(X, 5 + 0 * X).inverse(1.0), "slope"),
        (lambda: straight_line(X, Y).extrapolation(np.nan), "x0"),
        (lambda: ols_batch(X, Y), "Y"),
        (lambda: ols_batch(X[:5], np.ones((4, 8))), "x"),
        (lambda: ols_batch(X[:2], np.ones((4, 2))), "Y"),
        (lambda: ols_batch(np.ones(8), np.ones((4, 8))), "x"),
        (lambda: ols_batch(np.where(X == 3, np.nan, X), np.ones((4, 8))), "x"),
    ],
)
def test_bad_input_names_the_field(call, field):
    with pytest.raises(BudgetInputError, match=f"^The '{field}' field of ") as info:
        call()
    assert isinstance(info.value, ValueError)
    assert "\n" not in str(info.value)


def test_cov_y_messages_say_what_is_wrong():
    with pytest.raises(BudgetInputError, match="not symmetric"):
        straight_line(X, Y, cov_y=np.eye(8) + np.triu(np.ones((8, 8)), 1))
    with pytest.raises(BudgetInputError, match="not positive definite"):
        straight_line(X, Y, cov_y=-np.eye(8))
    with pytest.raises(BudgetInputError, match=r"Got -0.5 at index 2 instead"):
        straight_line(X, Y, u_y=np.where(X == 2, -0.5, U))


finite = st.floats(min_value=-1e3, max_value=1e3, allow_nan=False)


@settings(max_examples=60, deadline=None, derandomize=True, database=None)
@given(shift=finite, seed=st.integers(min_value=0, max_value=2**32 - 1))
def test_slope_and_its_uncertainty_do_not_depend_on_where_x_starts(shift, seed):
    # [derived] Replacing x by x + c leaves b, u(b) and the residuals unchanged and moves the
    # intercept to a − b·c, for every method.
    rng = np.random.default_rng(seed=seed)
    y = rng.normal(loc=2.0 + 0.5 * X, scale=0.3, size=8)
    for kwargs in ({}, {"u_y": U}, {"u_x": 0.05, "u_y": U}):
        ref = straight_line(X, y, **kwargs)
        moved = straight_line(X + shift, y, **kwargs)
        scale = 1.0 + abs(shift)
        assert moved.slope == pytest.approx(ref.slope, rel=1e-9 * scale, abs=1e-12 * scale)
        assert moved.u_slope == pytest.approx(ref.u_slope, rel=1e-9 * scale)
        assert moved.intercept == pytest.approx(ref.intercept - ref.slope * shift,
                                                rel=1e-9, abs=1e-10 * scale**2)
        np.testing.assert_allclose(moved.residuals, ref.residuals, atol=1e-9 * scale**2)


@settings(max_examples=60, deadline=None, derandomize=True, database=None)
@given(k=st.floats(min_value=1e-3, max_value=1e3), seed=st.integers(min_value=0, max_value=99))
def test_scaling_y_scales_the_line(k, seed):
    # [derived] y → k·y (with u(y) → k·u(y)) scales slope, intercept by k, the covariance
    # by k², and leaves χ² unchanged.
    rng = np.random.default_rng(seed=seed)
    y = rng.normal(loc=2.0 + 0.5 * X, scale=0.3, size=8)
    for method, ref, scaled in [
        ("ols", straight_line(X, y), straight_line(X, k * y)),
        ("wls", straight_line(X, y, u_y=U), straight_line(X, k * y, u_y=k * U)),
    ]:
        assert scaled.slope == pytest.approx(k * ref.slope, rel=1e-10), method
        assert scaled.intercept == pytest.approx(k * ref.intercept, rel=1e-10), method
        np.testing.assert_allclose(scaled.covariance, k**2 * ref.covariance, rtol=1e-10)
        if method == "wls":
            assert scaled.chi2 == pytest.approx(ref.chi2, rel=1e-10)
