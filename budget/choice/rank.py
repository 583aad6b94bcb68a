"""Candidate cameras × lenses: build them, rank them, find the least pixel count, and the equivalent rig.

The ranking puts the candidates that meet the goal first, then the cheaper, then the larger
margin. The least pixel count comes from a continuous sensor model (``[pixel_model]``): a
sensor of fixed width W covering the field through an automatic lens, with N pixels across
it, so pitch = W/N, full well = (full well per µm²)·pitch², the same read noise and ADC.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from budget.choice.model import Candidates, PointGradients, Prediction, design_geometry, predict_candidates
from budget.inputs.choose_file import ChooseSpec
from budget.rig import description as d

__all__ = ["Choice", "LeastPixels", "build_candidates", "choose", "equivalent_rig", "least_pixels", "pixel_curve"]


@dataclass(frozen=True)
class LeastPixels:
    """Least pixels across the field that meet the goal in the continuous sensor model."""

    pixels: float | None  # None: not met within [pixels_min, pixels_max]
    pitch_um: float | None
    U_angle_deg: float | None
    U_gain_pct: float | None
    note: str


@dataclass(frozen=True)
class Choice:
    """Every candidate's prediction, its ranking, and the continuous-model answers."""

    spec: ChooseSpec
    camera_index: np.ndarray
    lens_label: tuple[str, ...]
    price: np.ndarray
    cand: Candidates
    pred: Prediction
    order: np.ndarray
    least: LeastPixels | None
    curve: tuple[np.ndarray, np.ndarray] | None  # pixels across the field, U (angle or gain)


def build_candidates(spec: ChooseSpec) -> tuple[Candidates, np.ndarray, tuple[str, ...], np.ndarray]:
    """Every camera × lens pair as arrays; with ``lenses = "auto"`` one automatic lens per camera."""
    cams, lenses = spec.cameras, spec.lenses
    n_cam = len(cams.name)
    if lenses.auto:
        focal = np.array([math.nan])
        fnum = np.array([lenses.auto_f_number])
        labels = (f"auto f/{lenses.auto_f_number:g}",)
    else:
        focal = np.array(lenses.focal_length_mm)
        fnum = np.array(lenses.f_number)
        labels = tuple(f"{fl:g} mm f/{n:g}" for fl, n in zip(focal, fnum, strict=True))
    ci = np.repeat(np.arange(n_cam), focal.size)
    li = np.tile(np.arange(focal.size), n_cam)
    cand = Candidates(
        pixels_x=cams.pixels_x[ci], pixels_y=cams.pixels_y[ci], pitch_um=cams.pitch_um[ci],
        bit_depth=cams.bit_depth[ci], read_noise_e=cams.read_noise_e[ci], full_well_e=cams.full_well_e[ci],
        max_frame_rate_hz=cams.max_frame_rate_hz[ci], rolling=cams.rolling[ci],
        focal_length_mm=focal[li], f_number=fnum[li])
    return cand, ci, tuple(labels[i] for i in li), cams.price[ci]


def rank(pred: Prediction, price: np.ndarray) -> np.ndarray:
    """Indices best first: meeting the goal, then price, then margin (larger first)."""
    return np.lexsort((-pred.margin, price, ~pred.meets))


def _model_candidates(spec: ChooseSpec, pixels: np.ndarray) -> Candidates:
    pm = spec.pixel_model
    assert pm is not None
    pitch = pm["sensor_width_mm"] * 1e3 / pixels
    full = np.ones_like(pixels)
    return Candidates(pixels_x=pixels, pixels_y=pixels, pitch_um=pitch, bit_depth=pm["bit_depth"] * full,
                      read_noise_e=pm["read_noise_e"] * full, full_well_e=pm["full_well_e_per_um2"] * pitch**2,
                      max_frame_rate_hz=np.full(pixels.shape, np.inf), rolling=np.zeros(pixels.shape, bool),
                      focal_length_mm=np.full(pixels.shape, np.nan), f_number=pm["f_number"] * full)


def _goal_value(spec: ChooseSpec, pred: Prediction) -> np.ndarray:
    return pred.U_angle_deg if "angle_U_deg" in spec.goal else pred.U_gain_pct


def pixel_curve(spec: ChooseSpec, geo: PointGradients | None = None, n: int = 400) -> tuple[np.ndarray, np.ndarray]:
    """U (angle in deg, or gain in %) against pixels across the field in the continuous sensor model."""
    pm = spec.pixel_model
    assert pm is not None
    px = np.geomspace(pm["pixels_min"], pm["pixels_max"], n)
    pred = predict_candidates(spec, _model_candidates(spec, px), geo)
    return pred.px_across_field, _goal_value(spec, pred)


def least_pixels(spec: ChooseSpec, geo: PointGradients | None = None) -> LeastPixels:
    """Least pixels across the field whose prediction meets the goal (continuous model).

    Notes
    -----
    A geometric grid of 2000 points between ``pixels_min`` and ``pixels_max`` finds the first
    pixel count that meets every goal and check; bisection (40 steps) between it and the grid
    point below refines the crossing to a relative 1e-9. The answer is the least count that
    meets, even where U is not monotonic (read noise in a wide window grows with pixels).
    """
    pm = spec.pixel_model
    assert pm is not None
    geo = geo or design_geometry(spec)
    grid = np.geomspace(pm["pixels_min"], pm["pixels_max"], 2000)
    ok = predict_candidates(spec, _model_candidates(spec, grid), geo).meets
    if not ok.any():
        return LeastPixels(None, None, None, None,
                           f"not met by any pixel count in [{pm['pixels_min']}, {pm['pixels_max']}]")
    i = int(np.argmax(ok))
    if i == 0:
        lo_, hi = grid[0], grid[0]
    else:
        lo_, hi = grid[i - 1], grid[i]
        for _ in range(40):
            mid = math.sqrt(lo_ * hi)
            if predict_candidates(spec, _model_candidates(spec, np.array([mid])), geo).meets[0]:
                hi = mid
            else:
                lo_ = mid
    best = predict_candidates(spec, _model_candidates(spec, np.array([hi])), geo)
    note = "at the lower end of the range (it may be met by fewer)" if i == 0 else "continuous sensor model"
    return LeastPixels(float(best.px_across_field[0]), float(pm["sensor_width_mm"] * 1e3 / hi),
                       float(best.U_angle_deg[0]), None if best.U_gain_pct is None else float(best.U_gain_pct[0]),
                       note)


def choose(spec: ChooseSpec) -> Choice:
    """Predict, rank, and solve the continuous model (if ``[pixel_model]`` is given)."""
    geo = design_geometry(spec)
    cand, ci, labels, price = build_candidates(spec)
    pred = predict_candidates(spec, cand, geo)
    least = curve = None
    if spec.pixel_model is not None:
        least = least_pixels(spec, geo)
        curve = pixel_curve(spec, geo)
    return Choice(spec, ci, labels, price, cand, pred, rank(pred, price), least, curve)


def equivalent_rig(spec: ChooseSpec, choice_cand: Candidates, pred: Prediction, i: int) -> d.RigDescription:
    """The rig description that candidate ``i`` amounts to, for ``run_budget`` (cross-check and ``run``).

    The spot is given as its combined σ in px; signal and background are those of the chosen
    exposure; a sweep gets a 32-bit source without errors (the choice predicts the camera's part).
    """
    c, p = choice_cand, pred
    sc, lo, mo = spec.scene, spec.locator, spec.motion
    moving = mo["rate_deg_per_s"] != 0
    cam = d.Camera(pixels_x=int(c.pixels_x[i]), pixels_y=int(c.pixels_y[i]), pitch_um=float(c.pitch_um[i]),
                   bit_depth=int(c.bit_depth[i]), read_noise_e=float(c.read_noise_e[i]),
                   full_well_e=float(c.full_well_e[i]), shutter="global",
                   exposure_ms=float(p.exposure_ms[i]), source="choose candidate")
    lens = d.Lens(focal_length_mm=float(p.focal_length_mm[i]), f_number=float(c.f_number[i]),
                  residual_rms_px=max(lo["distortion_residual_rms_px"], 1e-12),
                  wavelength_nm=spec.target["wavelength_nm"])
    tilt = sc["tilt_bound_deg"] if sc["tilt_bound_deg"] > 0 else None
    geom = d.Geometry(working_distance_mm=float(p.working_distance_mm[i]), pointer_radius_mm=sc["pointer_radius_mm"],
                      pivot_offset_x_mm=sc["pivot_offset_x_mm"], pivot_offset_y_mm=sc["pivot_offset_y_mm"],
                      zero_direction_deg=sc["zero_direction_deg"], tilt_bound_deg=tilt)
    target = d.Target(shape="spot", sigma_px=float(p.sigma_px[i]), signal_e=float(p.signal_e[i]),
                      background_e=float(p.background_e[i]))
    locator = d.Locator(method=lo["method"], window_px=int(p.window_px[i]))
    pv = spec.pivot
    pivot = d.Pivot(method=pv["method"], arc_half_angle_deg=pv["arc_half_angle_deg"], arc_points=pv["arc_points"],
                    mark_offset_bound_mm=pv["mark_offset_bound_mm"])
    motion = d.Motion(state="moving" if moving else "static", rate_deg_per_s=mo["rate_deg_per_s"],
                      jitter_ms=mo["jitter_ms"] if moving else 0.0)
    meas = spec.measurement
    positions = sweep = source = None
    if "angles_deg" in meas:
        positions = d.Positions(tuple(meas["angles_deg"]))
    else:
        sweep = d.Sweep(tuple(meas["set_points_v"]), meas["nominal_gain_deg_per_v"])
        span = max(abs(v) for v in meas["set_points_v"])
        source = d.VoltageSource(span_v=span, bits=32)
    return d.RigDescription(title=spec.title, camera=cam, lens=lens, geometry=geom, target=target, locator=locator,
                            pivot=pivot, frames=d.Frames(per_reading=lo["frames_per_reading"]), motion=motion,
                            source=source, positions=positions, sweep=sweep)
