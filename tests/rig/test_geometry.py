"""Geometry of the virtual rig against closed-form results.

Every check names its source: a derivation written out in the test's docstring
([derived]), or the publication the formula comes from. Rigs are built in memory
with :func:`parse_rig`; their figures are invented for the tests.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.inputs.rig_file import parse_rig
from budget.propagation import Normal, linear, monte_carlo
from budget.rig.components import build_inputs
from budget.rig.geometry import nominal_image_points, principal_point, rotate_tilt
from budget.rig.model import VirtualRig
from tests.rigdoc import merge_doc

BASE = {
    "title": "geometry test rig (invented)",
    "camera": {"pixels_x": 4000, "pixels_y": 4000, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0, "distortion": "uncorrected"},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 40.0},
    "target": {"sigma_px": 1.0},
    "locator": {"method": "fit"},
    "pivot": {"method": "mark"},
    "positions": {"angles_deg": [90.0, 180.0, 270.0]},
}


def make_doc(over: dict | None = None) -> dict:
    """A minimal valid rig document with ``over`` merged in (a value of None deletes)."""
    return merge_doc(BASE, over)


def make_rig(over: dict | None = None):
    return parse_rig(make_doc(over))


def one(x: float) -> np.ndarray:
    return np.array([float(x)])


def tilt_kw(beta_deg: float, azimuth_deg: float) -> dict[str, np.ndarray]:
    """Tilt inputs for a tilt β about the in-plane axis at azimuth φ."""
    a = math.radians(azimuth_deg)
    return {"tilt_x_deg": one(beta_deg * math.cos(a)), "tilt_y_deg": one(beta_deg * math.sin(a))}


# ---------------------------------------------------------------- quarter turns
@pytest.mark.parametrize("pivot", ["mark", "readings"])
def test_quarter_turns_read_exactly(pivot):
    """[derived] No error source: atan2 about the pivot gives 90°, 180°, 270° (the last
    on the branch nearest its nominal, not −90°)."""
    rig = make_rig({"pivot": {"method": pivot}})
    inputs, _ = build_inputs(rig)
    out = VirtualRig(rig)(**{name: np.zeros(1) for name in inputs})
    # mark pivot: exact up to rounding of cos/sin; circle fit through four exact points:
    # the fit converges to rounding too (tolerance 1e-9° ≈ 2e-11 rad).
    tol = 1e-12 if pivot == "mark" else 1e-9
    for name, want in (("P1", 90.0), ("P2", 180.0), ("P3", 270.0)):
        assert out[name][0] == pytest.approx(want, abs=tol)


# ---------------------------------------------------------------- orthographic tilt
def test_rotate_tilt_orthographic_relation():
    """[derived] A dial tilted by β about the in-plane axis at azimuth φ, seen
    orthographically (drop z): the component along the axis is kept and the one across
    it shrinks by cos β, so tan(θ′ − φ) = cos β · tan(θ − φ)."""
    beta, phi = math.radians(25.0), math.radians(-40.0)
    theta = np.radians(np.arange(-170.0, 180.0, 10.0))
    x, y, z = np.cos(theta), np.sin(theta), np.zeros_like(theta)
    xr, yr, _ = rotate_tilt(x, y, z, np.full_like(theta, beta * math.cos(phi)),
                            np.full_like(theta, beta * math.sin(phi)))
    seen = np.arctan2(yr, xr)
    want = phi + np.arctan2(math.cos(beta) * np.sin(theta - phi), np.cos(theta - phi))
    diff = (seen - want + np.pi) % (2 * np.pi) - np.pi
    np.testing.assert_allclose(diff, 0.0, atol=1e-13)


def _ortho_rig(beta_deg: float, phi_deg: float, angles: list[float]):
    """A rig with the zero image on the tilt axis (θ₀ = φ), seen from very far away.

    With a pivot mark on the optical axis perspective does not change any angle at all
    [derived]: each image point is f/(D − z) times its dial position, a positive factor,
    so its direction from the pivot's image is the orthographic one. The large working
    distance only makes that moot.
    """
    return make_rig({
        "camera": {"pitch_um": 0.05},
        "lens": {"focal_length_mm": 1000.0},
        "geometry": {"working_distance_mm": 1.0e6, "pointer_radius_mm": 40.0, "zero_direction_deg": phi_deg},
        "positions": {"angles_deg": angles},
    })


def test_tilt_reading_follows_tan_relation():
    """[derived] With the zero image on the tilt axis, the reading of a pointer at
    Δ = θ − φ is atan2(cos β sin Δ, cos Δ)."""
    beta, phi = 20.0, 30.0
    angles = [10.0, 45.0, 100.0, 170.0, 200.0, 300.0]
    rig = _ortho_rig(beta, phi, angles)
    out = VirtualRig(rig)(**tilt_kw(beta, phi))
    c = math.cos(math.radians(beta))
    for i, a in enumerate(angles):
        want = math.degrees(math.atan2(c * math.sin(math.radians(a)), math.cos(math.radians(a))))
        want = a + (want - a + 180.0) % 360.0 - 180.0
        assert out[f"P{i + 1}"][0] == pytest.approx(want, abs=1e-10)


@pytest.mark.parametrize("beta", [5.0, 20.0, 45.0])
def test_largest_tilt_error_is_arcsin_formula(beta):
    """[derived] From tan θ′ = c·tan θ (c = cos β): tan(θ − θ′) = (1 − c)·tan θ/(1 + c·tan²θ),
    largest at tan θ = 1/√c where sin(θ − θ′) = (1 − c)/(1 + c). The reading at that angle
    is off by exactly arcsin((1 − c)/(1 + c)); readings 1° either side are off by less."""
    phi = 30.0
    c = math.cos(math.radians(beta))
    star = math.degrees(math.atan(1.0 / math.sqrt(c)))
    angles = [star - 1.0, star, star + 1.0, 180.0 - star]
    rig = _ortho_rig(beta, phi, angles)
    out = VirtualRig(rig)(**tilt_kw(beta, phi))
    err = [out[f"P{i + 1}"][0] - a for i, a in enumerate(angles)]
    largest = math.degrees(math.asin((1 - c) / (1 + c)))
    assert err[1] == pytest.approx(-largest, abs=1e-10)
    assert err[3] == pytest.approx(+largest, abs=1e-10)  # mirrored quadrant: opposite sign
    assert abs(err[0]) < largest and abs(err[2]) < largest


# ---------------------------------------------------------------- second-order tilt term
@pytest.fixture(scope="module")
def tilt_second_order():
    """Tilt components βx, βy ~ N(0, u_β) through a zero-referenced rig (pivot mark on axis)."""
    u_beta = 1.0  # degrees
    rig = make_rig({"geometry": {"zero_direction_deg": 200.0}, "positions": {"angles_deg": [30.0, 90.0, 150.0]}})
    model = VirtualRig(rig)
    inputs = {"tilt_x_deg": Normal(0.0, u_beta), "tilt_y_deg": Normal(0.0, u_beta)}
    lin1 = linear(model, inputs)
    lin2 = linear(model, inputs, second_order=True)
    mc = monte_carlo(model, inputs, trials=20_000, rng=np.random.default_rng(20_240_531))
    return rig, u_beta, lin1, lin2, mc


def test_tilt_has_zero_first_order_sensitivity(tilt_second_order):
    """JCGM 100 5.1.2 note: at β = 0 the first-order term vanishes (the dial point moves
    out of plane, not in it: w × p has only a z component [derived])."""
    rig, _, lin1, _, _ = tilt_second_order
    for i in range(len(rig.nominal_angles_deg)):
        assert lin1[f"P{i + 1}"].u < 1e-9


def test_tilt_second_order_term_is_u_beta_squared_sin_delta(tilt_second_order):
    """[derived] To second order a dial point p̂(θ) moves in plane by ½·w(w·p̂) − ½β²p̂, so
    δθ = ½(p̂ × w)(w·p̂) = ½[βxβy cos 2θ + ½(βy² − βx²) sin 2θ]. An angle Δ from a zero at
    θ₀ then errs by e = sin Δ·[−βxβy sin S + ½(βy² − βx²) cos S], S = 2θ₀ + Δ. With
    βx, βy ~ N(0, u_β) independent, both brackets have variance u_β⁴ and are uncorrelated,
    so u(e) = u_β²·|sin Δ| (u_β in rad) whatever θ₀ and the azimuth: the factor is 1,
    not ¼ (the ¼ of e ≈ −(β²/4) sin 2(θ − φ) belongs to one fixed tilt). JCGM 100
    eq. (14) gives the same: ½Σ(∂²e/∂βi∂βj)²u⁴ = u⁴ sin²Δ (cos²S + sin²S).

    Tolerance for the second-order linear term: the model is not exactly quadratic
    (relative terms of order u_β² ≈ 3e-4) and eq. (14) uses numerical second
    derivatives: 1e-3 relative.
    """
    rig, u_beta, _, lin2, _ = tilt_second_order
    for i, delta in enumerate(rig.nominal_angles_deg):
        want = math.degrees(math.radians(u_beta) ** 2) * abs(math.sin(math.radians(delta)))
        assert lin2[f"P{i + 1}"].u == pytest.approx(want, rel=1e-3)


def test_tilt_monte_carlo_agrees_with_second_order(tilt_second_order):
    """[derived] as above; JCGM 101 7.6 Monte Carlo of the same model. The error is a
    product of two independent normals (kurtosis 9), so the relative standard error of
    the sample sd at M = 20 000 is √((9 − 1)/(4M)) = 1 %: tolerance 5 % (5 standard errors)."""
    rig, u_beta, _, _, mc = tilt_second_order
    for i, delta in enumerate(rig.nominal_angles_deg):
        want = math.degrees(math.radians(u_beta) ** 2) * abs(math.sin(math.radians(delta)))
        assert mc[f"P{i + 1}"].u == pytest.approx(want, rel=0.05)


# ---------------------------------------------------------------- ellipse-centre effect
SWEEP_R_MM, SWEEP_D_MM, SWEEP_ZERO_DEG, SWEEP_K = 45.0, 500.0, 140.0, 10.0


def _sweep_rig():
    return make_rig({
        "camera": {"pitch_um": 3.45},
        "lens": {"focal_length_mm": 35.0},
        "geometry": {"working_distance_mm": SWEEP_D_MM, "pointer_radius_mm": SWEEP_R_MM,
                     "zero_direction_deg": SWEEP_ZERO_DEG},
        "pivot": {"method": "readings"},
        "positions": None,
        "sweep": {"set_points_v": [1.0, 2, 3, 4, 5, 6, 7, 8, 9], "nominal_gain_deg_per_v": SWEEP_K},
    })


def _ellipse_centre_gain_error(rig, beta_deg: float, phi_deg: float) -> float:
    """[derived] First-order relative gain error of a circle-fit pivot on a tilted dial.

    The perspective image of the tilted pointer circle (tilt about the x axis: dial
    point (R cos t, R sin t) at height R sin β sin t) satisfies, in units of R·f/D,
    u² + (1 − k²)(v − k/(1 − k²))² = 1/(1 − k²) with k = R sin β/D: an ellipse whose
    centre is R² sin β cos β/(D(1 − k²)) from the pivot's image (in dial units), across
    the tilt axis, while its eccentricity is only O(β²). A circle fit finds that centre
    to first order in β (Ahn et al. 1999, Photogramm. Rec. 16:485, as cited in
    DESIGN.md: the ellipse-centre eccentricity). A pivot wrong by c gives each
    reading δθ(θ) = −(p̂(θ) × c)/R, so the fitted gain is off by the OLS slope of δθ
    against θ over the set points.
    """
    b = math.radians(beta_deg)
    r, d = rig.geometry.pointer_radius_mm, rig.geometry.working_distance_mm
    k = r * math.sin(b) / d
    c_mag = r * r * math.sin(b) * math.cos(b) / (d * (1 - k * k))
    c_dir = math.radians(phi_deg + 90.0)
    cx, cy = c_mag * math.cos(c_dir), c_mag * math.sin(c_dir)
    theta = np.radians(rig.geometry.zero_direction_deg + np.array(rig.nominal_angles_deg))
    g = (np.sin(theta) * cx - np.cos(theta) * cy) / r
    return float(np.polyfit(theta, g, 1)[0])


@pytest.mark.parametrize("phi", [0.0, 30.0, 100.0, 140.0])
def test_tilt_with_circle_fit_pivot_gives_first_order_gain_error(phi):
    """[derived] (see helper). The part of the gain error odd in β is the ellipse-centre
    term; the even part (the O(β²) ellipse itself) cancels in (K(+β) − K(−β))/2.
    Tolerance 2e-3 relative: the next odd term is O(β²) relative (measured 3e-4 at 1°).
    Its size is at most (R/D)·β (here 0.09·β), reached when the centre offset lies along
    the middle of the sweep."""
    rig = _sweep_rig()
    model = VirtualRig(rig)
    beta = 1.0
    k_plus = model(**tilt_kw(beta, phi))["gain"][0]
    k_minus = model(**tilt_kw(-beta, phi))["gain"][0]
    odd = (k_plus - k_minus) / 2 / SWEEP_K
    want = _ellipse_centre_gain_error(rig, beta, phi)
    assert odd == pytest.approx(want, rel=2e-3)
    assert abs(odd) <= (SWEEP_R_MM / SWEEP_D_MM) * math.radians(beta)


def test_tilt_gain_sensitivity_is_r_over_d():
    """[derived] The linear method's sensitivity of K to each tilt component is the
    derivative of the ellipse-centre term at β = 0: the gain's u from tilt components
    N(0, u_β) is K·√(s_x² + s_y²)·u_β with s the first-order slopes; at most
    K·(R/D)·u_β (Ahn et al. 1999 as cited in DESIGN.md: ≈ (R/D)·β). Tolerance 1e-3:
    the helper's slopes are evaluated at β = 0.01°, where O(β²) terms are ~1e-8."""
    rig = _sweep_rig()
    u_beta = 0.5
    lin = linear(VirtualRig(rig), {"tilt_x_deg": Normal(0.0, u_beta), "tilt_y_deg": Normal(0.0, u_beta)})
    small = 0.01
    sx = _ellipse_centre_gain_error(rig, small, 0.0) / small
    sy = _ellipse_centre_gain_error(rig, small, 90.0) / small
    want = SWEEP_K * math.hypot(sx, sy) * u_beta
    assert lin["gain"].u == pytest.approx(want, rel=1e-3)
    assert lin["gain"].u <= SWEEP_K * (SWEEP_R_MM / SWEEP_D_MM) * math.radians(u_beta) * (1 + 1e-9)


# ---------------------------------------------------------------- parallax
def test_parallax_shift_of_target_against_mark():
    """[derived, similar triangles] A pivot mark on the dial (z = 0) and a target at
    height h, pivot off-axis by c (image radius ρ = f·|c|/D): the target images at
    f(c + R p̂)/(D − h) and the mark at f·c/D, so relative to the mark the target lies at
    f·R p̂/(D − h) + ρ·h/(D − h)·ĉ: an apparent pivot shift of ρ·h/(D − h) px away from
    the principal point. Exact projection, so tolerance is rounding (1e-9 px).

    The derivation is written in a y-up frame about the principal point, so the image points
    (y down) are turned into it (u = x − cx, v = cy − y) and the offset's y (down the image)
    becomes −oy there."""
    h, d, ox, oy_down, zero = 3.0, 500.0, 30.0, 20.0, 60.0
    oy = -oy_down
    angles = [30.0, 90.0, 200.0]
    rig = make_rig({"geometry": {"target_height_mm": h, "pivot_offset_x_mm": ox, "pivot_offset_y_mm": oy_down,
                                 "zero_direction_deg": zero, "travel": "counterclockwise"},
                    "positions": {"angles_deg": angles}})
    xi, yi = nominal_image_points(rig)
    cx, cy = principal_point(rig)
    x, y = xi - cx, cy - yi
    f = rig.focal_px
    rho = f * math.hypot(ox, oy) / d
    c_hat = np.array([ox, oy]) / math.hypot(ox, oy)
    shift = rho * h / (d - h) * c_hat
    r_img = f * rig.geometry.pointer_radius_mm / (d - h)
    for j, a in enumerate([0.0, *angles]):  # Z, P1..P3; the mark is the last point
        t = math.radians(zero + a)
        rel = np.array([x[j] - x[-1], y[j] - y[-1]])
        np.testing.assert_allclose(rel - r_img * np.array([math.cos(t), math.sin(t)]), shift, atol=1e-9)
    # the readings: atan2 about the mark of those shifted points
    out = VirtualRig(rig)()

    def seen(a):
        t = math.radians(zero + a)
        return r_img * np.array([math.cos(t), math.sin(t)]) + shift

    r0 = seen(0.0)
    for i, a in enumerate(angles):
        r = seen(a)
        want = math.degrees(math.atan2(r0[0] * r[1] - r0[1] * r[0], r0 @ r))
        want = a + (want - a + 180.0) % 360.0 - 180.0
        assert out[f"P{i + 1}"][0] == pytest.approx(want, abs=1e-9)
        assert abs(out[f"P{i + 1}"][0] - a) > 0.01  # the effect is really there


def test_no_parallax_with_pivot_on_axis():
    """[derived] ρ = 0: the shift ρ·h/(D − h) vanishes, whatever h."""
    rig = make_rig({"geometry": {"target_height_mm": 5.0}, "positions": {"angles_deg": [30.0, 90.0, 200.0]}})
    out = VirtualRig(rig)()
    for i, a in enumerate(rig.nominal_angles_deg):
        assert out[f"P{i + 1}"][0] == pytest.approx(a, abs=1e-10)


# ---------------------------------------------------------------- radial distortion
def test_radial_distortion_changes_no_angle_with_pivot_on_principal_point():
    """[derived] x_d = x(1 + k1 r²) moves every point along its own radius from the
    principal point; with the pivot there, no direction about the pivot changes."""
    angles = [17.0, 123.0, 250.0]
    rig = make_rig({"lens": {"distortion_edge_pct": 5.0}, "positions": {"angles_deg": angles}})
    inputs, _ = build_inputs(rig)
    assert "k1" in inputs
    k1 = np.array([0.3, -0.2, inputs["k1"].distribution.high])
    out = VirtualRig(rig)(k1=k1)
    for i, a in enumerate(angles):
        np.testing.assert_allclose(out[f"P{i + 1}"], a, atol=1e-10)


def test_radial_distortion_moves_angles_with_pivot_off_axis():
    """Control for the test above: with the pivot 20 mm off axis the same k1 moves the
    readings (so the zero result is not an absent input)."""
    rig = make_rig({"lens": {"distortion_edge_pct": 5.0}, "geometry": {"pivot_offset_x_mm": 20.0},
                    "positions": {"angles_deg": [17.0, 123.0, 250.0]}})
    out = VirtualRig(rig)(k1=np.array([0.3]))
    assert abs(out["P2"][0] - 123.0) > 1e-3


def test_the_rigs_projection_is_the_oracles_matrix_pinhole():
    """The one projection of the budgets equals an independent matrix-form pinhole projection.

    [derived] tests/oracles/projection.py projects P_c = R P + t with the dial's Z axis pointing
    away from the camera; the rig's z points towards it. With F = diag(1, 1, −1) the two frames
    are related by p_rig = F P, so a rotation by β about an in-plane axis a in the rig's frame is
    F R F = a rotation by −β about a in the oracle's (a reflection reverses orientation). Targets
    at a height, a pivot off the optical axis and random tilts must then give the same pixels.
    """
    from budget.rig.geometry import project
    from tests.oracles.projection import project_points, tilt_rotation

    rng = np.random.default_rng(20261202)
    t, n = 50, 7
    x, y = rng.normal(scale=40.0, size=(2, t, n))
    h = rng.uniform(0.0, 3.0, size=(t, n))
    beta, phi = rng.uniform(0.0, 0.3, t), rng.uniform(0.0, 2 * np.pi, t)
    ox, oy, dist, f = 5.0, -3.0, 400.0, 5000.0
    xr, yr, zr = rotate_tilt(x, y, h, (beta * np.cos(phi))[:, None], (beta * np.sin(phi))[:, None])
    u, v = project(xr + ox, yr + oy, zr, focal_px=f, distance_mm=dist)
    uo, vo = project_points(x, y, -h, f_px=np.full(t, f), cx=np.zeros(t), cy=np.zeros(t),
                            R_cam=tilt_rotation(-beta, phi), t_cam=np.tile([ox, oy, dist], (t, 1)))
    assert np.max(np.abs(u - uo)) < 1e-9 and np.max(np.abs(v - vo)) < 1e-9
