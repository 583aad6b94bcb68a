"""Pinhole projection of a tilted dial, the tilt's angle error, and Brown-Conrady distortion.

Split from :mod:`budget.imaging.optics` (thin lens, diffraction, depth of field, blur, parallax).
Every function is a pure numpy function that broadcasts over leading axes (trials or candidates).

Frames.  Camera: x to the right (image u), y down (image v), z along the optical axis away
from the camera (right-handed).  Dial: the dial plane is Z = 0 with the pivot at the origin;
an untilted, centred camera at working distance D has ``R_cam = I`` and
``t_cam = (0, 0, D)``, so dial X maps to image u and dial Y to image v, and an angle
atan2(Y, X) on the dial is atan2(v - v_pivot, u - u_pivot) in the image (measured from +u
toward +v, clockwise on screen).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from budget.errors import field_error
from budget.imaging.optics import _arr

__all__ = [
    "distort",
    "project_points",
    "tilt_angle_error_approx",
    "tilt_max_angle_error",
    "tilt_rotation",
    "tilted_dial_angle",
    "undistort",
]


def tilt_rotation(beta_rad: ArrayLike, phi_rad: ArrayLike) -> NDArray:
    """Rotation matrices for a dial tilted by beta about an in-plane axis at azimuth phi.

    Parameters
    ----------
    beta_rad, phi_rad : array_like
        Tilt angle (rad, right-handed about the axis) and azimuth (rad) of the tilt axis
        a = (cos phi, sin phi, 0) in the dial plane.

    Returns
    -------
    ndarray, shape (..., 3, 3)
        R = cos(beta) I + sin(beta) [a]_x + (1 - cos(beta)) a a^T, broadcast over the inputs.

    Notes
    -----
    Rodrigues' rotation formula.  Used as ``R_cam`` in :func:`project_points`, it keeps the
    dial's component along a and scales the in-plane component perpendicular to a by
    cos(beta) in an orthographic view, so tan(theta' - phi) = cos(beta) tan(theta - phi)
    [derived].
    """
    b, p = np.broadcast_arrays(np.asarray(beta_rad, dtype=float), np.asarray(phi_rad, dtype=float))
    c, s = np.cos(b), np.sin(b)
    ax, ay = np.cos(p), np.sin(p)
    k = 1.0 - c
    rot = np.empty(b.shape + (3, 3))
    rot[..., 0, 0] = c + k * ax * ax
    rot[..., 0, 1] = k * ax * ay
    rot[..., 0, 2] = s * ay
    rot[..., 1, 0] = k * ax * ay
    rot[..., 1, 1] = c + k * ay * ay
    rot[..., 1, 2] = -s * ax
    rot[..., 2, 0] = -s * ay
    rot[..., 2, 1] = s * ax
    rot[..., 2, 2] = c
    return rot


def project_points(
    X: ArrayLike, Y: ArrayLike, Z: ArrayLike, *, f_px: ArrayLike, cx: ArrayLike,
    cy: ArrayLike, R_cam: ArrayLike, t_cam: ArrayLike,
) -> tuple[NDArray, NDArray]:
    """Pinhole projection of world points (mm) to pixel coordinates.

    Parameters
    ----------
    X, Y, Z : array_like, shape (..., n)
        World (dial-frame) coordinates in mm; leading axes are trials.
    f_px, cx, cy : array_like, shape (...)
        Focal length (image distance / pitch) and principal point, in pixels.
    R_cam, t_cam : array_like, shapes (..., 3, 3) and (..., 3)
        Rotation from world to camera axes (e.g. :func:`tilt_rotation`) and the world origin
        (the pivot) in camera coordinates, mm.

    Returns
    -------
    u, v : ndarray, shape (..., n)
        Pixel coordinates, u = f x_c / z_c + cx, v = f y_c / z_c + cy.

    Raises
    ------
    BudgetInputError
        If R_cam or t_cam has the wrong trailing shape.

    Notes
    -----
    Central (pinhole) projection, P_c = R_cam P + t_cam (common practice).  Points behind the
    camera (z_c <= 0) are not checked for (hot path).  [derived] For a planar dial the angle
    about the pivot's image does not depend on D or on the radius: see
    :func:`tilted_dial_angle`.
    """
    rot = np.asarray(R_cam, dtype=float)
    t = np.asarray(t_cam, dtype=float)
    if rot.shape[-2:] != (3, 3):
        raise field_error("R_cam", "an array of shape (..., 3, 3)", rot.shape, "project_points")
    if t.ndim < 1 or t.shape[-1] != 3:
        raise field_error("t_cam", "an array of shape (..., 3)", t.shape, "project_points")
    pts = [np.asarray(c, dtype=float) for c in (X, Y, Z)]
    xc, yc, zc = (
        rot[..., i, 0, None] * pts[0] + rot[..., i, 1, None] * pts[1]
        + rot[..., i, 2, None] * pts[2] + t[..., i, None]
        for i in range(3)
    )
    f = np.asarray(f_px, dtype=float)[..., None]
    u = f * xc / zc + np.asarray(cx, dtype=float)[..., None]
    v = f * yc / zc + np.asarray(cy, dtype=float)[..., None]
    return u, v


def tilted_dial_angle(
    theta_rad: ArrayLike, *, beta_rad: ArrayLike, phi_rad: ArrayLike,
    tan_field_x: ArrayLike = 0.0, tan_field_y: ArrayLike = 0.0,
) -> NDArray:
    """Angle seen about the pivot's image for a dial point at true angle theta (exact).

    Parameters
    ----------
    theta_rad : array_like
        True angle on the dial (rad), from dial +X toward +Y.
    beta_rad, phi_rad : array_like
        Tilt and azimuth of its axis, as in :func:`tilt_rotation`.
    tan_field_x, tan_field_y : array_like, optional
        Pivot position in the camera as x_c/z_c and y_c/z_c (0 for a pivot on the axis).

    Returns
    -------
    ndarray
        Measured angle atan2(dv, du) about the pivot's image (rad), pinhole camera.

    Notes
    -----
    [derived] With P_c = t + d, d = R (cos theta, sin theta, 0) r and t = z0 (tx, ty, 1), the
    image offset from the pivot's image is f (d_x - tx d_z, d_y - ty d_z) / (z0 + d_z): the
    common factor cancels in atan2, so the angle is exactly that of the linear map
    [[R11 - tx R31, R12 - tx R32], [R21 - ty R31, R22 - ty R32]], independent of D and r.
    On axis it is the orthographic result tan(theta' - phi) = cos(beta) tan(theta - phi).
    """
    th = np.asarray(theta_rad, dtype=float)
    rot = tilt_rotation(beta_rad, phi_rad)
    tx = np.asarray(tan_field_x, dtype=float)
    ty = np.asarray(tan_field_y, dtype=float)
    c, s = np.cos(th), np.sin(th)
    dx = rot[..., 0, 0] * c + rot[..., 0, 1] * s
    dy = rot[..., 1, 0] * c + rot[..., 1, 1] * s
    dz = rot[..., 2, 0] * c + rot[..., 2, 1] * s
    return np.arctan2(dy - ty * dz, dx - tx * dz)


def tilt_angle_error_approx(
    theta_rad: ArrayLike, *, beta_rad: ArrayLike, phi_rad: ArrayLike,
    tan_field_x: ArrayLike = 0.0, tan_field_y: ArrayLike = 0.0,
) -> NDArray:
    """Leading terms of the tilt error (measured minus true angle), for budgets and choice.

    Parameters
    ----------
    theta_rad, beta_rad, phi_rad, tan_field_x, tan_field_y : array_like
        As in :func:`tilted_dial_angle`.

    Returns
    -------
    ndarray
        -(beta^2/4) sin 2(theta - phi) + beta (tx sin theta - ty cos theta) sin(theta - phi).

    Notes
    -----
    [derived] from :func:`tilted_dial_angle`.  On axis, tan(theta' - phi) = cos(beta)
    tan(theta - phi) gives e = -(beta^2/4) sin 2(theta - phi) + O(beta^4): zero first-order
    sensitivity at beta = 0 (JCGM 100 5.1.2 note on second-order terms).  A pivot off axis by
    field angle gamma at azimuth psi adds beta tan(gamma) sin(theta - psi) sin(theta - phi),
    first order in beta; its slope, a local gain error, reaches beta tan(gamma).
    """
    th = np.asarray(theta_rad, dtype=float)
    b = np.asarray(beta_rad, dtype=float)
    rel = th - np.asarray(phi_rad, dtype=float)
    off = np.asarray(tan_field_x) * np.sin(th) - np.asarray(tan_field_y) * np.cos(th)
    return -0.25 * b * b * np.sin(2.0 * rel) + b * off * np.sin(rel)


def tilt_max_angle_error(beta_rad: ArrayLike) -> NDArray:
    """Largest |measured - true| angle for an on-axis pivot and tilt beta: arcsin((1-c)/(1+c)).

    Parameters
    ----------
    beta_rad : array_like
        Tilt angle (rad), |beta| < pi/2.

    Returns
    -------
    ndarray
        arcsin((1 - cos beta) / (1 + cos beta)) = arcsin(tan^2(beta/2)) (rad).

    Notes
    -----
    [derived] Maximising x - arctan(c tan x) gives tan x = 1/sqrt(c) and the difference
    arcsin((1 - c)/(1 + c)), c = cos(beta).
    """
    b = _arr(beta_rad, "beta_rad", "a number in (-pi/2, pi/2)", lambda a: np.abs(a) < np.pi / 2,
             "tilt_max_angle_error")
    c = np.cos(b)
    return np.arcsin((1.0 - c) / (1.0 + c))


def distort(xn: ArrayLike, yn: ArrayLike, k1: ArrayLike, k2: ArrayLike = 0.0,
            k3: ArrayLike = 0.0, p1: ArrayLike = 0.0,
            p2: ArrayLike = 0.0) -> tuple[NDArray, NDArray]:
    """Brown-Conrady distortion of normalized image coordinates.

    Parameters
    ----------
    xn, yn : array_like
        Undistorted normalized coordinates x_c/z_c, y_c/z_c.
    k1, k2, k3, p1, p2 : array_like
        Radial and decentering (tangential) coefficients.

    Returns
    -------
    xd, yd : ndarray
        xd = x (1 + k1 r^2 + k2 r^4 + k3 r^6) + 2 p1 x y + p2 (r^2 + 2 x^2),
        yd = y (1 + k1 r^2 + k2 r^4 + k3 r^6) + p1 (r^2 + 2 y^2) + 2 p2 x y.

    Notes
    -----
    Radial polynomial and decentering terms of D. C. Brown (1966), 'Decentering distortion of
    lenses', Photogrammetric Engineering 32(3):444-462, after A. E. Conrady (1919), MNRAS
    79:384.  The assignment of p1 and p2 to x and y follows the form above.
    """
    x = np.asarray(xn, dtype=float)
    y = np.asarray(yn, dtype=float)
    r2 = x * x + y * y
    radial = 1.0 + r2 * (k1 + r2 * (k2 + r2 * k3))
    xd = x * radial + 2.0 * p1 * x * y + p2 * (r2 + 2.0 * x * x)
    yd = y * radial + p1 * (r2 + 2.0 * y * y) + 2.0 * p2 * x * y
    return xd, yd


def undistort(xd: ArrayLike, yd: ArrayLike, k1: ArrayLike, k2: ArrayLike = 0.0,
              k3: ArrayLike = 0.0, p1: ArrayLike = 0.0, p2: ArrayLike = 0.0, *,
              iterations: int = 20) -> tuple[NDArray, NDArray]:
    """Invert :func:`distort` by fixed-point iteration (vectorized, fixed number of steps).

    Parameters
    ----------
    xd, yd, k1, k2, k3, p1, p2 : array_like
        Distorted normalized coordinates and the coefficients of :func:`distort`.
    iterations : int, optional
        Number of fixed-point steps (default 20).

    Returns
    -------
    xn, yn : ndarray
        Undistorted normalized coordinates.

    Notes
    -----
    x <- (xd - tangential(x)) / radial(x), starting from x = xd.  The map contracts with a
    factor of about |k1| r^2 (radial) per step when distortion is a small perturbation,
    e.g. k1 r^2 = 0.05 reaches 1e-15 in about 15 steps; strong (fisheye-like) distortion, or
    |k1| r^2 approaching ~0.3, may converge slowly or not at all -- check the round trip.
    A fixed number of steps keeps the result a smooth function of its inputs.
    """
    if isinstance(iterations, bool) or not isinstance(iterations, (int, np.integer)) \
            or iterations < 1:
        raise field_error("iterations", "an integer >= 1", iterations, "undistort")
    xt = np.asarray(xd, dtype=float)
    yt = np.asarray(yd, dtype=float)
    x, y = xt, yt
    for _ in range(iterations):
        r2 = x * x + y * y
        radial = 1.0 + r2 * (k1 + r2 * (k2 + r2 * k3))
        x, y = ((xt - 2.0 * p1 * x * y - p2 * (r2 + 2.0 * x * x)) / radial,
                (yt - p1 * (r2 + 2.0 * y * y) - 2.0 * p2 * x * y) / radial)
    return x, y
