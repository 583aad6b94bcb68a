"""Budget components of the rig against published formulas and derivations.

The circle-fit pivot on a short arc (Chernov 2010, ch. 7), the locator's quantization
(JCGM 100 F.2.2.1) and pixel-locking ([derived]), and frame averaging. Rigs are
built in memory with :func:`parse_rig`; their figures are invented for the tests.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import norm

from budget.imaging.locator_model import locator_model
from budget.inputs.rig_file import parse_rig
from budget.propagation import linear, monte_carlo
from budget.rig import components as comp
from budget.rig.budget import run_budget
from budget.rig.components import build_inputs
from budget.rig.model import VirtualRig
from tests.oracles.closed_forms import arc_centre_sd, circle_covariance
from tests.rigdoc import merge_doc

BASE = {
    "title": "component test rig (invented)",
    "camera": {"pixels_x": 4000, "pixels_y": 4000, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0, "distortion": "uncorrected"},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 40.0},
    "target": {"sigma_px": 1.0},
    "locator": {"method": "fit"},
    "pivot": {"method": "mark"},
    "positions": {"angles_deg": [40.0, 100.0]},
}


def make_rig(over: dict | None = None):
    """A minimal valid rig with ``over`` merged into its document (a value of None deletes)."""
    return parse_rig(merge_doc(BASE, over))


def group(inputs: dict, name: str) -> dict:
    return {k: q for k, q in inputs.items() if q.group == name}


# ---------------------------------------------------------------- circle-fit pivot, short arc
ARC_K = 5.0
ARC_SET_POINTS = [-3.0, -1.0, 1.0, 3.0]  # ±15°: symmetric about the arc's bisector (the default centre)


def _arc_rig(alpha_deg: float, n: int):
    return make_rig({
        "pivot": {"method": "arc", "arc_half_angle_deg": alpha_deg, "arc_points": n},
        "geometry": {"zero_direction_deg": 30.0},
        "positions": None,
        "sweep": {"set_points_v": ARC_SET_POINTS, "nominal_gain_deg_per_v": ARC_K},
    })


def _arc_exact_rel_gain_u(rig, sigma: float, alpha_deg: float, n: int) -> float:
    """[derived] Relative gain uncertainty from the arc pivot's centre error.

    A pivot wrong by c = (c_a along the bisector, c_b across) gives a reading at θ
    (from the bisector) δθ = (sin θ·c_a − cos θ·c_b)/R; the set points are symmetric
    about the bisector, so the OLS slope against θ is F·c_a/R with F = Σθ sin θ/Σθ²
    (c_b's even term has zero slope). sd(c_a) is the exact leading-order value of
    Chernov 2010, ch. 7, Cov = σ²(JᵀJ)⁻¹ (:func:`arc_centre_sd`).
    """
    theta = np.radians(ARC_K * np.array(rig.sweep.set_points_v))
    f = float(np.sum(theta * np.sin(theta)) / np.sum(theta**2))
    return f * float(arc_centre_sd(sigma, n, math.radians(alpha_deg))) / rig.radius_px


@pytest.mark.parametrize(("alpha", "n"), [(20.0, 10), (10.0, 10), (20.0, 40)])
def test_arc_pivot_gain_u_matches_exact_leading_order(alpha, n):
    """Chernov 2010, ch. 7 (exact leading-order covariance) + [derived] slope factor.
    The linear method differentiates the full circle fit numerically, and the fit's
    first-order response to noise is σ²(JᵀJ)⁻¹ exactly, so the tolerance is that of
    the 5-point derivative: 1e-6 relative."""
    rig = _arc_rig(alpha, n)
    inputs, _ = build_inputs(rig)
    pivot = group(inputs, comp.PIVOT)
    assert set(pivot) == {f"noise_{ax}_C{i + 1}" for i in range(n) for ax in "xy"}
    sigma = inputs["noise_x_C1"].distribution.u
    lin = linear(VirtualRig(rig), pivot)
    assert lin["gain"].u / ARC_K == pytest.approx(_arc_exact_rel_gain_u(rig, sigma, alpha, n), rel=1e-6)


@pytest.mark.parametrize(("alpha", "n", "ratio"), [(10.0, 10, 0.83), (20.0, 10, 0.84), (20.0, 40, 0.95)])
def test_arc_pivot_asymptote_6_7(alpha, n, ratio):
    """Chernov 2010, ch. 7: sd of the centre along the bisector ≈ 6.7σ/(√n·α²). For n
    evenly spaced points including the ends the asymptote overstates the exact value:
    exact/asymptote ≈ 0.83 at n = 10 (the value measured with arc_centre_sd; ratios
    here to ±0.02, the accuracy the asymptote is quoted to). The relative gain
    uncertainty of the rig is then ≈ F·6.7σ/(√n α² R), F ≈ 0.99 for ±15°."""
    rig = _arc_rig(alpha, n)
    inputs, _ = build_inputs(rig)
    sigma = inputs["noise_x_C1"].distribution.u
    lin = linear(VirtualRig(rig), group(inputs, comp.PIVOT))
    asymptote = 6.7 * sigma / (math.sqrt(n) * math.radians(alpha) ** 2 * rig.radius_px)
    theta = np.radians(ARC_K * np.array(ARC_SET_POINTS))
    f = float(np.sum(theta * np.sin(theta)) / np.sum(theta**2))
    assert lin["gain"].u / ARC_K / (f * asymptote) == pytest.approx(ratio, abs=0.02)


def test_arc_centre_covariance_along_bisector_is_arc_centre_sd():
    """Chernov 2010, ch. 7: Cov(a, b, R) = σ²(JᵀJ)⁻¹, J_i = [cos φ_i, sin φ_i, 1];
    for a symmetric arc Cov(a, b) = 0 by symmetry [derived], which the slope factor
    above relies on."""
    phi = np.radians(np.linspace(-20.0, 20.0, 10))
    cov = circle_covariance(phi, 0.1, 1.0)
    assert cov[0, 1] == pytest.approx(0.0, abs=1e-12 * cov[0, 0])
    assert math.sqrt(cov[0, 0]) == pytest.approx(float(arc_centre_sd(0.1, 10, math.radians(20.0))), rel=1e-12)


@pytest.fixture(scope="module")
def arc_run():
    rig = _arc_rig(20.0, 10)
    return rig, run_budget(rig, rng=np.random.default_rng(7), trials=20_000)


def test_arc_pivot_component_of_run_budget(arc_run):
    """The 'pivot estimate' row of the gain's budget (run_budget) is the exact leading
    order (Chernov 2010, ch. 7, with the [derived] slope factor) to 1e-6; its
    Monte Carlo-alone u (20 000 trials, relative standard error 1/√(2M) = 0.5 % for a
    near-normal output) to 3 %."""
    rig, res = arc_run
    inputs, _ = build_inputs(rig)
    sigma = inputs["noise_x_C1"].distribution.u
    want = ARC_K * _arc_exact_rel_gain_u(rig, sigma, 20.0, 10)
    line = next(c for c in res.gain.components if c.name == comp.PIVOT)
    assert line.contribution == pytest.approx(want, rel=1e-6)
    assert line.mc_u == pytest.approx(want, rel=0.03)


# ---------------------------------------------------------------- locator
def test_integer_locator_is_one_over_root_12():
    """JCGM 100 F.2.2.1 (resolution of a digital indication): a value known to one step q
    is rectangular over ±q/2, u = q/√12; for one pixel 0.288675 px per axis. [derived] With
    pixel noise the brightest pixel of a bright spot is the nearest one except within the noise of
    a pixel edge, where it goes either way and the error is still about ±½ px: the fixed part
    (rectangular) and the changing part (noise) together keep u = 1/√12 to a fraction of a per cent."""
    rig = make_rig({"locator": {"method": "integer"}})
    inputs, _ = build_inputs(rig)
    lm = locator_model(rig)
    for lab in ("Z", "P1", "P2", "M"):
        for ax in "xy":
            q = inputs[f"quant_{ax}_{lab}"].distribution
            n = inputs[f"noise_{ax}_{lab}"].distribution.u if f"noise_{ax}_{lab}" in inputs else 0.0
            assert math.hypot(q.u, n) == pytest.approx(1 / math.sqrt(12), rel=2e-3)
            assert q.high == -q.low == pytest.approx(0.5, rel=5e-3)
    assert lm.u_px == pytest.approx(1 / math.sqrt(12), rel=2e-3)
    assert not any(k.startswith("lock_") for k in inputs)


def test_integer_locator_angle_u():
    """[derived] A located point moved by δ changes its direction about the pivot by
    (p̂ × δ)/R; with isotropic per-axis u px on the zero image and the
    reading, u(angle) = √2·u/R rad (pivot mark held fixed), u ≈ 1/√12 px for a bright spot."""
    rig = make_rig({"locator": {"method": "integer"}})
    inputs, _ = build_inputs(rig)
    sub = {k: q for k, q in inputs.items() if k.endswith(("_Z", "_P1"))}
    lin = linear(VirtualRig(rig), sub)
    want = math.degrees(math.sqrt(2) * locator_model(rig).u_px / rig.radius_px)
    assert lin["P1"].u == pytest.approx(want, rel=1e-6)
    assert want == pytest.approx(math.degrees(math.sqrt(2) / math.sqrt(12) / rig.radius_px), rel=2e-3)


def _com_bias_max(sigma: float) -> float:
    """[derived] Largest centre-of-mass bias of a pixel-integrated Gaussian spot over the
    sub-pixel phase, by brute force (25-px window, 2001 phases)."""
    k = np.arange(-12, 13)
    d = np.linspace(-0.5, 0.5, 2001)[:, None]
    img = norm.cdf((k + 0.5 - d) / sigma) - norm.cdf((k - 0.5 - d) / sigma)
    com = (img * k).sum(axis=1) / img.sum(axis=1)
    return float(np.max(np.abs(com - d[:, 0])))


@pytest.mark.parametrize("sigma", [0.3, 0.5])
def test_pixel_locking_amplitude(sigma):
    """[derived] Poisson summation: the centre-of-mass bias of a pixel-integrated
    Gaussian is Σ_k (−1)^k sin(2πkδ)/(πk)·exp(−2π²k²σ²); its leading amplitude is
    exp(−2π²σ²)/π (0.0539 px at σ = 0.3, 0.00229 px at 0.5). The brute-force largest
    bias differs from it by at most the next harmonic, ½exp(−6π²σ²) relative (0.24 %
    at σ = 0.3). The locator model adds window truncation, negligible for a 9-px
    window at these σ (below 6σ + 1 ≤ 9 px)."""
    rig = make_rig({"locator": {"method": "centroid", "window_px": 9}, "target": {"sigma_px": sigma}})
    lm = locator_model(rig)
    amp = math.exp(-2 * math.pi**2 * sigma**2) / math.pi
    # the arcsine carries the bias's mean square over the phase, √(ΣA_k²) with the harmonics A_k:
    # above A_1 by ½(A_2/A_1)² relative, 3e-6 at σ = 0.3 [derived]
    assert lm.locking_amplitude_px == pytest.approx(amp, rel=1e-5)
    assert _com_bias_max(sigma) == pytest.approx(amp, rel=0.5 * math.exp(-6 * math.pi**2 * sigma**2) + 1e-6)
    inputs, _ = build_inputs(rig)
    q = inputs["lock_x_P1"].distribution
    assert (q.low, q.high) == pytest.approx((-amp, amp), rel=1e-5)
    assert q.u == pytest.approx(lm.locking_amplitude_px / math.sqrt(2), rel=1e-12)  # arcsine, a/√2 (JCGM 101 6.4.6)


@pytest.mark.parametrize("method", ["centroid", "integer"])
def test_averaging_frames_divides_noise_only(method):
    """[derived] N frames of a static target: independent noise averages as 1/√N; the
    sub-pixel phase, hence quantization and pixel-locking, is the same in every frame
    and does not average down (DESIGN.md table; JCGM 100 F.2.2.1 for quantization)."""
    over = {"locator": {"method": method, "window_px": 9}, "target": {"sigma_px": 0.3}}
    one, _ = build_inputs(make_rig(over))
    over16 = {**over, "frames": {"per_reading": 16}}
    sixteen, _ = build_inputs(make_rig(over16))
    for k, q in one.items():
        ratio = sixteen[k].distribution.u / q.distribution.u
        if k.startswith("noise_"):
            assert ratio == pytest.approx(0.25, rel=1e-12)
        else:
            assert ratio == pytest.approx(1.0, rel=1e-12)
    if method == "centroid":
        assert any(k.startswith("noise_") for k in one) and any(k.startswith("lock_") for k in one)


@pytest.mark.parametrize(("method", "what"), [("centroid", "pixel-locking"), ("integer", "pixel quantization")])
def test_averaging_warning_says_what_does_not_average(method, what):
    """The run's warning says, in words, that averaging divides the noise by √N but
    leaves quantization or pixel-locking unchanged."""
    rig = make_rig({"locator": {"method": method, "window_px": 9}, "target": {"sigma_px": 0.3},
                    "frames": {"per_reading": 16}})
    res = run_budget(rig, rng=np.random.default_rng(3), trials=2_000)
    text = " ".join(res.warnings)
    assert "√16" in text and "centroid noise" in text
    assert f"leaves {what} unchanged" in text


def test_centroid_noise_monte_carlo_matches_linear():
    """JCGM 101 clause 8 in miniature: the locator's normal noise enters the angle
    linearly (δθ = (p̂ × δ)/R), so Monte Carlo (20 000 trials, relative standard
    error of u 0.5 %) matches the linear u to 3 %."""
    rig = make_rig({"target": {"sigma_px": 1.0, "signal_e": 200.0, "background_e": 50.0}})
    inputs, _ = build_inputs(rig)
    noise = group(inputs, comp.NOISE)
    model = VirtualRig(rig)
    lin = linear(model, noise)
    mc = monte_carlo(model, noise, trials=20_000, rng=np.random.default_rng(11))
    assert mc["P1"].u == pytest.approx(lin["P1"].u, rel=0.03)
