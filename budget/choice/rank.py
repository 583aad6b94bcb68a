"""Candidate cameras × lenses: build them, search their design, rank them, find the least pixel count.

The ranking puts the candidates that meet the goal first, then the cheaper, then the larger
margin. The least pixel count comes from a continuous sensor model (``[pixel_model]``): a
sensor of fixed width W covering the field through an automatic lens, with N pixels across
it, so pitch = W/N, full well = (full well per µm²)·pitch², the same read noise and ADC.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from budget.choice.equivalent import equivalent_rig
from budget.choice.model import Candidates, PointGradients, Prediction, design_geometry, predict_candidates
from budget.choice.search import Settings, search
from budget.inputs.choose_file import ChooseSpec

__all__ = ["Choice", "LeastPixels", "build_candidates", "choose", "equivalent_rig", "least_pixels", "pixel_curve",
           "rank"]


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
    settings: Settings | None = None  # the chosen working distance, f-number and exposure
    shortest: Prediction | None = None  # each candidate at its shortest distance, lens as listed


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
    """Search each candidate's design, rank, and solve the continuous model (if ``[pixel_model]``)."""
    geo = design_geometry(spec)
    cand, ci, labels, price = build_candidates(spec)
    chosen, settings, pred, shortest = search(spec, cand, geo)
    least = curve = None
    if spec.pixel_model is not None:
        least = least_pixels(spec, geo)
        curve = pixel_curve(spec, geo)
    return Choice(spec, ci, labels, price, chosen, pred, rank(pred, price), least, curve, settings, shortest)
