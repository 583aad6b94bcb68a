"""Predicted budget of every candidate camera × lens at once: closed-form first-order sensitivities.

The measurement geometry (which points are located, how the pivot is found, which angles and
gain are reported) does not depend on the camera, so the sensitivity of each output to a
displacement of each located point, in units of the pointer radius, is computed once
(:func:`design_geometry`). Every candidate then only scales these by its radius in pixels and
its per-point error variances, all as numpy arrays over the candidates (:func:`predict_candidates`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import norm

from budget.imaging import optics, spot
from budget.inputs.choose_file import ChooseSpec

__all__ = ["COMPONENTS", "Candidates", "PointGradients", "Prediction", "design_geometry", "predict_candidates"]

COMPONENTS = ("pixel quantization", "pixel-locking", "centroid noise", "pivot estimate", "camera skew",
              "lens distortion", "frame timing")
_DEG = 180.0 / math.pi


@dataclass(frozen=True)
class PointGradients:
    """Unit-radius sensitivities of the outputs to the located points (camera independent).

    ``grad[o, i]`` is ∂θ_o/∂p_i·R (rad per unit displacement over the radius, 2 axes); ``pivot[i]``
    marks points located only to find the pivot; ``tilt_r``/``tilt_ox``/``tilt_oy`` give
    ∂θ_o/∂(wx, wy) = (R/D)·tilt_r + (ox/D)·tilt_ox + (oy/D)·tilt_oy; ``timing[o]`` is the sum of
    squared weights of the per-reading timing errors; ``mark[o]`` is |∂θ_o/∂c|² for a pivot mark.
    """

    outputs: tuple[str, ...]
    grad: np.ndarray  # (O, n, 2)
    pivot: np.ndarray  # (n,) bool
    tilt_r: np.ndarray  # (O, 2)
    tilt_ox: np.ndarray  # (O, 2)
    tilt_oy: np.ndarray  # (O, 2)
    timing: np.ndarray  # (O,)
    mark: np.ndarray  # (O,)
    is_gain: np.ndarray  # (O,) bool
    gain_deg_per_v: float


def _dial_angles(spec: ChooseSpec) -> tuple[np.ndarray, np.ndarray, list[str]]:
    m, pv = spec.measurement, spec.pivot
    z0 = spec.scene["zero_direction_deg"]
    if "angles_deg" in m:
        reads = np.array(m["angles_deg"])
    else:
        reads = m["nominal_gain_deg_per_v"] * np.array(m["set_points_v"])
    ang = [z0, *(z0 + reads)]
    labels = ["Z", *(f"P{i + 1}" for i in range(reads.size))]
    if pv["method"] == "arc":
        mid = 0.5 * (min(0.0, *reads) + max(0.0, *reads))
        half = pv["arc_half_angle_deg"]
        ang += list(z0 + mid + np.linspace(-half, half, pv["arc_points"]))
        labels += [f"C{i + 1}" for i in range(pv["arc_points"])]
    elif pv["method"] == "mark":
        ang.append(0.0)
        labels.append("M")
    return np.radians(np.array(ang, dtype=float)), reads, labels


def design_geometry(spec: ChooseSpec) -> PointGradients:
    """Sensitivities of every output to every located point, for a unit pointer radius.

    Notes
    -----
    Angle θ = atan2(r0 × r, r0 · r) about the estimated pivot c (DESIGN.md section 2):
    ∂θ/∂p = v_P/R, ∂θ/∂z = −v_Z/R, ∂θ/∂c = (v_Z − v_P)/R with v the unit tangent [derived].
    A circle-fit pivot moves by δ(a, b, R) = (JᵀJ)⁻¹Jᵀ(u_i·δp_i), J_i = [cos φ_i, sin φ_i, 1],
    u_i the radial unit vector: the linearized geometric fit whose covariance is Chernov (2010,
    ch. 7) σ²(JᵀJ)⁻¹. A pivot mark is c itself. Gain: the OLS slope of θ_j on V_j is Σ w_j θ_j,
    w_j = (V_j − V̄)/Σ(V − V̄)² [derived]. Tilt by a small rotation vector w = (wx, wy, 0)
    lifts a dial point by z = R(wx sin φ − wy cos φ); the pinhole image then moves by
    (p + o)·z/D relative to the pivot's image [derived from the projection in
    :mod:`budget.rig.model`], which splits into the perspective ellipse-centre term
    ∝ (R/D)·β (Ahn et al. 1999, Photogramm. Rec. 16:485) and the off-axis pivot term ∝ β·tan γ
    with tan γ = |o|/D (DESIGN.md section 3, camera skew).
    """
    phi, reads, labels = _dial_angles(spec)
    n = phi.size
    u = np.stack([np.cos(phi), np.sin(phi)], axis=1)
    v = np.stack([-np.sin(phi), np.cos(phi)], axis=1)
    method = spec.pivot["method"]
    pivot = np.array([lab.startswith("C") or lab == "M" for lab in labels])
    circle = {"readings": np.arange(1 + reads.size), "arc": np.flatnonzero(pivot)}.get(method)
    dcdp = np.zeros((2, n, 2))  # ∂c_a/∂p_i (a, i, axis)
    if circle is not None:
        jac = np.stack([np.cos(phi[circle]), np.sin(phi[circle]), np.ones(circle.size)], axis=1)
        k = np.linalg.solve(jac.T @ jac, jac.T)  # (3, m)
        for a in range(2):
            dcdp[a, circle] = k[a][:, None] * u[circle]
    else:
        dcdp[0, n - 1] = (1.0, 0.0)
        dcdp[1, n - 1] = (0.0, 1.0)
    n_read = reads.size
    grad = np.zeros((n_read, n, 2))
    dcs = np.zeros((n_read, 2))
    for j in range(n_read):
        grad[j, 1 + j] += v[1 + j]
        grad[j, 0] -= v[0]
        dc = v[0] - v[1 + j]
        dcs[j] = dc
        grad[j] += np.einsum("a,aik->ik", dc, dcdp)
    outputs = [f"P{j + 1}" for j in range(n_read)]
    timing = np.ones(n_read)
    mark = np.sum(dcs**2, axis=1) if method == "mark" else np.zeros(n_read)
    is_gain = [False] * n_read
    k_nom = 0.0
    if "set_points_v" in spec.measurement:
        volts = np.array(spec.measurement["set_points_v"])
        w = (volts - volts.mean()) / np.sum((volts - volts.mean()) ** 2)
        grad = np.concatenate([grad, np.einsum("j,jik->ik", w, grad)[None]])
        timing = np.append(timing, np.sum(w**2))
        mark = np.append(mark, np.sum((w @ dcs) ** 2) if method == "mark" else 0.0)
        outputs.append("gain")
        is_gain.append(True)
        k_nom = spec.measurement["nominal_gain_deg_per_v"]
    target = ~np.array([lab == "M" for lab in labels])
    s, c = np.sin(phi) * target, np.cos(phi) * target
    tilt_r = np.stack([np.einsum("oik,ik,i->o", grad, u, s), -np.einsum("oik,ik,i->o", grad, u, c)], axis=1)
    tilt_ox = np.stack([grad[:, :, 0] @ s, -(grad[:, :, 0] @ c)], axis=1)
    tilt_oy = np.stack([grad[:, :, 1] @ s, -(grad[:, :, 1] @ c)], axis=1)
    return PointGradients(tuple(outputs), grad, pivot, tilt_r, tilt_ox, tilt_oy, timing, mark,
                    np.array(is_gain), float(k_nom))


@dataclass(frozen=True)
class Candidates:
    """Candidate cameras and lenses as arrays of one length C (NaN focal length = automatic)."""

    pixels_x: np.ndarray
    pixels_y: np.ndarray
    pitch_um: np.ndarray
    bit_depth: np.ndarray
    read_noise_e: np.ndarray
    full_well_e: np.ndarray
    max_frame_rate_hz: np.ndarray
    rolling: np.ndarray
    focal_length_mm: np.ndarray
    f_number: np.ndarray


@dataclass(frozen=True)
class Prediction:
    """Per-candidate figures (arrays of length C) and the component variances (deg² or %²)."""

    working_distance_mm: np.ndarray
    focal_length_mm: np.ndarray
    magnification: np.ndarray
    mm_per_px: np.ndarray
    radius_px: np.ndarray
    px_across_field: np.ndarray
    fits: np.ndarray
    airy_radius_px: np.ndarray
    sigma_diffraction_px: np.ndarray
    sigma_px: np.ndarray
    window_px: np.ndarray
    exposure_ms: np.ndarray
    signal_e: np.ndarray
    background_e: np.ndarray
    locking_px: np.ndarray
    noise_px: np.ndarray
    dof_mm: np.ndarray
    dof_need_mm: float
    dof_ok: np.ndarray
    blur_px: np.ndarray
    frame_rate_needed_hz: float
    frame_rate_ok: np.ndarray
    variances_angle: np.ndarray  # (K, C) deg², worst reading
    variances_gain: np.ndarray | None  # (K, C) %²
    u_angle_deg: np.ndarray
    U_angle_deg: np.ndarray
    u_gain_pct: np.ndarray | None
    U_gain_pct: np.ndarray | None
    k: float
    meets: np.ndarray
    margin: np.ndarray
    limiting: tuple[str, ...]


def _layout(spec: ChooseSpec, cand: Candidates):
    """Working distance, focal length and magnification that fit the dial (and margin) in the short side."""
    sc = spec.scene
    field = sc["dial_diameter_mm"] * (1.0 + sc["field_margin_pct"] / 100.0)
    short_mm = np.minimum(cand.pixels_x, cand.pixels_y) * cand.pitch_um * 1e-3
    m_fit = short_mm / field
    d_min, d_max = sc["working_distance_min_mm"], sc["working_distance_max_mm"]
    auto = np.isnan(cand.focal_length_mm)
    f = np.where(auto, optics.focal_length_to_fit(field, short_mm, d_max), cand.focal_length_mm)  # farthest
    d_fit = f * (1.0 + m_fit) / m_fit  # distance at which the field just fills the short side
    dist = np.clip(d_fit, d_min, d_max)
    fits = d_fit <= d_max * (1 + 1e-12)
    dist = np.where(dist <= f * 1.001, f * 1.001, dist)  # a fixed lens longer than the range: flagged by fits
    return field, f, dist, optics.magnification(f, dist), fits


def predict_candidates(spec: ChooseSpec, cand: Candidates, geo: PointGradients | None = None) -> Prediction:
    """Predicted budget of every candidate at once.

    Parameters
    ----------
    spec : ChooseSpec
    cand : Candidates
    geo : PointGradients, optional
        From :func:`design_geometry` (computed if not given).

    Returns
    -------
    Prediction

    Notes
    -----
    Per located point and axis (px²): integer locator (1/2)²/3 (JCGM 100 F.2.2.1); pixel-locking
    arcsine of amplitude A, A²/2 (JCGM 101 6.4.6), A = e^(−2π²σ²)/π plus the window truncation
    (:mod:`budget.imaging.spot`), or for a disk |2J1(2πa)/(2πa)|·e^(−2π²σ_b²)/π; centroid
    noise from the light budget: centre of mass (σ² + 1/12)/N + b²W²(W² − 1)/(12N²) (Thompson,
    Larson & Webb 2002 photon term plus the window's background), least-squares fit Mortensen
    et al. 2010, divided by the frames averaged; distortion residual RMS²/2. An angle error is
    δθ = Σ g_i·δp_i/R_px (:func:`design_geometry`), so each row is (per-point variance)·Σ|g_i|²/R_px².
    Tilt: rectangular ±β per axis, first-order terms only (the on-axis β²/4 term has zero
    sensitivity at β = 0, JCGM 100 5.1.2 note). Timing: ω·jitter per reading; rolling shutter
    bounded by ω·R_px·t_row (rectangular), t_row = 1/(max frame rate·rows) (common practice).
    Light: signal and background scale with exposure and (N_ref/N)² (pupil area, common
    practice); exposure is shortened so the peak pixel stays below the full well and the arc
    blur below ``max_blur_px``. k = z_((1+p)/2): all inputs are Type B with infinite degrees of
    freedom (JCGM 100 G.4, G.6.6).
    """
    geo = geo or design_geometry(spec)
    sc, tg, lt, lo, mo = spec.scene, spec.target, spec.light, spec.locator, spec.motion
    field, f, dist, m, fits = _layout(spec, cand)
    pitch_mm = cand.pitch_um * 1e-3
    mm_per_px = optics.object_pixel_mm(cand.pitch_um, m)
    r_px = sc["pointer_radius_mm"] / mm_per_px
    nw = optics.working_f_number(cand.f_number, m)
    s_diff = optics.psf_sigma_um(tg["wavelength_nm"], nw) / cand.pitch_um
    airy = optics.airy_radius_um(tg["wavelength_nm"], nw) / cand.pitch_um
    disk_px = tg["diameter_mm"] / mm_per_px if tg["shape"] == "disk" else 0.0
    t_spot = tg["sigma_mm"] / mm_per_px if tg["shape"] == "spot" else 0.0
    sigma = optics.spot_sigma_px(tg["wavelength_nm"], cand.f_number, m, cand.pitch_um, t_spot, disk_px)
    # exposure: blur limit, then saturation
    omega = math.radians(abs(mo["rate_deg_per_s"]))
    t_ms = np.full(sigma.shape, lt["exposure_ms"])
    if omega > 0:
        t_ms = np.minimum(t_ms, 1e3 * mo["max_blur_px"] / (omega * r_px))
    scale = (lt["reference_f_number"] / cand.f_number) ** 2
    peak_frac = spot.peak_fraction(sigma)
    peak_per_ms = scale * (lt["signal_e_per_ms"] * peak_frac + lt["background_e_per_um2_per_ms"] * cand.pitch_um**2)
    t_ms = np.minimum(t_ms, cand.full_well_e / peak_per_ms)
    signal = lt["signal_e_per_ms"] * scale * t_ms
    bg = lt["background_e_per_um2_per_ms"] * cand.pitch_um**2 * scale * t_ms
    gain = cand.full_well_e / (2.0**cand.bit_depth - 1.0)
    b2 = bg + cand.read_noise_e**2 + spot.adc_variance_e2(gain)
    window = np.full(sigma.shape, lo["window_px"], dtype=int) if lo["window_px"] else \
        np.maximum(3, 2 * np.ceil((8.0 * sigma + 1.0 - 1.0) / 2.0).astype(int) + 1)
    method = lo["method"]
    zero = np.zeros(sigma.shape)
    quant, lock, noise = zero, zero, zero
    if method == "integer":
        quant = np.full(sigma.shape, spot.integer_quantization_variance())
    elif method == "fit":
        noise = spot.mortensen_variance(sigma, 1.0, signal, b2)
    else:
        noise = spot.com_variance(sigma, signal, b2, window)
        if tg["shape"] == "disk":
            amp = spot.disk_locking_amplitude(disk_px, np.sqrt(s_diff**2 + t_spot**2))
        else:
            amp = spot.pixel_locking_amplitude(sigma)
        amp = amp + spot.window_truncation_max(sigma, window)
        lock = amp**2 / 2.0
    noise_px = np.sqrt(noise)
    noise = noise / lo["frames_per_reading"]
    resid = lo["distortion_residual_rms_px"] ** 2 / 2.0
    # geometry sums
    g2 = np.sum(geo.grad**2, axis=2)  # (O, n)
    s_read = g2[:, ~geo.pivot].sum(axis=1)[:, None]
    s_piv = g2[:, geo.pivot].sum(axis=1)[:, None]
    inv_r2 = 1.0 / r_px**2
    beta = math.radians(sc["tilt_bound_deg"])
    ox, oy = sc["pivot_offset_x_mm"], -sc["pivot_offset_y_mm"]  # the scene's y offset is down the image; here y is up
    dtilt = (geo.tilt_r[:, :, None] * (sc["pointer_radius_mm"] / dist)
             + (geo.tilt_ox[:, :, None] * ox + geo.tilt_oy[:, :, None] * oy) / dist)  # (O, 2, C)
    var_skew = beta**2 / 3.0 * np.sum(dtilt**2, axis=1)
    mark_b = spec.pivot["mark_offset_bound_mm"] if spec.pivot["method"] == "mark" else 0.0
    var_mark = geo.mark[:, None] * mark_b**2 / 3.0 / sc["pointer_radius_mm"] ** 2
    row_s = 1.0 / (cand.max_frame_rate_hz * cand.pixels_y)
    roll = np.where(cand.rolling, omega * r_px * row_s, 0.0)  # rad, rectangular half-width
    var_timing = geo.timing[:, None] * ((omega * mo["jitter_ms"] * 1e-3) ** 2 + roll**2 / 3.0)
    var = np.stack([quant * s_read * inv_r2, lock * s_read * inv_r2, noise * s_read * inv_r2,
                    (quant + lock + noise) * s_piv * inv_r2 + var_mark, var_skew,
                    resid * (s_read + s_piv) * inv_r2, var_timing])  # (K, O, C) rad² or (rad/V)²
    var = var * _DEG**2
    k = float(norm.ppf(0.5 * (1.0 + spec.goal["p"])))
    ang = ~geo.is_gain
    u_read = np.sqrt(var[:, ang].sum(axis=0))  # (n_read, C)
    worst = np.argmax(u_read, axis=0)
    var_angle = np.take_along_axis(var[:, ang], worst[None, None, :], axis=1)[:, 0]
    u_angle = np.sqrt(var_angle.sum(axis=0))
    var_gain = u_gain = None
    if geo.is_gain.any():
        var_gain = var[:, -1] * (100.0 / geo.gain_deg_per_v) ** 2
        u_gain = np.sqrt(var_gain.sum(axis=0))
    # checks
    dof = optics.depth_of_field_mm(cand.f_number, lo["coc_px"] * pitch_mm, m)
    dof_need = sc["dial_diameter_mm"] * math.sin(beta) + sc["target_height_mm"]
    blur = optics.motion_blur_px(omega, t_ms * 1e-3, r_px)
    fr_need = abs(mo["rate_deg_per_s"]) / mo["sample_step_deg"]
    fr_ok = cand.max_frame_rate_hz >= fr_need
    dof_ok = dof >= dof_need
    margins = []
    if "angle_U_deg" in spec.goal:
        margins.append((spec.goal["angle_U_deg"] - k * u_angle) / spec.goal["angle_U_deg"])
    if u_gain is not None and "gain_U_pct" in spec.goal:
        margins.append((spec.goal["gain_U_pct"] - k * u_gain) / spec.goal["gain_U_pct"])
    margin = np.min(np.stack(margins), axis=0)
    meets = (margin >= 0) & fits & dof_ok & fr_ok
    lim_var = var_angle if "angle_U_deg" in spec.goal else var_gain
    top = np.argmax(lim_var, axis=0)
    lim = np.array(COMPONENTS, dtype=object)[top]
    lim = np.where(fr_ok, lim, "frame rate")
    lim = np.where(dof_ok, lim, "depth of field")
    limiting = tuple(np.where(fits, lim, "dial does not fit").tolist())
    return Prediction(
        working_distance_mm=dist, focal_length_mm=f, magnification=m, mm_per_px=mm_per_px, radius_px=r_px,
        px_across_field=field / mm_per_px, fits=fits, airy_radius_px=airy, sigma_diffraction_px=s_diff,
        sigma_px=sigma, window_px=window, exposure_ms=t_ms, signal_e=signal, background_e=bg,
        locking_px=np.sqrt(2.0 * lock), noise_px=noise_px, dof_mm=dof, dof_need_mm=dof_need, dof_ok=dof_ok,
        blur_px=blur, frame_rate_needed_hz=fr_need, frame_rate_ok=fr_ok, variances_angle=var_angle,
        variances_gain=var_gain, u_angle_deg=u_angle, U_angle_deg=k * u_angle, u_gain_pct=u_gain,
        U_gain_pct=None if u_gain is None else k * u_gain, k=k, meets=meets, margin=margin, limiting=limiting)
