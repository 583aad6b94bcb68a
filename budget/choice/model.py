"""Predicted budget of every candidate camera × lens at once: the closed-form surrogate of the rig model.

The sensitivities of the outputs to the located points come once from :func:`design_geometry`;
every candidate then only scales them by its radius in pixels and its per-point error variances,
all as numpy arrays over the candidates (:func:`predict_candidates`), at a working distance,
f-number and exposure per candidate. The surrogate is tested against the virtual rig
(``tests/choice``) and ``choose`` confirms its top rows with the rig model itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

from budget.choice.design import PointGradients, design_geometry
from budget.imaging import optics, pixel_model, spot
from budget.inputs.choose_file import ChooseSpec

__all__ = ["COMPONENTS", "OMITTED", "Candidates", "PointGradients", "Prediction", "design_geometry",
           "predict_candidates", "distance_bounds", "truncation_by_window"]

COMPONENTS = ("pixel quantization", "pixel-locking", "centroid noise", "pivot estimate", "camera skew",
              "lens distortion", "frame timing")
OMITTED = (
    ("pointer repeatability, settling and pivot play", "the pointer's own, the same with any camera"),
    ("camera-mount drift", "the mount's, the same with any camera"),
    ("fixed-pattern noise (PRNU, DSNU)", "the cameras list has no columns for it"),
    ("the voltage source's errors (sweeps)", "the source's, the same with any camera: an ideal source is assumed"),
)
"""Components a rig budget has that the choice leaves out, with why: each is an optimistic omission
(the candidates' U is smaller than the rig's will be), said in every report of ``choose``; ``run`` on
the rig written by ``--rig-out`` lists them among its assumptions."""
_DEG = 180.0 / math.pi


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
    f_number: np.ndarray
    bias_angle_deg: np.ndarray  # known offset of the worst reading (rolling-shutter rows), deg
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


def _fit_geometry(spec: ChooseSpec, cand: Candidates):
    """The field to keep in view, the sensor's short side (mm) and the magnification that just fits it."""
    sc = spec.scene
    field = sc["dial_diameter_mm"] * (1.0 + sc["field_margin_pct"] / 100.0)
    short_mm = np.minimum(cand.pixels_x, cand.pixels_y) * cand.pitch_um * 1e-3
    return field, short_mm, short_mm / field


def distance_bounds(spec: ChooseSpec, cand: Candidates) -> tuple[np.ndarray, np.ndarray]:
    """Shortest and longest allowed working distance of each candidate (mm).

    The shortest is where the dial (and its margin) just fills the sensor's short side with a fixed
    lens, or the fixture's minimum; an automatic lens is chosen to fit at every distance. Where the
    shortest exceeds the longest, the dial does not fit (the prediction flags it).
    """
    sc = spec.scene
    _, _, m_fit = _fit_geometry(spec, cand)
    d_fit = np.where(np.isnan(cand.focal_length_mm), 0.0, cand.focal_length_mm * (1.0 + m_fit) / m_fit)
    lo = np.maximum(sc["working_distance_min_mm"], d_fit)
    return np.minimum(lo, sc["working_distance_max_mm"]), np.full(lo.shape, sc["working_distance_max_mm"])


def _layout(spec: ChooseSpec, cand: Candidates, distance_mm: np.ndarray | None):
    """Working distance, focal length, magnification and whether the dial fits."""
    field, short_mm, m_fit = _fit_geometry(spec, cand)
    auto = np.isnan(cand.focal_length_mm)
    if distance_mm is None:  # a fixed lens at its shortest distance; an automatic lens fitted at the farthest
        lo, hi = distance_bounds(spec, cand)
        distance_mm = np.where(auto, hi, lo)
    f = np.where(auto, optics.focal_length_to_fit(field, short_mm, distance_mm), cand.focal_length_mm)
    d_fit = f * (1.0 + m_fit) / m_fit
    fits = d_fit <= distance_mm * (1 + 1e-9)
    dist = np.where(distance_mm <= f * 1.001, f * 1.001, distance_mm)  # a lens longer than the range: not fits
    return field, f, dist, optics.magnification(f, dist), fits


NODES_PER_OCTAVE = 32
"""σ nodes of the truncation table: 2^(k/32) px, 2.2 % apart."""
_TRUNCATION: dict[int, dict[int, float]] = {}
"""Memo of the window-truncation maximum at the σ nodes, per window size (a pure function's values)."""


def truncation_by_window(sigma: np.ndarray, window: np.ndarray) -> np.ndarray:
    """The window-truncation maximum, computed once per window size and σ node.

    Notes
    -----
    :func:`budget.imaging.spot.window_truncation_max` for each distinct window on its own pixel span
    (no padding to the widest window), at the nodes σ = 2^(k/32) px that bracket the σ asked for,
    each node computed once per process; between nodes, linear interpolation of log T in log σ (tested
    against the direct evaluation in ``tests/choice``: within 1 % of the value).
    """
    out = np.zeros(sigma.shape)
    need = window < 12.0 * sigma + 1.0  # beyond this the truncation is below 1e-8 px (spot module)
    for w in np.unique(window[need]):
        sel = need & (window == w)
        ls = np.log2(sigma[sel]) * NODES_PER_OCTAVE
        k = np.arange(math.floor(ls.min()), math.ceil(ls.max()) + 1)
        memo = _TRUNCATION.setdefault(int(w), {})
        todo = [int(i) for i in k if int(i) not in memo]
        if todo:
            s_nodes = 2.0 ** (np.array(todo, dtype=float) / NODES_PER_OCTAVE)
            memo.update(zip(todo, spot.window_truncation_max(s_nodes, np.full(len(todo), w)).tolist(), strict=True))
        nodes = np.log(np.maximum(np.array([memo[int(i)] for i in k]), 1e-300))
        out[sel] = np.exp(np.interp(ls, k.astype(float), nodes))
    return out


def predict_candidates(spec: ChooseSpec, cand: Candidates, geo: PointGradients | None = None, *,
                       distance_mm: np.ndarray | None = None, exposure_ms: float | None = None,
                       exact_adc: bool = True) -> Prediction:
    """Predicted budget of every candidate at once.

    Parameters
    ----------
    spec : ChooseSpec
    cand : Candidates
        Cameras and lenses; ``f_number`` is the aperture used.
    geo : PointGradients, optional
        From :func:`design_geometry` (computed if not given).
    distance_mm : ndarray, optional
        Working distance of each candidate (default: a fixed lens at the shortest allowed, an automatic
        lens at the farthest, where it is fitted to the dial; :func:`distance_bounds`).
    exposure_ms : float, optional
        Exposure wanted (default ``[light] exposure_ms``), shortened against saturation and blur.
    exact_adc : bool
        False: the ADC's rounding as g²/12 of added noise (a screening figure, fast; the working-distance
        search uses it); True: rounding exact where the noise is below 0.75 count
        (:func:`budget.imaging.pixel_model.locator_terms`).

    Returns
    -------
    Prediction

    Notes
    -----
    Per located point and axis (px²): the locator model of the rig
    (:func:`budget.imaging.pixel_model.locator_terms`, the same function ``run`` uses), evaluated over
    all candidates at once: the error fixed by the sub-pixel phase (integer locator: "pixel
    quantization"; otherwise "pixel-locking") and the noise per reading after the frames are averaged;
    readings of a moving pointer are streaked by the motion blur, the pivot's points are still;
    distortion residual RMS²/2. An angle error is
    δθ = Σ g_i·δp_i/R_px (:func:`design_geometry`), so each row is (per-point variance)·Σ|g_i|²/R_px².
    Tilt: rectangular ±β per axis, first-order terms only (the on-axis β²/4 term has zero
    sensitivity at β = 0, JCGM 100 5.1.2 note). Timing: ω·jitter per reading; a rolling shutter
    delays reading j by its rows from the top, (H/2 − y_j)·t_row with t_row = 1/(max frame rate·H)
    (common practice), a known offset ω·delay as in the virtual rig; the claimed U of an output is
    k·u + |offset| (:func:`budget.rig.claim.claim_U` for a normal output).
    Light: signal and background scale with exposure and (N_ref/N)² (pupil area, common
    practice); exposure is shortened so the peak pixel stays below the full well and the arc
    blur below ``max_blur_px``. k = z_((1+p)/2): all inputs are Type B with infinite degrees of
    freedom (JCGM 100 G.4, G.6.6).
    """
    geo = geo or design_geometry(spec)
    sc, tg, lt, lo, mo = spec.scene, spec.target, spec.light, spec.locator, spec.motion
    field, f, dist, m, fits = _layout(spec, cand, distance_mm)
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
    t_ms = np.full(sigma.shape, lt["exposure_ms"] if exposure_ms is None else exposure_ms)
    if omega > 0:
        t_ms = np.minimum(t_ms, 1e3 * mo["max_blur_px"] / (omega * r_px))
    scale = (lt["reference_f_number"] / cand.f_number) ** 2
    peak_frac = spot.peak_fraction(sigma)
    peak_per_ms = scale * (lt["signal_e_per_ms"] * peak_frac + lt["background_e_per_um2_per_ms"] * cand.pitch_um**2)
    t_ms = np.minimum(t_ms, cand.full_well_e / peak_per_ms)
    signal = lt["signal_e_per_ms"] * scale * t_ms
    bg = lt["background_e_per_um2_per_ms"] * cand.pitch_um**2 * scale * t_ms
    gain = cand.full_well_e / (2.0**cand.bit_depth - 1.0)
    window = np.full(sigma.shape, lo["window_px"], dtype=int) if lo["window_px"] else \
        np.maximum(3, 2 * np.ceil((8.0 * sigma + 1.0 - 1.0) / 2.0).astype(int) + 1)
    method = lo["method"]
    disk = tg["shape"] == "disk"
    light = dict(method=method, sigma_px=np.sqrt(s_diff**2 + t_spot**2) if disk else sigma, signal_e=signal,
                 background_e=bg, read_noise_e=cand.read_noise_e, gain_e_per_adu=gain, bit_depth=cand.bit_depth,
                 window_px=window, shape=tg["shape"], disk_px=np.broadcast_to(disk_px, sigma.shape),
                 frames=lo["frames_per_reading"], averaged=lo["frames_averaged"], window_at=lo["window_at"],
                 exact_adc=exact_adc)
    still = pixel_model.locator_terms(streak_px=0.0, **light)
    blur = optics.motion_blur_px(omega, t_ms * 1e-3, r_px)
    moving = pixel_model.locator_terms(streak_px=blur, **light) if omega > 0 else still
    zero = np.zeros(sigma.shape)
    fixed = "quant" if method == "integer" else "lock"
    parts = {"quant": zero, "lock": zero, fixed: moving.fixed_var, "noise": moving.random_var}
    quant, lock, noise = parts["quant"], parts["lock"], parts["noise"]
    pivot_var = still.total_var  # the pivot's points are imaged still
    noise_px = np.sqrt(moving.noise_var)
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
    var_timing = geo.timing[:, None] * np.full(r_px.shape, (omega * mo["jitter_ms"] * 1e-3) ** 2)
    var = np.stack([quant * s_read * inv_r2, lock * s_read * inv_r2, noise * s_read * inv_r2,
                    pivot_var * s_piv * inv_r2 + var_mark, var_skew,
                    resid * (s_read + s_piv) * inv_r2, var_timing])  # (K, O, C) rad² or (rad/V)²
    var = var * _DEG**2
    k = NormalDist().inv_cdf(0.5 * (1.0 + spec.goal["p"]))
    bias = _rolling_offsets(spec, geo, cand, m)  # (O, C) deg or deg/V
    ang = ~geo.is_gain
    claim_read = k * np.sqrt(var[:, ang].sum(axis=0)) + np.abs(bias[ang])  # (n_read, C)
    worst = np.argmax(claim_read, axis=0)
    var_angle = np.take_along_axis(var[:, ang], worst[None, None, :], axis=1)[:, 0]
    bias_angle = np.take_along_axis(bias[ang], worst[None, :], axis=0)[0]
    u_angle = np.sqrt(var_angle.sum(axis=0))
    var_gain = u_gain = U_gain = None
    if geo.is_gain.any():
        to_pct = 100.0 / abs(geo.gain_deg_per_v)
        var_gain = var[:, -1] * to_pct**2
        u_gain = np.sqrt(var_gain.sum(axis=0))
        U_gain = k * u_gain + np.abs(bias[-1]) * to_pct
    U_angle = k * u_angle + np.abs(bias_angle)
    # checks
    dof = optics.depth_of_field_mm(cand.f_number, lo["coc_px"] * pitch_mm, m)
    dof_need = sc["dial_diameter_mm"] * math.sin(beta) + sc["target_height_mm"]
    fr_need = abs(mo["rate_deg_per_s"]) / mo["sample_step_deg"]
    fr_ok = cand.max_frame_rate_hz >= fr_need
    dof_ok = dof >= dof_need
    margins = []
    if "angle_U_deg" in spec.goal:
        margins.append((spec.goal["angle_U_deg"] - U_angle) / spec.goal["angle_U_deg"])
    if U_gain is not None and "gain_U_pct" in spec.goal:
        margins.append((spec.goal["gain_U_pct"] - U_gain) / spec.goal["gain_U_pct"])
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
        blur_px=blur, frame_rate_needed_hz=fr_need, frame_rate_ok=fr_ok, f_number=cand.f_number,
        bias_angle_deg=bias_angle, variances_angle=var_angle,
        variances_gain=var_gain, u_angle_deg=u_angle, U_angle_deg=U_angle, u_gain_pct=u_gain,
        U_gain_pct=U_gain, k=k, meets=meets, margin=margin, limiting=limiting)


def _rolling_offsets(spec: ChooseSpec, geo: PointGradients, cand: Candidates, m: np.ndarray) -> np.ndarray:
    """Known offset of every output from a rolling shutter's row delay, (O, C) in deg (gain: deg/V).

    Notes
    -----
    As the virtual rig (:meth:`budget.rig.model.VirtualRig._timing_deg`): reading j is taken
    ((H − 1)/2 − y_j)·t_row after the top row, y_j = (R sin φ_j − o_y)·m/pitch its height above the
    principal point (pinhole, target on the dial; o_y is down the image), so its angle is off by
    ω·delay; the gain's offset is Σ w_j·offset_j with the OLS weights of the sweep [derived].
    """
    rate = spec.motion["rate_deg_per_s"]
    n_read = geo.read_dial_rad.size
    out = np.zeros((len(geo.outputs), m.size))
    if rate == 0 or not np.any(cand.rolling):
        return out
    y = ((spec.scene["pointer_radius_mm"] * np.sin(geo.read_dial_rad))[:, None] - spec.scene["pivot_offset_y_mm"]) \
        * (m / (cand.pitch_um * 1e-3))[None, :]
    t_row = 1.0 / (cand.max_frame_rate_hz * cand.pixels_y)
    off = np.where(cand.rolling, rate * (0.5 * (cand.pixels_y - 1) - y) * t_row, 0.0)  # (n_read, C)
    out[:n_read] = off
    if geo.is_gain.any():
        out[-1] = geo.gain_weights @ off
    return out
