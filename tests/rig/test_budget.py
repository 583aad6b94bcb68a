"""The rig's budget against an independent first-order propagation and derivations.

The linear budget of a small rig is recomputed with the ``uncertainties`` package
through a plain-Python version of the angle (no code of ours in the chain); timing
effects of a moving pointer and evaluation mode (Type A from located positions) are
checked against derivations. Rigs are built in memory; their figures are invented.
"""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest
from scipy import stats
from uncertainties import covariance_matrix, ufloat, umath

from budget.inputs.data_csv import read_rig_data
from budget.inputs.rig_file import parse_rig
from budget.propagation import JointComponent, linear
from budget.rig import components as comp
from budget.rig.budget import run_budget
from budget.rig.components import build_inputs
from budget.rig.description import point_labels
from budget.rig.evaluation import load_evaluation
from budget.rig.geometry import nominal_image_points
from budget.rig.model import VirtualRig
from tests.rigdoc import merge_doc

BASE = {
    "title": "budget test rig (invented)",
    "camera": {"pixels_x": 4000, "pixels_y": 4000, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0, "distortion": "corrected", "residual_rms_px": 0.05},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 40.0, "pivot_offset_x_mm": 12.0,
                 "pivot_offset_y_mm": -7.0, "zero_direction_deg": 215.0},
    "target": {"sigma_px": 0.35, "signal_e": 3000.0, "background_e": 20.0},
    "locator": {"method": "centroid", "window_px": 9},
    "pivot": {"method": "mark", "mark_offset_bound_mm": 0.05},
    "positions": {"angles_deg": [25.0, 110.0, 250.0]},
}


def _evaluate(rig):
    return load_evaluation(rig, read_rig_data(rig))


def make_doc(over: dict | None = None) -> dict:
    """A minimal valid rig document with ``over`` merged in (a value of None deletes)."""
    return merge_doc(BASE, over)


# ---------------------------------------------------------------- against `uncertainties`
def _angles_with_uncertainties(doc: dict, inputs: dict) -> list:
    """The angles as plain Python on ufloats: pinhole image of each dial point, plus its
    locator and residual errors, atan2 about the mark relative to the zero image.

    Written from the document alone (focal length in px from the thin lens,
    f_px = f/(D − f)·D/pitch), so none of the package's geometry is reused.
    """
    g, cam, lens = doc["geometry"], doc["camera"], doc["lens"]
    d = g["working_distance_mm"]
    f_px = lens["focal_length_mm"] / (d - lens["focal_length_mm"]) * d / (cam["pitch_um"] * 1e-3)
    ox, oy = g["pivot_offset_x_mm"], g["pivot_offset_y_mm"]
    uf = {name: ufloat(q.distribution.mean, q.distribution.u, name) for name, q in inputs.items()}

    def err(ax: str, lab: str):
        return sum(uf[f"{kind}_{ax}_{lab}"] for kind in ("quant", "lock", "noise", "resid")
                   if f"{kind}_{ax}_{lab}" in uf)

    def point(lab: str, angle_deg: float):
        t = math.radians(g["zero_direction_deg"] + angle_deg)
        x = f_px * (g["pointer_radius_mm"] * math.cos(t) + ox) / d
        y = f_px * (g["pointer_radius_mm"] * math.sin(t) + oy) / d
        return x + err("x", lab), y + err("y", lab)

    mx = f_px * (ox + uf["mark_offset_x_mm"]) / d + err("x", "M")
    my = f_px * (oy + uf["mark_offset_y_mm"]) / d + err("y", "M")
    zx, zy = point("Z", 0.0)
    x0, y0 = zx - mx, zy - my
    out = []
    for i, a in enumerate(doc["positions"]["angles_deg"]):
        px, py = point(f"P{i + 1}", a)
        xs, ys = px - mx, py - my
        ang = umath.degrees(umath.atan2(x0 * ys - y0 * xs, x0 * xs + y0 * ys))
        out.append(ang + 360.0 if a > 180.0 else ang)  # the branch of the nominal angle
    return out


@pytest.fixture(scope="module")
def small_rig():
    doc = make_doc()
    rig = parse_rig(doc)
    inputs, corr = build_inputs(rig)
    assert not corr
    return doc, rig, inputs


def test_small_rig_has_the_inputs_the_cross_check_models(small_rig):
    """The cross-check below covers every input of the rig (none is left out silently)."""
    _, _, inputs = small_rig
    kinds = {name.split("_")[0] for name in inputs}
    assert kinds == {"lock", "noise", "resid", "mark"}


def test_linear_budget_matches_uncertainties_package(small_rig):
    """First-order propagation (JCGM 100 eq. 10) by the ``uncertainties`` package
    (automatic differentiation of a plain-Python model) against our linear method
    (5-point central differences, error O(h⁴) with h = 10⁻²·u): u of every angle and
    the covariance between angles to 1e-6 relative."""
    doc, rig, inputs = small_rig
    lin = linear(VirtualRig(rig), inputs)
    ref = _angles_with_uncertainties(doc, inputs)
    for i, a in enumerate(ref):
        name = f"P{i + 1}"
        assert lin[name].estimate == pytest.approx(a.nominal_value, abs=1e-9)
        assert lin[name].u == pytest.approx(a.std_dev, rel=1e-6)
    cov_ref = np.array(covariance_matrix(ref))
    idx = [list(lin.names).index(f"P{i + 1}") for i in range(len(ref))]
    np.testing.assert_allclose(lin.covariance[np.ix_(idx, idx)], cov_ref, rtol=1e-6)


def test_component_rows_match_uncertainties_package(small_rig):
    """Each budget component's contribution is the root-sum-square of its inputs'
    first-order terms; ``uncertainties`` gives each input's term as ∂θ/∂x·u(x)
    (``error_components``), grouped here by the component names. 1e-6 relative."""
    doc, rig, inputs = small_rig
    lin = linear(VirtualRig(rig), inputs)
    ref = _angles_with_uncertainties(doc, inputs)
    for i, a in enumerate(ref):
        terms: dict[str, float] = {}
        for var, term in a.error_components().items():
            group = inputs[var.tag].group
            terms[group] = terms.get(group, 0.0) + term**2
        rows = {g.name: g.contribution for g in lin[f"P{i + 1}"].groups}
        assert set(rows) == set(terms)
        for g, t2 in terms.items():
            assert rows[g] == pytest.approx(math.sqrt(t2), rel=1e-6), g


# ---------------------------------------------------------------- timing of a moving pointer
def _moving_rig(timestamp: str, rate: float = 120.0, exposure_ms: float = 2.0, jitter_ms: float = 0.05):
    return parse_rig(make_doc({
        "camera": {"exposure_ms": exposure_ms},
        "motion": {"state": "moving", "rate_deg_per_s": rate, "timestamp": timestamp, "jitter_ms": jitter_ms},
    }))


def test_jitter_moves_a_moving_reading_by_rate_times_delay():
    """[derived] A pointer turning at ω read δt late is off by ω·δt: 120 °/s and 0.05 ms
    rms jitter give u = 0.006°. Exact (the model is linear in the delay)."""
    rig = _moving_rig("middle")
    model = VirtualRig(rig)
    base = model()["P1"][0]
    moved = model(jitter_ms_P1=np.array([0.25]))["P1"][0]
    assert moved - base == pytest.approx(120.0 * 0.25e-3, rel=1e-12)
    inputs, _ = build_inputs(rig)
    jitter = {k: q for k, q in inputs.items() if k.startswith("jitter_ms_")}
    assert set(jitter) == {"jitter_ms_P1", "jitter_ms_P2", "jitter_ms_P3"}
    assert all(q.group == comp.TIMING for q in jitter.values())
    lin = linear(model, jitter)
    assert lin["P2"].u == pytest.approx(120.0 * 0.05e-3, rel=1e-9)


@pytest.mark.parametrize("rate", [120.0, -45.0])
def test_start_of_exposure_stamp_biases_by_half_exposure(rate):
    """[derived] The blurred image's centroid is the mid-exposure angle; a timestamp at
    the start of the exposure attributes it t_e/2 too early, so the estimate moves by
    exactly ω·t_e/2 (120 °/s × 1 ms = 0.12°)."""
    te = 2.0
    start = VirtualRig(_moving_rig("start", rate, te))()
    middle = VirtualRig(_moving_rig("middle", rate, te))()
    for name in ("P1", "P2", "P3"):
        assert start[name][0] - middle[name][0] == pytest.approx(rate * te * 1e-3 / 2, rel=1e-12)


def test_start_of_exposure_warning_states_the_bias():
    rig = _moving_rig("start")
    res = run_budget(rig, rng=np.random.default_rng(5), trials=2_000)
    text = " ".join(res.warnings)
    assert "ω·t_e/2 = +0.12°" in text


def test_static_pointer_has_no_timing_term():
    """[derived] ω = 0: every timing effect vanishes and no timing input is built."""
    rig = parse_rig(make_doc({"motion": {"state": "static", "jitter_ms": 0.05, "timestamp": "start"}}))
    inputs, _ = build_inputs(rig)
    assert not any(q.group == comp.TIMING for q in inputs.values())
    out = VirtualRig(rig)()
    for i, a in enumerate(rig.nominal_angles_deg):
        assert out[f"P{i + 1}"][0] == pytest.approx(a, abs=1e-9)


# ---------------------------------------------------------------- evaluation mode
N_FRAMES = 5


@pytest.fixture(scope="module")
def evaluation(tmp_path_factory):
    """Located positions of Z, P1…P3 and the mark: 5 frames each, scatter 0.02 px (invented).

    The Type B terms are made small (least-squares locator, 0.001 px residual, no mark
    offset) so that the Type A scatter dominates the budget.
    """
    folder = tmp_path_factory.mktemp("evaluation")
    doc = make_doc({"data": {"readings_csv": "positions.csv"}, "locator": {"method": "fit"},
                    "lens": {"residual_rms_px": 0.001}, "pivot": {"mark_offset_bound_mm": None}})
    rig_design = parse_rig(doc)
    x, y = nominal_image_points(rig_design)
    rng = np.random.default_rng(99)
    rows = []
    for j, lab in enumerate(point_labels(rig_design)):
        for k in range(N_FRAMES):
            rows.append((lab, k + 1, x[j] + rng.normal(loc=0.0, scale=0.02), y[j] + rng.normal(loc=0.0, scale=0.02)))
    with open(folder / "positions.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["position", "frame", "x_px", "y_px"])
        w.writerows(rows)
    rig = parse_rig(doc, base=folder)
    ev = _evaluate(rig)
    return rows, ev


def test_evaluation_type_a_is_t_with_n_minus_1_dof(evaluation):
    """JCGM 100 4.2.3 and C.3.6 (the mean of n observations has covariance S/n with ν = n − 1),
    JCGM 101 6.4.9 / JCGM 102 6.5.3 (scaled and shifted t): every located point is one bivariate t
    with 4 dof for 5 frames, carried as two inputs along the principal axes of S/n, so the two
    axes' variances times their unit vectors rebuild S/n from the data exactly [derived]."""
    rows, ev = evaluation
    assert ev.type_a is not None
    inputs, _ = build_inputs(ev.rig, ev.type_a)
    for lab in point_labels(ev.rig):
        xy = np.array([(r[2], r[3]) for r in rows if r[0] == lab])
        want = np.cov(xy, rowvar=False, ddof=1) / N_FRAMES
        got = np.zeros((2, 2))
        dirs = ev.type_a[lab].directions()
        parents = set()
        for axis in ("major", "minor"):
            q = inputs[f"noise_{axis}_{lab}"]
            assert isinstance(q.distribution, JointComponent)
            assert q.distribution.dof == N_FRAMES - 1
            assert q.evaluation == "A"
            v = np.array(dirs[f"noise_{axis}_{lab}"])
            got += q.distribution.u**2 * np.outer(v, v)
            parents.add(id(q.distribution.joint))
        assert len(parents) == 1  # one joint quantity per point
        np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-18)


def test_evaluation_angles_come_from_the_data(evaluation):
    """[derived] The readings become the atan2 angles of the mean positions about the
    mean mark relative to the mean zero image (0.02 px scatter on a 400 px radius moves
    them by about 0.003°)."""
    _, ev = evaluation
    assert ev.measured_deg is not None
    for got, nominal in zip(ev.rig.nominal_angles_deg, BASE["positions"]["angles_deg"], strict=True):
        assert got == pytest.approx(nominal, abs=0.02)
        assert got != nominal


def test_evaluation_run_has_finite_dof(evaluation):
    """Welch–Satterthwaite (JCGM 100 G.4.1): with Type A inputs of 4 dof dominating,
    the effective dof is finite and at least 4, and k = t_95(ν_eff) is above the
    normal 1.96 (scipy.stats.t.ppf); the run works end to end."""
    _, ev = evaluation
    res = run_budget(ev.rig, rng=np.random.default_rng(1), trials=20_000, type_a=ev.type_a,
                     measured_deg=ev.measured_deg)
    for ob in res.angles:
        assert math.isfinite(ob.linear.nu_eff) and ob.linear.nu_eff >= N_FRAMES - 1
        assert ob.linear.nu_eff < 100
        assert ob.linear.k == pytest.approx(float(stats.t.ppf(0.975, ob.linear.nu_eff)), rel=1e-9)
        assert ob.linear.k > 2.0
        noise = next(c for c in ob.components if c.name == comp.NOISE)
        assert noise.evaluation == "A"
        assert math.isfinite(ob.monte_carlo.u) and ob.monte_carlo.u > 0


def test_component_monte_carlo_works_at_high_coverage_probability():
    """JCGM 101 7.9.4 asks for M >= 100/(1 − p) trials: 100 000 at p = 0.999, more than the
    20 000 of each one-component Monte Carlo, which must then run longer rather than refuse
    a 'trials' field the user never gave. With only 'a' varying, u(a + b) = u(a) = 1;
    the sample sd of M normal values has relative se 1/√(2M) ≈ 0.2 %, so 1 % is 4.5 se."""
    from budget.propagation import InputQuantity, Normal
    from budget.rig.budget import component_mc_u

    inputs = {"a": InputQuantity(Normal(0.0, 1.0)), "b": InputQuantity(Normal(0.0, 5.0))}
    u = component_mc_u(lambda a, b: {"P1": a + b}, inputs, {}, ("a",), rng=np.random.default_rng(2), p=0.999)
    assert u["P1"] == pytest.approx(1.0, rel=0.01)
