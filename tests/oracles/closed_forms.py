"""Closed-form results the package's models are checked against (test oracles, not package code).

Each is a published formula or a derivation in its docstring: the Thompson et al. (2002)
localization variance, the thin-lens field of view and parallax shift, and the circle-fit
covariance and pivot-error formulas (Chernov 2010). The package computes these effects by
simulating the rig; these closed forms say what the simulation must give.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from budget.errors import field_error
from budget.imaging.optics import _arr, _pos

#: sqrt(45) = 6.708...: the constant of the short-arc asymptote (derived in
#: :func:`short_arc_centre_sd`; quoted as 6.7 in Chernov 2010).
SHORT_ARC_FACTOR = float(np.sqrt(45.0))


def _check_positive(value, field: str, where: str) -> np.ndarray:
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        raise field_error(field, "a number > 0", value, where)
    return v


def _check_non_negative(value, field: str, where: str) -> np.ndarray:
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v < 0):
        raise field_error(field, "a number >= 0", value, where)
    return v


def thompson_variance(s_px: ArrayLike, a_px: ArrayLike, N: ArrayLike, b: ArrayLike) -> np.ndarray:
    """Localization variance of a Gaussian spot, Thompson, Larson & Webb 2002.

    Parameters
    ----------
    s_px : float or array_like
        Standard deviation of the spot, px.
    a_px : float or array_like
        Pixel size (1 when working in px).
    N : float or array_like
        Number of detected photons (electrons) in the spot.
    b : float or array_like
        Background noise per pixel, standard deviation in photons (for a
        shot-noise-limited background, the square root of the background
        photons per pixel).

    Returns
    -------
    numpy.ndarray or float
        Variance of one coordinate, px^2.

    Notes
    -----
    Thompson, Larson & Webb 2002, Biophys. J. 82:2775, eq. (14):
    ``<dx^2> = (s^2 + a^2/12)/N + 8 pi s^4 b^2 / (a^2 N^2)``.
    """
    s = _check_positive(s_px, "s_px", "thompson_variance")
    a = _check_positive(a_px, "a_px", "thompson_variance")
    n = _check_positive(N, "N", "thompson_variance")
    b = _check_non_negative(b, "b", "thompson_variance")
    return (s**2 + a**2 / 12.0) / n + 8.0 * np.pi * s**4 * b**2 / (a**2 * n**2)


def field_of_view_mm(sensor_mm: ArrayLike, magnification: ArrayLike) -> NDArray:
    """Field of view on the object, sensor size / m, in mm.

    Parameters
    ----------
    sensor_mm, magnification : array_like
        Sensor width, height or diagonal in mm (> 0), and lateral magnification m (> 0).

    Returns
    -------
    ndarray
        The matching object-side extent in mm ([derived] from the definition of m).
    """
    s = _pos(sensor_mm, "sensor_mm", "field_of_view_mm")
    m = _pos(magnification, "magnification", "field_of_view_mm")
    return s / m


def parallax_shift(rho: ArrayLike, height_mm: ArrayLike, distance_mm: ArrayLike) -> NDArray:
    """Apparent radial shift of a target at height h above a mark at image radius rho.

    Parameters
    ----------
    rho, height_mm, distance_mm : array_like
        Radial image position of the mark from the principal point (any unit, e.g. px);
        height h of the target above the dial plane toward the camera (< D); distance D
        from the lens to the dial plane (> 0).

    Returns
    -------
    ndarray
        rho h / (D - h), outward for h > 0, in the unit of rho.

    Notes
    -----
    [derived] Similar triangles: a lateral offset X images at f X / D on the dial and at
    f X / (D - h) at height h; the difference is rho (D / (D - h) - 1).
    """
    d = _pos(distance_mm, "distance_mm", "parallax_shift")
    h = _arr(height_mm, "height_mm", "a number < distance_mm", lambda a: a < d,
             "parallax_shift")
    return np.asarray(rho, dtype=float) * h / (d - h)


def circle_covariance(phi: ArrayLike, sigma: ArrayLike, radius: ArrayLike) -> NDArray:
    """Leading-order covariance of the fitted centre and radius (a, b, R).

    Parameters
    ----------
    phi : array_like, shape (..., n)
        Angles (rad) of the n >= 3 true points on the circle, seen from the centre.
    sigma : array_like
        Standard deviation of the isotropic, independent noise on each coordinate (same
        length unit as the result); broadcasts against phi's leading axes.
    radius : array_like
        Circle radius (> 0), broadcasting like sigma.  To leading order the covariance does
        not depend on it (see Notes); it is validated so callers describe the geometry once.

    Returns
    -------
    ndarray, shape (..., 3, 3)
        Covariance of (a, b, R) in squared length units.

    Notes
    -----
    Cov(a, b, R) = sigma^2 (J^T J)^-1 with J_i = [cos phi_i, sin phi_i, 1] (Chernov 2010,
    ch. 7, the leading-order covariance shared by the geometric, Kåsa, Pratt and Taubin fits).
    Full circle with n evenly spaced points: sigma^2 * diag(2/n, 2/n, 1/n).
    """
    ph = np.asarray(phi, dtype=float)
    sg = np.asarray(sigma, dtype=float)
    rd = np.asarray(radius, dtype=float)
    where = "circle_covariance"
    if ph.ndim < 1 or ph.shape[-1] < 3 or not np.all(np.isfinite(ph)):
        raise field_error("phi", "finite angles with at least 3 points on the last axis",
                          ph.shape if ph.ndim else ph, where)
    if not np.all(np.isfinite(sg)) or np.any(sg < 0):
        raise field_error("sigma", "a number >= 0", sigma, where)
    if not np.all(np.isfinite(rd)) or np.any(rd <= 0):
        raise field_error("radius", "a number > 0", radius, where)
    jac = np.stack((np.cos(ph), np.sin(ph), np.ones_like(ph)), axis=-1)
    jtj = np.einsum("...ni,...nj->...ij", jac, jac)
    cond = np.linalg.cond(jtj)
    if not np.all(np.isfinite(cond)) or np.any(cond > 1e14):
        raise field_error("phi", "at least 3 distinct angles per circle", ph, where)
    inv = np.linalg.inv(jtj)
    scale = np.broadcast_to(sg, np.broadcast_shapes(sg.shape, rd.shape)) ** 2
    return scale[..., None, None] * inv


def _check_arc(sigma: NDArray, n: object, alpha: NDArray, where: str) -> None:
    if not np.all(np.isfinite(sigma)) or np.any(sigma < 0):
        raise field_error("sigma", "a number >= 0", sigma, where)
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 3:
        raise field_error("n", "an integer >= 3", n, where)
    if not np.all(np.isfinite(alpha)) or np.any(alpha <= 0) or np.any(alpha > np.pi):
        raise field_error("half_angle_rad", "a number in (0, pi]", alpha, where)


def short_arc_centre_sd(sigma: ArrayLike, n: int, half_angle_rad: ArrayLike) -> NDArray:
    """Short-arc asymptote of the centre's standard deviation along the arc's bisector.

    Parameters
    ----------
    sigma : array_like
        Per-coordinate noise standard deviation of each point.
    n : int
        Number of points (>= 3), spread evenly over the arc.
    half_angle_rad : array_like
        Half-angle alpha of the arc, in (0, pi].

    Returns
    -------
    ndarray
        sqrt(45) * sigma / (sqrt(n) * alpha^2), same unit as sigma.

    Notes
    -----
    Chernov 2010, ch. 7 quotes ~6.7 sigma / (sqrt(n) alpha^2).  [derived] For points spread
    uniformly over [-alpha, alpha] with the bisector on phi = 0, the sin column of J decouples
    and Var(a) = sigma^2 / (n Var(cos phi)); Var(cos phi) = alpha^4 / 45 + O(alpha^6), hence
    the factor sqrt(45) = 6.708.  Quality of the asymptote against the exact value of
    :func:`arc_centre_sd` (evenly spaced, endpoints included), measured: exact/asymptote =
    0.63 (n = 3), 0.83 (n = 10), 0.98 (n = 100) at alpha = 10 deg; 0.64, 0.84, 0.99 at
    20 deg; 0.67, 0.88, 1.03 at 45 deg.  So the asymptote overstates the sd for few points
    (endpoints weigh more than a uniform spread) and is within 2 % for n >= 100 and
    alpha <= 20 deg.  Use :func:`arc_centre_sd` where it matters.
    """
    sg = np.asarray(sigma, dtype=float)
    al = np.asarray(half_angle_rad, dtype=float)
    _check_arc(sg, n, al, "short_arc_centre_sd")
    return SHORT_ARC_FACTOR * sg / (np.sqrt(n) * al * al)


def arc_centre_sd(sigma: ArrayLike, n: int, half_angle_rad: ArrayLike) -> NDArray:
    """Exact leading-order centre standard deviation along the bisector of an arc.

    Parameters
    ----------
    sigma : array_like
        Per-coordinate noise standard deviation of each point.
    n : int
        Number of points (>= 3), evenly spaced over the arc, both endpoints included.
    half_angle_rad : array_like
        Half-angle alpha of the arc, in (0, pi] (at pi the two endpoints coincide).

    Returns
    -------
    ndarray
        sqrt(Cov(a, a)) from :func:`circle_covariance` with phi = linspace(-alpha, alpha, n).

    Notes
    -----
    Chernov 2010, ch. 7: Cov(a, b, R) = sigma^2 (J^T J)^-1, evaluated for the bisector on the
    x axis.
    """
    sg = np.asarray(sigma, dtype=float)
    al = np.asarray(half_angle_rad, dtype=float)
    _check_arc(sg, n, al, "arc_centre_sd")
    phi = al[..., None] * np.linspace(-1.0, 1.0, int(n))
    cov = circle_covariance(phi, 1.0, 1.0)
    return sg * np.sqrt(cov[..., 0, 0])


def pivot_angle_error(
    theta_from_rad: ArrayLike,
    theta_to_rad: ArrayLike,
    delta_cx: ArrayLike,
    delta_cy: ArrayLike,
    radius: ArrayLike,
) -> NDArray:
    """First-order error of the angle between two track points seen from a wrong pivot.

    Parameters
    ----------
    theta_from_rad, theta_to_rad : array_like
        True angles (rad) of the two points about the true pivot, measured from +x toward +y.
    delta_cx, delta_cy : array_like
        Pivot error: estimated pivot minus true pivot (same length unit as radius).
    radius : array_like
        Distance of the points from the true pivot.

    Returns
    -------
    ndarray
        Measured minus true angle from theta_from to theta_to (rad):
        2 sin(Delta/2) / R * (delta_c . u_mid), Delta = theta_to - theta_from,
        u_mid = (cos m, sin m), m = (theta_from + theta_to) / 2.

    Notes
    -----
    [derived] A point p = c + R u(theta) seen from c + delta_c has the angle
    theta - (v(theta) . delta_c)/R to first order, v = (-sin theta, cos theta).  The
    difference of two such angles carries -(v_to - v_from) . delta_c / R, and
    v_to - v_from = -2 sin(Delta/2) u_mid.  Moving the pivot toward the points
    (delta_c . u_mid > 0) enlarges the angle they subtend.  Valid in any frame where angles
    are atan2(y, x) of that frame (in an image frame with y down, 'from +x toward +y' is
    clockwise on screen).  For small Delta the error is Delta * (delta_c . u_mid)/R: a
    relative gain error of delta_c_parallel / R (DESIGN.md section 3, pivot estimate).
    """
    t1 = np.asarray(theta_from_rad, dtype=float)
    t2 = np.asarray(theta_to_rad, dtype=float)
    mid = 0.5 * (t1 + t2)
    along = np.asarray(delta_cx) * np.cos(mid) + np.asarray(delta_cy) * np.sin(mid)
    return 2.0 * np.sin(0.5 * (t2 - t1)) * along / np.asarray(radius, dtype=float)


def pivot_angle_error_exact(
    theta_from_rad: ArrayLike,
    theta_to_rad: ArrayLike,
    delta_cx: ArrayLike,
    delta_cy: ArrayLike,
    radius: ArrayLike,
) -> NDArray:
    """Exact error of the angle between two track points seen from a wrong pivot (atan2).

    Parameters and return value as :func:`pivot_angle_error`; the result is wrapped to
    (-pi, pi].

    Notes
    -----
    [derived] Measured angle atan2(r0 x r, r0 . r) with r0, r the two points relative to the
    estimated pivot (DESIGN.md section 2), minus the true angle.
    """
    t1 = np.asarray(theta_from_rad, dtype=float)
    t2 = np.asarray(theta_to_rad, dtype=float)
    rad = np.asarray(radius, dtype=float)
    dcx = np.asarray(delta_cx, dtype=float)
    dcy = np.asarray(delta_cy, dtype=float)
    x0 = rad * np.cos(t1) - dcx
    y0 = rad * np.sin(t1) - dcy
    x1 = rad * np.cos(t2) - dcx
    y1 = rad * np.sin(t2) - dcy
    measured = np.arctan2(x0 * y1 - y0 * x1, x0 * x1 + y0 * y1)
    diff = measured - (t2 - t1)
    return np.arctan2(np.sin(diff), np.cos(diff))
