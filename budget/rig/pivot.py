"""The pivot as the user finds it: a circle fitted to the located target positions.

The budget simulates the fit in every trial, so its covariance and the pivot error it leaves
in an angle follow from the simulation; their closed forms (Chernov 2010) are test oracles in
``tests/oracles/closed_forms.py``. The fit is vectorized: leading array dimensions are Monte
Carlo trials and are carried through without Python loops over rows.

References
----------
Chernov, N. (2010). *Circular and Linear Regression: Fitting Circles and Lines by Least
Squares*. CRC Press (Chapman & Hall), Monographs on Statistics and Applied Probability 117.
Al-Sharadqah, A. and Chernov, N. (2009). Error analysis for circle fitting algorithms.
*Electronic Journal of Statistics* 3, 886-911, doi:10.1214/09-EJS419.
Taubin, G. (1991). Estimation of planar curves, surfaces and nonplanar space curves defined by
implicit equations. *IEEE Trans. PAMI* 13, 1115-1138.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from budget.errors import field_error

__all__ = ["fit_circle"]

_WHERE_FIT = "fit_circle"
_NEWTON_STEPS = 12
CONVERGED = 1e-14
"""A Gauss-Newton step that moves no row's centre or radius by more than this (in the fit's normalized
units: the points' rms distance from their centroid is 1) ends the refinement: see :func:`fit_circle`."""


def _taubin_normalized(xn: NDArray, yn: NDArray) -> tuple[NDArray, NDArray, NDArray]:
    """Taubin fit of points already centred and scaled so that mean(x^2 + y^2) = 1.

    ``xn``, ``yn`` have shape (n, m): point i of every row is the contiguous row ``xn[i]``, so
    each mean over the points is n - 1 vector additions.  The circle A z + B x + C y + D = 0
    (z = x^2 + y^2) minimising the mean squared algebraic distance under Taubin's constraint
    4 A^2 mean(z) + B^2 + C^2 = 1.  For centred data D = -A mean(z), and (2 A sqrt(mean z),
    B, C) is the eigenvector of the smallest eigenvalue of the 3x3 moment matrix S of
    [(z - mean z) / (2 sqrt(mean z)), x, y] (Chernov 2010, ch. 5, Taubin fit).  The eigenvalue
    is the smallest root of det(S - lambda I), found by Newton's method from 0, which converges
    monotonically because S is positive semi-definite; the centre then follows from the x and
    y rows of (S - lambda I) v = 0.
    """
    n = xn.shape[0]
    xx = np.einsum("ij,ij->j", xn, xn) / n
    yy = np.einsum("ij,ij->j", yn, yn) / n
    xy = np.einsum("ij,ij->j", xn, yn) / n
    z = xn * xn
    z += yn * yn
    s01 = 0.5 * np.einsum("ij,ij->j", xn, z) / n  # mean(z0 x), z0 = (z - 1) / 2
    s02 = 0.5 * np.einsum("ij,ij->j", yn, z) / n
    s00 = 0.25 * (np.einsum("ij,ij->j", z, z) / n - 1.0)
    c2 = s00 + xx + yy
    c1 = s00 * xx - s01 * s01 + s00 * yy - s02 * s02 + xx * yy - xy * xy
    c0 = (s00 * (xx * yy - xy * xy) - s01 * (s01 * yy - xy * s02)
          + s02 * (s01 * xy - xx * s02))
    lam = np.zeros_like(c0)
    for _ in range(_NEWTON_STEPS):
        f = ((lam - c2) * lam + c1) * lam - c0
        df = (3.0 * lam - 2.0 * c2) * lam + c1
        lam = lam - f / df
    det2 = (xx - lam) * (yy - lam) - xy * xy
    xc = ((yy - lam) * s01 - xy * s02) / det2
    yc = ((xx - lam) * s02 - xy * s01) / det2
    r = np.sqrt(xc * xc + yc * yc + 1.0)
    return xc, yc, r


def _gauss_newton(xn: NDArray, yn: NDArray, a: NDArray, b: NDArray, r: NDArray,
                  iterations: int) -> tuple[NDArray, NDArray, NDArray]:
    """At most ``iterations`` Gauss-Newton steps on sum (|p_i - c| - R)^2, all rows at once.

    Points on the first axis, shape (n, m), as in :func:`_taubin_normalized`; four work
    arrays of that shape are reused by every step, and each sum of products over the points
    is one ``einsum`` pass.  A row's steps end after a step that moved its centre and radius
    by no more than :data:`CONVERGED` (a row of nan never converges): later steps leave it as
    it is, so each row's result depends on its own points only, however the rows are batched,
    and no step is taken once every row has stopped.
    """
    n = xn.shape[0]
    ux = np.empty_like(xn)
    uy = np.empty_like(yn)
    d = np.empty_like(xn)
    t = np.empty_like(xn)
    stopped = None  # the rows whose last step moved them by no more than CONVERGED
    for _ in range(iterations):  # rows escaping to infinity give inf/nan, without warnings
        np.subtract(xn, a, out=ux)
        np.subtract(yn, b, out=uy)
        np.multiply(ux, ux, out=d)
        d += np.multiply(uy, uy, out=t)
        np.sqrt(d, out=d)  # |p_i - c|
        ux /= d  # cos phi_i
        uy /= d  # sin phi_i
        d -= r  # |p_i - c| - R
        # J_i = -[ux, uy, 1]; the step solves (J^T J) delta = -J^T d = g.  (The residuals are
        # summed as such: sum(ux d) rewritten as sum(x - a) - R sum(ux) cancels badly when the
        # centre is far away, on a short arc.)
        sxx = np.einsum("ij,ij->j", ux, ux)
        syy = n - sxx
        sxy = np.einsum("ij,ij->j", ux, uy)
        sx = ux.sum(axis=0)
        sy = uy.sum(axis=0)
        gx = np.einsum("ij,ij->j", ux, d)
        gy = np.einsum("ij,ij->j", uy, d)
        gr = d.sum(axis=0)
        # Symmetric 3x3 solve by the adjugate (cofactors of [[sxx, sxy, sx], [., syy, sy],
        # [., ., n]]).
        k00 = syy * n - sy * sy
        k01 = sx * sy - sxy * n
        k02 = sxy * sy - syy * sx
        k11 = sxx * n - sx * sx
        k12 = sxy * sx - sxx * sy
        k22 = sxx * syy - sxy * sxy
        det = sxx * k00 + sxy * k01 + sx * k02
        da = (k00 * gx + k01 * gy + k02 * gr) / det
        db = (k01 * gx + k11 * gy + k12 * gr) / det
        dr = (k02 * gx + k12 * gy + k22 * gr) / det
        done = np.maximum(np.maximum(np.abs(da), np.abs(db)), np.abs(dr)) <= CONVERGED  # nan: not done
        if stopped is None:
            a, b, r = a + da, b + db, r + dr
            stopped = done
        else:  # the rows already stopped keep their values
            a, b, r = (np.where(stopped, v, v + dv) for v, dv in ((a, da), (b, db), (r, dr)))
            stopped |= done
        if stopped.all():
            break
    return a, b, r


def fit_circle(
    x: ArrayLike, y: ArrayLike, *, iterations: int = 4, axis: int = -1
) -> tuple[NDArray, NDArray, NDArray]:
    """Fit a circle to every row of points: Taubin start, then geometric Gauss-Newton steps.

    Parameters
    ----------
    x, y : array_like, shape (..., n) or, with ``axis=0``, (n, ...)
        Point coordinates; axis ``axis`` holds the n >= 3 points of one track, the other axes
        are trials.  Any length unit (pixels, mm); the result is in the same unit.
    iterations : int, optional
        Most Gauss-Newton steps of the orthogonal-distance refinement (default 4; fewer for a
        row that has converged; 0 returns the Taubin fit).
    axis : int, optional
        The axis of the points: -1 (default) or 0.  The fit works with the points on the
        first axis, each point's values contiguous, so that every sum over the points is a
        few vector additions; ``axis=0`` with a C-contiguous array (as the virtual rig passes
        it) needs no copy.

    Returns
    -------
    xc, yc, r : ndarray, shape (...)
        Centre and radius of the geometric (orthogonal distance) best-fit circle of each row.

    Raises
    ------
    BudgetInputError
        If x and y differ in shape, n < 3, iterations is not a non-negative integer, or axis
        is not 0 or -1.

    Notes
    -----
    Start: the Taubin algebraic fit (Taubin 1991), computed per row as the smallest
    eigenvector of a 3x3 scatter matrix after centring and scaling each row (batched
    ``numpy.linalg.eigh``).  Taubin is chosen over Kåsa because Kåsa's estimate is strongly
    biased toward small circles on short arcs (Chernov 2010, ch. 5 and 7; Al-Sharadqah and
    Chernov 2009, sect. 7-8), and over Pratt because its essential (second-order) bias is half
    of Pratt's (Al-Sharadqah and Chernov 2009, sect. 8); all three share the same
    leading-order covariance.  The start is exact for noise-free points, including n = 3.

    Refinement: Gauss-Newton on d_i = |p_i - c| - R with J_i = -[cos phi_i, sin phi_i, 1]
    (Chernov 2010, ch. 4), at most ``iterations`` steps.  A row stops early once a step moved
    it by no more than 1e-14 of the points' rms spread (:data:`CONVERGED`): the steps left
    would move it by about as little again (Gauss-Newton converges linearly, each step a
    fraction of the last), at the rounding floor of the fit itself (about 1e-15 here), so the
    result is a smooth function of the data to that floor and central differences through it
    are well defined; the decision is the row's own, so its result does not depend on the
    other rows of the call.  On the templates' rigs the third step is at that floor, so the
    fourth is skipped.
    Taubin and geometric estimates differ by O(sigma^2), and Gauss-Newton converges
    linearly with a rate set by the residual size relative to the arc's conditioning.
    Measured (n = 10, 2*10^4 rows, distance to a 30-step solution relative to R, 99th
    percentile after 0, 1, 2, 3, 4 steps): half-angle 10 deg, sigma/R = 1e-3: 3e-4, 2e-7,
    3e-10, 3e-13, 3e-14 (rounding floor); 10 deg, 3e-3: 3e-3, 2e-5, 9e-8, 6e-10, 5e-12;
    20 deg, 1e-2: 8e-3, 1e-4, 2e-6, 5e-8, 1e-9; 90 deg, 1e-2: 4e-4, 2e-6, 2e-8, 1e-10,
    1e-12.  Four steps reach the rounding floor where the centre is well determined (centre
    sd below ~R/20) and stay well below the centre sd elsewhere.  On a very short, very
    noisy arc the geometric minimum may lie at infinity (the best fit is a line;
    Chernov 2010, ch. 3): with a centre sd of ~R/2, ~1.5 % of rows give a radius above 20 R
    and more steps can end in inf/nan; such rows are returned as computed, not repaired.
    Values are not checked for finiteness (hot path): a nan in a row gives nan in that
    row's result.  Cost: about 0.2-0.3 s for 10^5 rows of 10 points on one core.
    """
    xa = np.asarray(x, dtype=float)
    ya = np.asarray(y, dtype=float)
    if xa.shape != ya.shape:
        raise field_error("y", f"an array of the same shape as x {xa.shape}", ya.shape, _WHERE_FIT)
    if isinstance(axis, bool) or axis not in (0, -1):
        raise field_error("axis", "0 or -1", axis, _WHERE_FIT)
    if xa.ndim < 1 or xa.shape[axis] < 3:
        raise field_error("x", f"an array whose axis {axis} holds at least 3 points", xa.shape,
                          _WHERE_FIT)
    if isinstance(iterations, bool) or not isinstance(iterations, (int, np.integer)) \
            or iterations < 0:
        raise field_error("iterations", "an integer >= 0", iterations, _WHERE_FIT)
    if axis == -1:  # points to the front, one contiguous row per point
        xa, ya = np.moveaxis(xa, -1, 0), np.moveaxis(ya, -1, 0)
    n = xa.shape[0]
    lead = xa.shape[1:]
    xr = np.ascontiguousarray(xa).reshape(n, -1)
    yr = np.ascontiguousarray(ya).reshape(n, -1)
    xm = xr.mean(axis=0)
    ym = yr.mean(axis=0)
    xn = xr - xm
    yn = yr - ym
    s = np.sqrt((np.einsum("ij,ij->j", xn, xn) + np.einsum("ij,ij->j", yn, yn)) / n)
    xn /= s
    yn /= s
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        a, b, r = _taubin_normalized(xn, yn)
        a, b, r = _gauss_newton(xn, yn, a, b, r, iterations)
    xc = (xm + s * a).reshape(lead)
    yc = (ym + s * b).reshape(lead)
    r = (s * r).reshape(lead)
    return xc, yc, r
