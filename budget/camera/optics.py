"""Imaging physics of the rig: thin lens, pinhole projection with a tilted dial, distortion,
diffraction, depth of field, motion blur and parallax.

Every function is a pure numpy function that broadcasts, so arrays of candidate cameras and
lenses, or of Monte Carlo trials, go through in one call.

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

__all__ = [
    "airy_radius_um",
    "depth_of_field_mm",
    "distort",
    "field_of_view_mm",
    "focal_length_to_fit",
    "image_distance_mm",
    "magnification",
    "motion_blur_px",
    "object_pixel_mm",
    "parallax_shift",
    "project_points",
    "psf_sigma_um",
    "tilt_angle_error_approx",
    "tilt_max_angle_error",
    "tilt_rotation",
    "tilted_dial_angle",
    "undistort",
    "working_f_number",
]


def _arr(value: ArrayLike, name: str, allowed: str, ok, where: str) -> NDArray:
    """Convert to a float array and raise the house error unless finite and ok(a) holds."""
    a = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(a)) or not np.all(ok(a)):
        raise field_error(name, allowed, value, where)
    return a


def _pos(value: ArrayLike, name: str, where: str) -> NDArray:
    return _arr(value, name, "a number > 0", lambda a: a > 0, where)


def magnification(focal_length_mm: ArrayLike, distance_mm: ArrayLike) -> NDArray:
    """Lateral magnification of a thin lens focused on an object at distance D.

    Parameters
    ----------
    focal_length_mm, distance_mm : array_like
        Focal length f (> 0) and object-to-lens distance D (> f).

    Returns
    -------
    ndarray
        m = f / (D - f) (image size over object size, positive for a real image).

    Notes
    -----
    [derived] Gaussian thin-lens equation 1/f = 1/D + 1/d_i gives d_i = f D / (D - f) and
    m = d_i / D (common practice; any optics textbook).  For a thick lens D is measured from
    the front principal plane.
    """
    f = _pos(focal_length_mm, "focal_length_mm", "magnification")
    d = _pos(distance_mm, "distance_mm", "magnification")
    if np.any(d <= f):
        raise field_error("distance_mm", "a number > focal_length_mm", distance_mm,
                          "magnification")
    return f / (d - f)


def image_distance_mm(focal_length_mm: ArrayLike, distance_mm: ArrayLike) -> NDArray:
    """Lens-to-image distance d_i = f D / (D - f) of a thin lens (see :func:`magnification`).

    Parameters
    ----------
    focal_length_mm, distance_mm : array_like
        Focal length f > 0 and object distance D > f.

    Returns
    -------
    ndarray
        d_i in mm ([derived], Gaussian thin-lens equation).
    """
    m = magnification(focal_length_mm, distance_mm)
    return np.asarray(distance_mm, dtype=float) * m


def object_pixel_mm(pitch_um: ArrayLike, magnification: ArrayLike) -> NDArray:
    """Size of one pixel projected onto the object, in mm: pitch / m.

    Parameters
    ----------
    pitch_um, magnification : array_like
        Pixel pitch on the sensor (> 0, micrometres) and lateral magnification m (> 0).

    Returns
    -------
    ndarray
        mm on the object per pixel ([derived] from the definition of m).
    """
    p = _pos(pitch_um, "pitch_um", "object_pixel_mm")
    m = _pos(magnification, "magnification", "object_pixel_mm")
    return 1e-3 * p / m


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


def focal_length_to_fit(field_mm: ArrayLike, sensor_mm: ArrayLike,
                        distance_mm: ArrayLike) -> NDArray:
    """Focal length that images an object field onto a sensor at object distance D.

    Parameters
    ----------
    field_mm, sensor_mm, distance_mm : array_like
        Object-side extent to fit, the matching sensor extent, object-to-lens distance D
        (all > 0).

    Returns
    -------
    ndarray
        f = D m / (1 + m) with m = sensor / field, in mm ([derived]: inverse of
        m = f / (D - f)).
    """
    fld = _pos(field_mm, "field_mm", "focal_length_to_fit")
    s = _pos(sensor_mm, "sensor_mm", "focal_length_to_fit")
    d = _pos(distance_mm, "distance_mm", "focal_length_to_fit")
    m = s / fld
    return d * m / (1.0 + m)



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



def working_f_number(f_number: ArrayLike, magnification: ArrayLike) -> NDArray:
    """Working (effective) f-number N_w = N (1 + m).

    Parameters
    ----------
    f_number, magnification : array_like
        Marked f-number N (> 0, infinity focus) and lateral magnification m (>= 0).

    Returns
    -------
    ndarray
        N (1 + m); pupil magnification taken as 1.

    Notes
    -----
    Common practice (bellows factor for close focus); image-side NA = 1 / (2 N_w).
    """
    n = _pos(f_number, "f_number", "working_f_number")
    m = _arr(magnification, "magnification", "a number >= 0", lambda a: a >= 0,
             "working_f_number")
    return n * (1.0 + m)


def airy_radius_um(wavelength_nm: ArrayLike, working_f_number: ArrayLike) -> NDArray:
    """Radius of the Airy disk's first dark ring on the sensor, 1.22 lambda N_w, in um.

    Parameters
    ----------
    wavelength_nm, working_f_number : array_like
        Wavelength in nm and N_w (both > 0).

    Returns
    -------
    ndarray
        1.22 lambda N_w in micrometres.

    Notes
    -----
    Airy pattern of a circular aperture, first zero of J1 at 3.8317 = 1.2197 pi
    (common practice; Born and Wolf, Principles of Optics, sect. 8.5.2, value from memory).
    """
    lam = _pos(wavelength_nm, "wavelength_nm", "airy_radius_um")
    nw = _pos(working_f_number, "working_f_number", "airy_radius_um")
    return 1.22e-3 * lam * nw


def psf_sigma_um(wavelength_nm: ArrayLike, working_f_number: ArrayLike) -> NDArray:
    """Standard deviation of the Gaussian that best fits the in-focus Airy PSF, in um.

    Parameters
    ----------
    wavelength_nm, working_f_number : array_like
        Wavelength in nm and N_w (both > 0).

    Returns
    -------
    ndarray
        0.42 lambda N_w (= 0.21 lambda / NA with NA = 1/(2 N_w)) in micrometres.

    Notes
    -----
    Zhang, Zerubia and Olivo-Marin (2007), Appl. Opt. 46:1819, paraxial 2-D wide-field PSF:
    sigma = 0.21 lambda / NA (value from memory; reproduced by a least-squares fit to the Airy
    pattern in tests/camera/test_optics.py).
    """
    lam = _pos(wavelength_nm, "wavelength_nm", "psf_sigma_um")
    nw = _pos(working_f_number, "working_f_number", "psf_sigma_um")
    return 0.42e-3 * lam * nw


def depth_of_field_mm(f_number: ArrayLike, coc_mm: ArrayLike,
                      magnification: ArrayLike) -> NDArray:
    """Total depth of field at close focus, 2 N c (m + 1) / m^2, in mm on the object side.

    Parameters
    ----------
    f_number, coc_mm, magnification : array_like
        Marked f-number N, acceptable circle of confusion c on the sensor in mm (e.g. two
        pixels), lateral magnification m (all > 0).

    Returns
    -------
    ndarray
        Total depth of field in mm.

    Notes
    -----
    Common practice (close-up approximation valid when the depth is small against the
    distance, pupil magnification 1); the form appears in photographic-optics textbooks such
    as S. F. Ray, Applied Photographic Optics (value from memory).
    """
    n = _pos(f_number, "f_number", "depth_of_field_mm")
    c = _pos(coc_mm, "coc_mm", "depth_of_field_mm")
    m = _pos(magnification, "magnification", "depth_of_field_mm")
    return 2.0 * n * c * (m + 1.0) / (m * m)


def motion_blur_px(omega_rad_s: ArrayLike, exposure_s: ArrayLike,
                   radius_px: ArrayLike) -> NDArray:
    """Arc length (px) the target travels during one exposure: omega t_e R_px.

    Parameters
    ----------
    omega_rad_s, exposure_s, radius_px : array_like
        Angular velocity (rad/s, signed), exposure time (s, >= 0), target radius about the
        pivot in the image (px, > 0).

    Returns
    -------
    ndarray
        Signed blur length along the arc, px.

    Notes
    -----
    [derived] Arc length = radius x swept angle.
    """
    w = _arr(omega_rad_s, "omega_rad_s", "a finite number", lambda a: a == a, "motion_blur_px")
    t = _arr(exposure_s, "exposure_s", "a number >= 0", lambda a: a >= 0, "motion_blur_px")
    r = _pos(radius_px, "radius_px", "motion_blur_px")
    return w * t * r


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
