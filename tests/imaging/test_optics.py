"""Tests of budget.imaging.optics and tests.oracles.projection; each check names its source or says [derived]."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq, minimize_scalar
from scipy.special import j1

from budget.errors import BudgetInputError
from budget.imaging.optics import (
    airy_radius_um,
    depth_of_field_mm,
    focal_length_to_fit,
    image_distance_mm,
    magnification,
    motion_blur_px,
    object_pixel_mm,
    psf_sigma_um,
    working_f_number,
)
from tests.oracles.closed_forms import field_of_view_mm, parallax_shift
from tests.oracles.projection import (
    distort,
    project_points,
    tilt_angle_error_approx,
    tilt_max_angle_error,
    tilt_rotation,
    tilted_dial_angle,
    undistort,
)


def _wrap(a):
    return np.arctan2(np.sin(a), np.cos(a))


def _image_angles(theta, *, beta, phi, pivot_cam, radius=10.0, f_px=2000.0):
    """Angle about the pivot's image from a full pinhole projection of dial points."""
    rot = tilt_rotation(beta, phi)
    t = np.asarray(pivot_cam, dtype=float)
    zero = np.zeros(1)
    u, v = project_points(radius * np.cos(theta), radius * np.sin(theta), 0 * theta,
                          f_px=f_px, cx=640.0, cy=480.0, R_cam=rot, t_cam=t)
    up, vp = project_points(zero, zero, zero, f_px=f_px, cx=640.0, cy=480.0, R_cam=rot, t_cam=t)
    return np.arctan2(v - vp, u - up)


# ----------------------------------------------------------------------------- thin lens


def test_magnification_satisfies_the_thin_lens_equation():
    # [derived] 1/f = 1/D + 1/d_i and m = d_i / D (common practice, Gaussian thin lens).
    f = np.array([8.0, 16.0, 25.0, 50.0])
    d = np.array([[100.0], [550.0], [2000.0]])
    m = magnification(f, d)
    di = image_distance_mm(f, d)
    assert m.shape == (3, 4)
    np.testing.assert_allclose(1 / d + 1 / di, np.broadcast_to(1 / f, (3, 4)), rtol=1e-14)
    np.testing.assert_allclose(m, di / d, rtol=1e-14)
    assert magnification(50.0, 550.0) == pytest.approx(0.1, rel=1e-15)


def test_pixel_size_field_of_view_and_focal_length_to_fit():
    # [derived] 3.45 um pitch at m = 0.1 is 34.5 um on the object; f from the field inverts m.
    assert object_pixel_mm(3.45, 0.1) == pytest.approx(0.0345, rel=1e-14)
    assert field_of_view_mm(8.8, 0.1) == pytest.approx(88.0, rel=1e-14)
    pitch = np.array([2.2, 3.45, 5.86])[:, None]
    f = focal_length_to_fit(120.0, np.array([5.6, 8.8, 13.2]), 400.0)
    np.testing.assert_allclose(field_of_view_mm([5.6, 8.8, 13.2], magnification(f, 400.0)), 120.0,
                               rtol=1e-13)
    assert object_pixel_mm(pitch, magnification(f, 400.0)).shape == (3, 3)


# ---------------------------------------------------------------------- tilt and projection


def test_orthographic_tilt_law_through_full_projection():
    # [derived] A dial tilted by beta about an in-plane axis at azimuth phi keeps the component
    # along the axis and foreshortens the perpendicular one by cos(beta):
    # tan(theta' - phi) = cos(beta) tan(theta - phi).  For the angle about the pivot's image
    # with the pivot on the axis, perspective cancels exactly (tilted_dial_angle Notes), so
    # the law holds at a short distance too.  Tolerance: rounding of pixel coordinates near
    # cx = 640 (1e-13 px) over the image radius 2000 * 10 / D px.
    rng = np.random.default_rng(seed=11)
    theta = rng.uniform(low=-np.pi, high=np.pi, size=200)
    for beta, phi in [(0.05, 0.3), (0.4, -1.2), (-0.7, 2.5)]:
        for dist in (1e6, 60.0):
            meas = _image_angles(theta, beta=beta, phi=phi, pivot_cam=[0.0, 0.0, dist])
            expected = phi + np.arctan2(np.cos(beta) * np.sin(theta - phi), np.cos(theta - phi))
            tol = 1e-13 * 640.0 / (2000.0 * 10.0 / dist)
            np.testing.assert_allclose(_wrap(meas - expected), 0.0, atol=tol)


def test_exact_angle_helper_matches_projection_off_axis():
    # [derived] off-axis pivot: the angle about the pivot's image equals that of a fixed linear
    # map, independent of D and of the radius.
    theta = np.linspace(-3.0, 3.0, 61)
    for dist, radius in [(300.0, 10.0), (5000.0, 40.0)]:
        meas = _image_angles(theta, beta=0.2, phi=0.9, pivot_cam=[0.15 * dist, -0.1 * dist, dist],
                             radius=radius)
        helper = tilted_dial_angle(theta, beta_rad=0.2, phi_rad=0.9, tan_field_x=0.15,
                                   tan_field_y=-0.1)
        np.testing.assert_allclose(_wrap(meas - helper), 0.0, atol=1e-12)


@pytest.mark.parametrize("beta_deg", [1.0, 5.0, 20.0, 45.0])
def test_largest_tilt_error_is_arcsin_of_the_ratio(beta_deg):
    # [derived] max over theta of |theta' - theta| = arcsin((1 - cos b)/(1 + cos b)); a grid of
    # 2e5 angles finds the maximum to ~(grid step)^2 relative.
    beta = np.radians(beta_deg)
    theta = np.linspace(-np.pi, np.pi, 200_001)
    err = _wrap(tilted_dial_angle(theta, beta_rad=beta, phi_rad=0.4) - theta)
    assert np.max(np.abs(err)) == pytest.approx(float(tilt_max_angle_error(beta)), rel=1e-8)


def test_on_axis_error_is_second_order():
    # [derived] e = -(beta^2/4) sin 2(theta - phi) + O(beta^4); first-order sensitivity zero.
    theta = np.linspace(-np.pi, np.pi, 721)
    for beta in (0.01, 0.05):
        err = _wrap(tilted_dial_angle(theta, beta_rad=beta, phi_rad=-0.6) - theta)
        approx = -(beta**2 / 4) * np.sin(2 * (theta + 0.6))
        np.testing.assert_allclose(err, approx, rtol=0, atol=beta**4)
    e_plus = tilted_dial_angle(theta, beta_rad=1e-5, phi_rad=-0.6)
    e_minus = tilted_dial_angle(theta, beta_rad=-1e-5, phi_rad=-0.6)
    np.testing.assert_allclose((e_plus - e_minus) / 2e-5, 0.0, atol=1e-9)


def test_off_axis_pivot_gives_first_order_error_beta_gamma():
    # [derived] pivot at field angle gamma (azimuth psi): e1 = beta tan(gamma) sin(theta - psi)
    # sin(theta - phi); its slope (a local gain error) reaches beta tan(gamma).  Residual of the
    # approximation is O(beta^2): tolerance 2 beta^2.
    theta = np.linspace(-np.pi, np.pi, 3601)
    gamma, psi, phi, beta = 0.25, 0.8, -0.3, 0.01
    tx, ty = np.tan(gamma) * np.cos(psi), np.tan(gamma) * np.sin(psi)
    err = _wrap(tilted_dial_angle(theta, beta_rad=beta, phi_rad=phi, tan_field_x=tx,
                                  tan_field_y=ty) - theta)
    e1 = beta * np.tan(gamma) * np.sin(theta - psi) * np.sin(theta - phi)
    np.testing.assert_allclose(err, e1, rtol=0, atol=2 * beta**2)
    approx = tilt_angle_error_approx(theta, beta_rad=beta, phi_rad=phi, tan_field_x=tx,
                                     tan_field_y=ty)
    np.testing.assert_allclose(err, approx, rtol=0, atol=2 * beta**2 * np.tan(gamma))
    slope = np.gradient(err, theta)
    assert np.max(np.abs(slope)) == pytest.approx(beta * np.tan(gamma), rel=0.05)


def test_projection_broadcasts_over_trials():
    rng = np.random.default_rng(seed=12)
    m, n = 5, 7
    rot = tilt_rotation(rng.normal(loc=0.0, scale=0.05, size=m), rng.uniform(size=m))
    assert rot.shape == (m, 3, 3)
    np.testing.assert_allclose(rot @ np.swapaxes(rot, -1, -2), np.broadcast_to(np.eye(3),
                               (m, 3, 3)), atol=1e-15)
    t = np.column_stack((rng.normal(size=m), rng.normal(size=m), np.full(m, 300.0)))
    x = rng.normal(size=(m, n))
    y = rng.normal(size=(m, n))
    f_px = np.linspace(1000.0, 3000.0, m)
    u, v = project_points(x, y, 0 * x, f_px=f_px, cx=1.0, cy=2.0, R_cam=rot, t_cam=t)
    assert u.shape == v.shape == (m, n)
    u2, v2 = project_points(x[2], y[2], 0 * x[2], f_px=f_px[2], cx=1.0, cy=2.0, R_cam=rot[2],
                            t_cam=t[2])
    np.testing.assert_allclose(u[2], u2, rtol=1e-14)
    np.testing.assert_allclose(v[2], v2, rtol=1e-14)


# ---------------------------------------------------------------------------- distortion


def test_distortion_round_trip_and_radial_form():
    # Brown (1966) model; [derived] undistort inverts distort: k1 r^2 <= 0.075 here, so 20
    # fixed-point steps reach rounding (contraction ~0.2 per step).
    rng = np.random.default_rng(seed=13)
    x = rng.uniform(low=-0.4, high=0.4, size=(50, 40))
    y = rng.uniform(low=-0.3, high=0.3, size=(50, 40))
    k1 = rng.uniform(low=-0.3, high=0.3, size=(50, 1))
    coeffs = dict(k2=0.05, k3=-0.01, p1=1e-3, p2=-5e-4)
    xd, yd = distort(x, y, k1, **coeffs)
    xu, yu = undistort(xd, yd, k1, **coeffs)
    np.testing.assert_allclose(xu, x, rtol=0, atol=1e-13)
    np.testing.assert_allclose(yu, y, rtol=0, atol=1e-13)
    xd1, yd1 = distort(0.3, 0.4, -0.2)  # radial only: scale 1 + k1 r^2 = 0.95
    assert (xd1, yd1) == (pytest.approx(0.285), pytest.approx(0.38))


# ------------------------------------------------------------------ diffraction and focus


def test_airy_radius_and_working_f_number():
    # Airy first dark ring 1.22 lambda N (common practice; 3.8317/pi = 1.2197 from scipy),
    # N_w = N (1 + m).
    from scipy.special import jn_zeros

    assert jn_zeros(1, 1)[0] / np.pi == pytest.approx(1.22, abs=5e-3)
    nw = working_f_number(8.0, 0.25)
    assert nw == pytest.approx(10.0)
    assert airy_radius_um(550.0, nw) == pytest.approx(6.71, rel=1e-12)


def test_gaussian_sigma_matches_a_least_squares_fit_to_the_airy_pattern():
    # Zhang, Zerubia & Olivo-Marin 2007 (Appl. Opt. 46:1819), 2-D paraxial wide-field PSF:
    # sigma = 0.21 lambda/NA (value from memory).  Reproduced here: peak-matched 2-D L2 fit of a
    # Gaussian to (2 J1(v)/v)^2, v = pi r / (lambda N_w), gives 0.4206 lambda N_w.  Tolerance
    # 1.2 %: the two quoted digits of 0.21.
    r = np.linspace(1e-9, 6.0, 30001)
    airy = (2 * j1(np.pi * r) / (np.pi * r)) ** 2

    def cost(s):
        return np.sum(r * (airy - np.exp(-(r**2) / (2 * s * s))) ** 2)

    best = minimize_scalar(cost, bounds=(0.2, 0.7), method="bounded").x
    assert psf_sigma_um(1000.0, 1.0) == pytest.approx(best, rel=0.012)


def test_depth_of_field_close_focus_approximation():
    # Common practice: total DOF ~ 2 N c (m + 1) / m^2.  [derived] check against the exact
    # thin-lens blur: an object at s images at d_s; its blur on the sensor at d_i is
    # (f/N) |d_s - d_i| / d_s; solve for blur = c on both sides of the focus distance.
    # The approximation drops terms of order (DOF/D)^2, ~1e-3 here: tolerance 1 %.
    f, n_f, c = 50.0, 8.0, 0.01
    for m in (0.05, 0.1, 0.5):
        dist = f * (1 + m) / m
        di = f * dist / (dist - f)

        def blur(s, di=di):
            ds = f * s / (s - f)
            return (f / n_f) * abs(ds - di) / ds - c

        near = brentq(blur, f * 1.0001, dist)
        far = brentq(blur, dist, 100 * dist)
        assert depth_of_field_mm(n_f, c, m) == pytest.approx(far - near, rel=0.01)


def test_motion_blur_and_parallax():
    # [derived] arc length: 2 rad/s for 1 ms at 500 px radius is 1 px.
    assert motion_blur_px(2.0, 1e-3, 500.0) == pytest.approx(1.0)
    # [derived] similar triangles, checked through the pinhole projection: a mark at X on the
    # dial and a target straight above it at height h (toward the camera, Z = -h).
    dist, h, x_mm = 400.0, 3.0, 12.0
    eye = np.eye(3)
    t = np.array([0.0, 0.0, dist])
    u_mark, _ = project_points(np.array([x_mm]), np.zeros(1), np.zeros(1), f_px=5000.0, cx=0.0,
                               cy=0.0, R_cam=eye, t_cam=t)
    u_tgt, _ = project_points(np.array([x_mm]), np.zeros(1), np.array([-h]), f_px=5000.0, cx=0.0,
                              cy=0.0, R_cam=eye, t_cam=t)
    assert (u_tgt - u_mark)[0] == pytest.approx(float(parallax_shift(u_mark[0], h, dist)),
                                                rel=1e-12)


@pytest.mark.parametrize(
    ("call", "field"),
    [
        (lambda: magnification(50.0, 40.0), "'distance_mm'"),
        (lambda: magnification(-1.0, 40.0), "'focal_length_mm'"),
        (lambda: object_pixel_mm(0.0, 0.1), "'pitch_um'"),
        (lambda: working_f_number(8.0, -0.1), "'magnification'"),
        (lambda: psf_sigma_um(np.nan, 8.0), "'wavelength_nm'"),
        (lambda: depth_of_field_mm(8.0, 0.01, 0.0), "'magnification'"),
        (lambda: motion_blur_px(1.0, -1e-3, 10.0), "'exposure_s'"),
        (lambda: parallax_shift(1.0, 500.0, 400.0), "'height_mm'"),
        (lambda: tilt_max_angle_error(2.0), "'beta_rad'"),
        (lambda: undistort(0.1, 0.1, 0.1, iterations=0), "'iterations'"),
        (lambda: project_points([0.0], [0.0], [1.0], f_px=1.0, cx=0.0, cy=0.0,
                                R_cam=np.eye(2), t_cam=[0, 0, 1.0]), "'R_cam'"),
    ],
)
def test_bad_input_raises_one_line_field_error(call, field):
    with pytest.raises(BudgetInputError, match=field) as info:
        call()
    assert "\n" not in str(info.value)
