"""Straight-line estimators: OLS, WLS, GLS and York's errors-in-both-coordinates fit."""

from __future__ import annotations

import numpy as np

from budget.errors import BudgetComputationError, field_error
from budget.fit import _checks
from budget.fit.line import StraightLine

#: Relative change of the slope at which the York iteration stops.
YORK_RTOL = 1e-15
#: Default cap on York iterations; exceeding it raises :class:`FitConvergenceError`.
YORK_MAX_ITER = 200

_WHERE = "straight_line"


class FitConvergenceError(BudgetComputationError):
    """An iterative fit did not reach its tolerance within its iteration cap."""


def _chi2_check(chi2: float, dof: int) -> tuple[float, bool]:
    from scipy.stats import chi2 as chi2_dist  # deferred: keeps ``import budget.fit`` light

    p95 = float(chi2_dist.ppf(0.95, dof))
    return p95, bool(chi2 <= p95)


def _weighted(x: np.ndarray, y: np.ndarray, w: np.ndarray
              ) -> tuple[float, float, np.ndarray, np.ndarray]:
    """ISO/TS 28037:2010 clause 6 (steps with w_i = 1/u(y_i)): b, a, covariance, residuals."""
    w2 = w * w
    f2 = w2.sum()
    g0 = (w2 * x).sum() / f2
    h0 = (w2 * y).sum() / f2
    g = w * (x - g0)
    h = w * (y - h0)
    G2 = (g * g).sum()
    b = (g * h).sum() / G2
    a = h0 - b * g0
    cov = np.array([[1.0 / G2, -g0 / G2], [-g0 / G2, 1.0 / f2 + g0 * g0 / G2]])
    return float(b), float(a), cov, y - (a + b * x)


def _gls(x: np.ndarray, y: np.ndarray, L: np.ndarray
         ) -> tuple[float, float, np.ndarray, np.ndarray, float]:
    """Gauss–Markov fit with V = L Lᵀ: whiten with L⁻¹, then QR (no explicit inverse of V)."""
    from scipy.linalg import solve_triangular

    xc = x.mean()  # centre x for conditioning, undone below
    A = np.column_stack([x - xc, np.ones_like(x)])
    Aw = solve_triangular(L, A, lower=True)
    yw = solve_triangular(L, y, lower=True)
    Q, R = np.linalg.qr(Aw)
    b, ac = solve_triangular(R, Q.T @ yw)
    Rinv = solve_triangular(R, np.eye(2))
    J = np.array([[1.0, 0.0], [-xc, 1.0]])  # (b, a_c) -> (b, a = a_c − b·xc)
    cov = J @ (Rinv @ Rinv.T) @ J.T
    rw = yw - Aw @ np.array([b, ac])
    a = ac - b * xc
    return float(b), float(a), cov, y - (a + b * x), float(rw @ rw)


def _york(x: np.ndarray, y: np.ndarray, ux: np.ndarray, uy: np.ndarray, max_iter: int
          ) -> tuple[float, float, np.ndarray, float, int]:
    """York et al. (2004), Am. J. Phys. 72:367, section III, with r_i = 0."""
    wx, wy = 1.0 / ux**2, 1.0 / uy**2
    b = _weighted(x, y, np.ones_like(x))[0]  # step 1: OLS start
    # A slope near zero cannot meet a relative test at rounding level: floor it
    # with the data's own slope scale.
    floor = YORK_RTOL * np.ptp(y) / np.ptp(x)
    for iteration in range(1, max_iter + 1):
        W = wx * wy / (wx + b * b * wy)  # step 3 (r_i = 0)
        xbar = (W * x).sum() / W.sum()  # step 4
        ybar = (W * y).sum() / W.sum()
        U, V = x - xbar, y - ybar
        beta = W * (U / wy + b * V / wx)  # step 5
        b_new = (W * beta * V).sum() / (W * beta * U).sum()  # step 6
        change, b = abs(b_new - b), b_new
        if change <= max(YORK_RTOL * abs(b), floor):
            n_iter = iteration
            break
    else:
        raise FitConvergenceError(
            f"York fit: the slope did not settle to a relative {YORK_RTOL:g} within "
            f"{max_iter} iterations (last change {change:.3g}).")
    W = wx * wy / (wx + b * b * wy)
    xbar = (W * x).sum() / W.sum()
    ybar = (W * y).sum() / W.sum()
    beta = W * ((x - xbar) / wy + b * (y - ybar) / wx)
    a = ybar - b * xbar  # step 7
    adj = xbar + beta  # step 8: least-squares adjusted x_i
    adj_bar = (W * adj).sum() / W.sum()
    var_b = 1.0 / (W * (adj - adj_bar) ** 2).sum()  # step 9
    cov_ab = -adj_bar * var_b
    cov = np.array([[var_b, cov_ab], [cov_ab, 1.0 / W.sum() + adj_bar**2 * var_b]])
    chi2 = float((W * (y - b * x - a) ** 2).sum())
    return float(b), float(a), cov, chi2, n_iter


def straight_line(x: object, y: object, u_x: object = None, u_y: object = None,
                  cov_y: object = None, *, max_iter: int = YORK_MAX_ITER) -> StraightLine:
    """Fit y = intercept + slope·x, choosing the method from the uncertainties given.

    Parameters
    ----------
    x, y : array_like
        At least three finite points; x not all equal.
    u_x : float or array_like, optional
        Standard uncertainties of x (> 0). Needs ``u_y``; selects the York fit.
    u_y : float or array_like, optional
        Standard uncertainties of y (> 0), uncorrelated: weighted least squares.
    cov_y : array_like, optional
        n×n covariance of y (symmetric positive definite): generalized least
        squares. Not together with ``u_y`` or ``u_x``.
    max_iter : int, optional
        Iteration cap of the York fit.

    Returns
    -------
    StraightLine
        Estimates, covariance of (slope, intercept), χ², residuals.

    Raises
    ------
    budget.errors.BudgetInputError
        On any bad input; the message names the field.
    FitConvergenceError
        When the York iteration exceeds ``max_iter``.

    Notes
    -----
    - ``"ols"`` (nothing given): ordinary least squares; the covariance is
      scaled by s² = RSS/(n − 2), as in the NIST StRD certified values and
      JCGM 100 H.3. ``chi2`` is the plain RSS, ``chi2_p95`` and
      ``chi2_consistent`` are None (σ was estimated from the same residuals).
    - ``"wls"`` (``u_y``): ISO/TS 28037:2010 clause 6; covariance from the
      weights, not rescaled; χ² = Σ((y_i − a − b x_i)/u_i)².
    - ``"gls"`` (``cov_y``): ISO/TS 28037:2010 clause 8 / Gauss–Markov:
      covariance (AᵀV⁻¹A)⁻¹, χ² = rᵀV⁻¹r, computed through the Cholesky
      factor of V.
    - ``"york"`` (``u_x`` and ``u_y``): York et al. 2004, Am. J. Phys. 72:367,
      section III, uncorrelated errors (the same line as the generalized
      distance regression of ISO/TS 28037 clause 7); σb² = 1/ΣW_i u_i² and
      σa² = 1/ΣW_i + x̄²σb² with the adjusted points x_i = X̄ + β_i, and
      cov(a, b) = −x̄σb². Stops when the slope changes by at most 1e-15
      relative.
    - Weighted methods check χ² against the 95 % quantile of χ²(n − 2)
      (ISO/TS 28037 clauses 6–8).
    """
    xs = _checks.points(x, "x", _WHERE)
    ys = _checks.points(y, "y", _WHERE, n=xs.size)
    _checks.spread_x(xs, "x", _WHERE)
    n = xs.size
    if cov_y is not None and u_y is not None:
        raise field_error("cov_y", "None when u_y is given (give one description of y)",
                          _checks.shown(cov_y), _WHERE)
    if u_x is not None and u_y is None:
        if cov_y is not None:
            raise field_error("u_x", "None when cov_y is given (York fit needs u_y)",
                              _checks.shown(u_x), _WHERE)
        raise field_error("u_y", "given when u_x is given (the York fit needs both)", None,
                          _WHERE)
    dof = n - 2
    p95 = consistent = r2 = None
    iterations = 0
    if u_x is not None:
        ux = _checks.uncertainties(u_x, n, "u_x", _WHERE)
        uy = _checks.uncertainties(u_y, n, "u_y", _WHERE)
        if not (isinstance(max_iter, int | np.integer) and max_iter >= 1):
            raise field_error("max_iter", "an integer >= 1", max_iter, _WHERE)
        b, a, cov, chi2, iterations = _york(xs, ys, ux, uy, max_iter)
        method, resid = "york", ys - (a + b * xs)
    elif u_y is not None:
        uy = _checks.uncertainties(u_y, n, "u_y", _WHERE)
        b, a, cov, resid = _weighted(xs, ys, 1.0 / uy)
        method, chi2 = "wls", float(((resid / uy) ** 2).sum())
    elif cov_y is not None:
        L = _checks.covariance_factor(cov_y, n, "cov_y", _WHERE)
        b, a, cov, resid, chi2 = _gls(xs, ys, L)
        method = "gls"
    else:
        b, a, cov, resid = _weighted(xs, ys, np.ones(n))
        method, chi2 = "ols", float((resid**2).sum())
        cov = cov * (chi2 / dof)
        tss = float(((ys - ys.mean()) ** 2).sum())
        r2 = 1.0 - chi2 / tss if tss > 0 else None  # undefined when y has no spread
    if method != "ols":
        p95, consistent = _chi2_check(chi2, dof)
    return StraightLine(
        method=method, slope=b, intercept=a, covariance=cov, chi2=chi2, dof=dof,
        residuals=resid, residual_sd=float(np.sqrt((resid**2).sum() / dof)),
        span=(float(xs.min()), float(xs.max())), r_squared=r2, chi2_p95=p95,
        chi2_consistent=consistent, iterations=iterations,
    )
