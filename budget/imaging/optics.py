"""Imaging physics of the rig: thin lens, diffraction, depth of field, motion blur and parallax.

The pinhole projection with a tilted dial and the lens distortion model are in
:mod:`tests.oracles.projection`.

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
    "focal_length_to_fit",
    "image_distance_mm",
    "magnification",
    "motion_blur_px",
    "object_pixel_mm",
    "psf_sigma_um",
    "spot_sigma_px",
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


def spot_sigma_px(wavelength_nm, f_number, magnification, pitch_um, target_sigma_px=0.0, disk_diameter_px=0.0):
    """Standard deviation per axis of the target's optical image, px (before pixel integration).

    Notes
    -----
    Diffraction: the Gaussian fitted to the in-focus Airy pattern, σ = 0.21·λ/NA = 0.42·λ·N_w
    with NA = 1/(2N_w), N_w = N(1 + m) (Zhang, Zerubia & Olivo-Marin 2007, Appl. Opt. 46:1819),
    combined in quadrature with the target's own image: a Gaussian spot of σ_t, or a uniform
    disk of diameter d whose second moment per axis is d²/16 [derived]. Pixel integration is
    not added here: the locator formulas carry it (Thompson et al. 2002: s² + a²/12).
    """
    nw = working_f_number(f_number, magnification)
    s_diff = psf_sigma_um(wavelength_nm, nw) / np.asarray(pitch_um, dtype=float)
    return np.sqrt(s_diff**2 + np.asarray(target_sigma_px) ** 2 + np.asarray(disk_diameter_px) ** 2 / 16.0)
