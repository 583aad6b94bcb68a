"""The static gain from a voltage sweep: the source's input quantities, how source
errors move K and the intercept, the pivot's share of u(K), and the trade's arithmetic.

Rigs are built in memory with :func:`parse_rig`; their figures are invented.
"""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest

from budget.imaging.locator_model import locator_model
from budget.inputs.rig_file import load_rig, parse_rig
from budget.propagation import Rectangular, linear
from budget.rig import components as comp
from budget.rig.components import build_inputs
from budget.rig.model import VirtualRig
from tests.oracles.closed_forms import circle_covariance
from tests.paths import TEMPLATES
from tests.rigdoc import merge_doc

BASE = {
    "title": "gain test rig (invented)",
    "camera": {"pixels_x": 4000, "pixels_y": 4000, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0, "distortion": "uncorrected"},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 40.0, "zero_direction_deg": 30.0},
    "target": {"sigma_px": 1.0},
    "locator": {"method": "fit"},
    "pivot": {"method": "mark"},
    "source": {"span_v": 20.0, "bits": 16, "gain_error_pct": 0.02, "offset_mv": 1.0, "inl_lsb": 2.0,
               "noise_uv": 50.0},
    "sweep": {"set_points_v": [1.0, 2, 3, 4, 5, 6, 7, 8, 9], "nominal_gain_deg_per_v": 10.0},
}


def make_rig(over: dict | None = None):
    """A minimal valid sweep rig with ``over`` merged into its document (None deletes)."""
    return parse_rig(merge_doc(BASE, over))


# ---------------------------------------------------------------- the source's input quantities
def test_source_lsb_is_rectangular_over_one_step():
    """JCGM 100 F.2.2.1: a 16-bit step over 20 V, q = 0.30518 mV, is rectangular over
    ±q/2 at every set point, u = q/√12 = 0.088097 mV."""
    rig = make_rig()
    inputs, _ = build_inputs(rig)
    q_mv = 20.0 / 2**16 * 1e3
    for i in range(9):
        d = inputs[f"lsb_mv_P{i + 1}"].distribution
        assert isinstance(d, Rectangular)
        assert d.u == pytest.approx(q_mv / math.sqrt(12), rel=1e-12)
        assert inputs[f"lsb_mv_P{i + 1}"].group == comp.SOURCE


def test_source_gain_and_offset_are_rectangular_bounds():
    """JCGM 100 4.3.7: a quantity known only to lie within ±a is rectangular, u = a/√3;
    gain 0.02 % → 0.011547 %, offset 1 mV → 0.57735 mV, each one input shared by all
    set points (not one per point)."""
    rig = make_rig()
    inputs, _ = build_inputs(rig)
    assert inputs["source_gain_pct"].distribution.u == pytest.approx(0.02 / math.sqrt(3), rel=1e-12)
    assert inputs["source_offset_mv"].distribution.u == pytest.approx(1.0 / math.sqrt(3), rel=1e-12)
    assert inputs["inl_mv_P3"].distribution.u == pytest.approx(2 * 20.0 / 2**16 * 1e3 / math.sqrt(3), rel=1e-12)
    assert not any(k.startswith(("source_gain_pct_", "source_offset_mv_")) for k in inputs)


# ---------------------------------------------------------------- how source errors move K
def _source_noise(rig, t: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    inputs, _ = build_inputs(rig)
    return {k: q.distribution.sample(rng, t) for k, q in inputs.items()
            if k.startswith(("lsb_mv_", "inl_mv_", "vnoise_mv_"))}


@pytest.mark.parametrize("g_pct", [0.5, -2.0])
def test_source_gain_error_scales_k_by_one_plus_g(g_pct):
    """[derived] V_actual = (V_set + e_j)(1 + g): every angle is K(1 + g)(V_set + e_j), so
    the OLS slope against V_set is (1 + g) times what it is at g = 0, whatever the
    per-point source errors e_j (50 random draws). Exact up to rounding: 1e-12."""
    rig = make_rig()
    model = VirtualRig(rig)
    kw = _source_noise(rig, 50, np.random.default_rng(4))
    k0 = model(**kw, source_gain_pct=np.zeros(50))["gain"]
    kg = model(**kw, source_gain_pct=np.full(50, g_pct))["gain"]
    np.testing.assert_allclose(kg / k0, 1 + g_pct / 100, rtol=1e-12)
    assert np.ptp(k0) > 0  # the per-point errors really vary the fitted K


def test_source_offset_moves_only_the_intercept():
    """[derived] V_actual = V_set + e_j + V_os adds K·V_os to every angle: the slope is
    unchanged and the intercept moves by K·V_os (10 °/V × 3 mV = 0.03°)."""
    rig = make_rig()
    model = VirtualRig(rig)
    kw = _source_noise(rig, 50, np.random.default_rng(5))
    a = model(**kw, source_offset_mv=np.zeros(50))
    b = model(**kw, source_offset_mv=np.full(50, 3.0))
    np.testing.assert_allclose(b["gain"], a["gain"], rtol=1e-12)
    np.testing.assert_allclose(b["intercept"] - a["intercept"], 10.0 * 3e-3, rtol=1e-9)


def test_source_offset_has_no_first_order_effect_on_k():
    """[derived] as above, by the linear method: u(K) from the offset is zero while the
    intercept gets K·u(V_os) = 10 °/V × 0.57735 mV."""
    rig = make_rig()
    inputs, _ = build_inputs(rig)
    lin = linear(VirtualRig(rig), {"source_offset_mv": inputs["source_offset_mv"]})
    assert lin["gain"].u < 1e-12
    assert lin["intercept"].u == pytest.approx(10.0 * 1e-3 / math.sqrt(3), rel=1e-9)


# ---------------------------------------------------------------- the pivot fitted to the sweep
SHORT_K = 2.0  # 2 °/V over 1…9 V: the zero image and nine readings span 0…18°, α = 9°, n = 10


@pytest.fixture(scope="module")
def short_sweep():
    rig = make_rig({"pivot": {"method": "readings"}, "source": None,
                    "sweep": {"nominal_gain_deg_per_v": SHORT_K}})
    inputs, _ = build_inputs(rig)
    noise = {k: q for k, q in inputs.items() if q.group == comp.NOISE}
    lin = linear(VirtualRig(rig), noise)
    sigma = inputs["noise_x_Z"].distribution.u
    return rig, sigma, lin["gain"].u / SHORT_K


def test_short_sweep_gain_u_is_pivot_plus_direct_term(short_sweep):
    """[derived] To first order the circle fit uses only the radial components of the
    located points and each reading's own error only its tangential one, so the two
    parts of u(K)/K add in quadrature: pivot, √(cᵀ Cov(a, b) c)/R with Cov from
    Chernov 2010, ch. 7 (σ²(JᵀJ)⁻¹) and c the OLS slopes of sin θ, −cos θ (θ from the
    bisector) over the readings; direct, σ/(R·√Σ(θ_j − θ̄)²). 1e-6 relative (numerical
    derivatives of the full fit)."""
    rig, sigma, rel = short_sweep
    r = rig.radius_px
    alpha = math.radians(9.0)
    theta_all = np.radians(np.arange(0.0, 20.0, 2.0)) - alpha
    cov = circle_covariance(theta_all, sigma, r)[:2, :2]
    th = theta_all[1:]
    tc = th - th.mean()
    c = np.array([np.sum(tc * np.sin(th)), -np.sum(tc * np.cos(th))]) / np.sum(tc**2)
    pivot = math.sqrt(c @ cov @ c) / r
    direct = sigma / (r * math.sqrt(np.sum(tc**2)))
    assert rel == pytest.approx(math.hypot(pivot, direct), rel=1e-6)
    assert pivot > 10 * direct  # a short sweep: the pivot term is the gain's budget


def test_short_sweep_gain_u_near_chernov_asymptote(short_sweep):
    """Chernov 2010, ch. 7: u(K)/K ≈ 6.7σ/(√n·α²·R). Approximate: for n = 10 evenly
    spaced points with both ends the exact centre sd is 0.83 of the asymptote and the
    direct term adds 0.1 %, so the ratio must lie in 0.83 ± 0.03."""
    rig, sigma, rel = short_sweep
    asymptote = 6.7 * sigma / (math.sqrt(10) * math.radians(9.0) ** 2 * rig.radius_px)
    assert rel / asymptote == pytest.approx(0.83, abs=0.03)


# ---------------------------------------------------------------- facts of the trade
def test_nominal_gain_is_full_scale_over_rated_voltage():
    """Common practice (no published source): a linear movement deflects full scale at
    its rated voltage, so K = 100°/10 V = 10 °/V and 4 V gives 40°; the sweep template
    uses exactly that gain and says so."""
    full_scale_deg, rated_v = 100.0, 10.0
    k = full_scale_deg / rated_v
    assert k == 10.0 and k * 4.0 == 40.0
    rig = load_rig(TEMPLATES / "gain_sweep.toml")
    assert rig.sweep.nominal_gain_deg_per_v == k
    text = (TEMPLATES / "gain_sweep.toml").read_text(encoding="utf-8")
    assert "full-scale angle / rated voltage" in text
    model = VirtualRig(rig)
    assert model()["P4"][0] == pytest.approx(40.0, abs=1e-9)  # 4 V, no error applied


def test_series_resistor_for_one_milliamp_full_scale():
    """Common practice (no published source): a moving-coil movement of 1 mA full scale
    and 50 Ω coil on a 10 V range needs R_s = V_fs/I_fs − R_m = 9.95 kΩ; the template's
    load (series resistor + coil) is V_fs/I_fs = 10 kΩ, as its comment says."""
    v_fs, i_fs = 10.0, 1e-3
    doc = tomllib.loads((TEMPLATES / "gain_sweep.toml").read_text(encoding="utf-8"))
    # the shipped template, not this test's arithmetic, is what is checked
    assert doc["source"]["load_resistance_ohm"] == pytest.approx(v_fs / i_fs, abs=1e-9)
    line = next(s for s in (TEMPLATES / "gain_sweep.toml").read_text(encoding="utf-8").splitlines()
                if s.startswith("load_resistance_ohm"))
    assert "9.95 kΩ + 50 Ω" in line and "1 mA" in line


def test_chi2_of_a_measured_sweep_uses_each_point_own_errors_only():
    """ISO/TS 28037 clause 6: χ² = Σ((θ_j − a − bV_j)/u_j)² with u_j the uncertainty of what
    scatters point j about the line. [derived] With a mark pivot on the optical axis and no
    tilt, a perpendicular error δp at a reading moves its angle by δp/R (rad), so the reading's
    own locator noise and distortion residual give u = √(σ_n² + σ_r²)/R; its own source step,
    INL and noise give K·u(V). The zero image's errors move every angle alike (they enter the
    intercept, not the scatter), as do the source's gain and offset: none of them belongs in u_j.
    Tolerance 1e-6: the linear method's finite differences, nothing else."""
    from budget.fit import straight_line
    from budget.rig.budget import run_budget

    rig = make_rig({"lens": {"distortion": "corrected", "residual_rms_px": 0.04},
                    "source": {"noise_uv": None}})
    lm = locator_model(rig)
    sigma_r = 0.04 / math.sqrt(2.0)
    u_px = math.sqrt(lm.noise_px_per_frame**2 + sigma_r**2)
    u_own_angle = math.degrees(u_px / rig.radius_px)
    lsb = rig.source.lsb_v
    u_v = math.sqrt(lsb**2 / 12 + (2.0 * lsb) ** 2 / 3)  # LSB step ±q/2 and INL ±2 LSB, rectangular
    u_j = math.sqrt(u_own_angle**2 + (10.0 * u_v) ** 2)
    x = np.array(rig.sweep.set_points_v)
    measured = tuple(10.0 * x + 0.004 * np.sin(3.0 * x))
    expected = straight_line(x, np.array(measured), u_y=np.full(x.size, u_j)).chi2
    res = run_budget(rig, rng=np.random.default_rng(4), trials=2000, measured_deg=measured)
    assert res.gain_summary.chi2 == pytest.approx(expected, rel=1e-6)
