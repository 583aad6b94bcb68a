"""Check a rig's locator entries against synthetic images: render, locate, compare with the budget.

The budget assumes, per located reading and axis, an error fixed by the sub-pixel phase and a noise
per reading (:func:`locator_model`). Here readings are rendered at uniformly random sub-pixel
positions with the rig's target (spot or disk), light, camera and ADC, each with the rig's frames per
reading (averaged as positions or as images, ``[frames] averaged``), streaked by the motion of a moving
pointer, located with the rig's locator (window on the brightest pixel or re-centred, ``[locator]
window_at``), and the standard uncertainty of the located reading compared with the model's.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from budget.errors import field_error
from budget.imaging import spot
from budget.imaging.locate import centre_of_mass, gaussian_fit, integer_peak
from budget.imaging.locator_model import LocatorModel, edge_blur_px, locator_model, streak_px
from budget.imaging.render import render_target
from budget.rig.description import RigDescription

__all__ = ["LocatorCheck", "verify_locator", "RATIO_TOLERANCE"]

MAX_RENDERED_PIXELS = 100_000_000
"""Most pixels rendered at once (renders × frames × image size): 0.8 GB per copy of the images."""

RATIO_TOLERANCE = 1.1
"""The model's u of a located reading agrees with the rendered images' within this factor (10 %),
or within 3 Monte Carlo standard errors."""


@dataclass(frozen=True)
class LocatorCheck:
    """Empirical locator figures against the budget's, and the verdict in words."""

    method: str
    renders: int
    seed: object
    sigma_px_model: float
    sigma_px_rendered: float
    noise_px_model: float  # per frame
    noise_px_empirical: float  # per frame, about each reading's mean (frames > 1), else NaN
    noise_px_se: float
    locking_px_model: float  # rms of the part fixed by the sub-pixel phase
    locking_px_empirical: float  # rms of the first-harmonic fit against the phase
    locking_px_se: float
    bias_px_empirical: float
    sd_px_model: float  # u of one located reading per axis the budget assumes
    sd_px_empirical: float  # rms of the located readings' errors
    sd_px_se: float
    frames: int
    averaged: str
    streak_px: float
    supported: bool
    verdict: tuple[str, ...]

    def as_dict(self) -> dict:
        """Plain-dict summary for JSON."""
        return asdict(self)


def _agrees(emp: float, model: float, se: float) -> bool:
    if abs(emp - model) <= 3.0 * se:
        return True
    lo, hi = sorted((abs(emp), abs(model)))
    return lo > 0 and hi / lo <= RATIO_TOLERANCE


def _locate(rig: RigDescription, images: np.ndarray, bg_adu: float):
    loc = rig.locator
    if loc.method == "integer":
        return integer_peak(images)
    if loc.method == "fit":
        return gaussian_fit(images, window_px=loc.window_px)
    return centre_of_mass(images, window_px=loc.window_px, background=bg_adu, recentre=loc.window_at == "centroid")


def verify_locator(rig: RigDescription, *, renders: int, rng: np.random.Generator, seed: object = None,
                   rendered_sigma_px: float | None = None, model: LocatorModel | None = None,
                   moving: bool | None = None) -> LocatorCheck:
    """Render ``renders`` readings, locate them, and compare with the budget's locator entries.

    Parameters
    ----------
    rig : RigDescription
    renders : int
        Number of readings (>= 50), each of ``[frames] per_reading`` frames.
    rng : numpy.random.Generator
        Positions and noise.
    seed : object, optional
        Recorded in the result.
    rendered_sigma_px : float, optional
        Render a different spot (or disk edge blur) than the rig states (to test the check itself).
    model : LocatorModel, optional
        The budget's assumption; default :func:`locator_model` of the rig.
    moving : bool, optional
        Render the readings of a moving pointer (streaked along x); default: the rig's ``[motion]``.

    Returns
    -------
    LocatorCheck

    Notes
    -----
    Errors e = located − true of each reading (after averaging its frames), on both axes for a still
    target and along the streak (x) for a moving one, where the tangential error is the one the angle
    depends on. u = √(mean e²), standard error u/√(2m) for m errors (normal sample, common practice);
    supported within a factor ``RATIO_TOLERANCE`` or 3 standard errors. Also shown: the first-harmonic
    amplitude of e against the sub-pixel phase δ (least-squares fit of a·sin 2πδ + b·cos 2πδ + c,
    standard error √(2/m)·s) and, with several frames, the frames' scatter about their reading's mean.
    """
    if isinstance(renders, bool) or not isinstance(renders, int) or renders < 50:
        raise field_error("renders", "an integer >= 50", renders, "verify-locator")
    moving = rig.motion.state == "moving" if moving is None else moving
    lm = model or locator_model(rig, moving=moving)
    cam, t, loc = rig.camera, rig.target, rig.locator
    frames, averaged = rig.frames.per_reading, rig.frames.averaged
    disk = t.shape == "disk"
    d_px = t.diameter_mm * rig.magnification / (cam.pitch_um * 1e-3) if disk else 0.0
    s_model = edge_blur_px(rig) if disk else lm.sigma_px
    s_rend = s_model if rendered_sigma_px is None else float(rendered_sigma_px)
    streak = streak_px(rig) if moving else 0.0
    win = loc.window_px if loc.method != "integer" else 3
    size = int(max(win + 8, 2 * math.ceil(5 * s_rend + d_px / 2 + streak / 2) + 1)) + 6
    size += 1 - size % 2
    if renders * frames * size * size > MAX_RENDERED_PIXELS:
        most = MAX_RENDERED_PIXELS // (frames * size * size)
        raise field_error("renders", f"at most {most:,} for this rig's {frames} frame(s) of {size} x {size} px "
                          f"(renders × frames × pixels <= {MAX_RENDERED_PIXELS:,}, the memory they take)", renders,
                          "verify-locator")
    c0 = (size - 1) / 2.0
    centres = c0 + rng.uniform(low=-0.5, high=0.5, size=(renders, 2))
    img = render_target(shape=(size, size), centre_xy=np.repeat(centres, frames, axis=0),
                        kind="disk" if disk else "gaussian", sigma_px=s_rend, diameter_px=d_px if disk else None,
                        signal_e=t.signal_e, background_e=t.background_e, read_noise_e=cam.read_noise_e,
                        full_well_e=cam.full_well_e, bit_depth=cam.bit_depth, rng=rng, streak_px=streak,
                        substeps=int(min(32, max(4, math.ceil(4.0 * streak)))))  # sub-exposures ≤ ¼ px apart
    bg_adu = t.background_e / img.gain_e_per_adu
    images = img.images.reshape(renders, frames, size, size)
    noise_emp = noise_se = math.nan
    if averaged == "images":
        x, y = _locate(rig, images.mean(axis=1), bg_adu)
    else:
        fx, fy = (np.asarray(v).reshape(renders, frames) for v in _locate(rig, images.reshape(-1, size, size), bg_adu))
        x, y = fx.mean(axis=1), fy.mean(axis=1)
        if frames > 1:
            dev = np.concatenate([(fx - x[:, None]).ravel(), (fy - y[:, None]).ravel()])
            dof = 2 * renders * (frames - 1)
            noise_emp = float(math.sqrt(np.sum(dev**2) / dof))
            noise_se = noise_emp / math.sqrt(2.0 * dof)
    ex, ey = np.asarray(x) - centres[:, 0], np.asarray(y) - centres[:, 1]
    err = ex if moving else np.concatenate([ex, ey])
    true = centres[:, 0] if moving else np.concatenate([centres[:, 0], centres[:, 1]])
    delta = true - np.round(true)
    m = err.size
    design = np.column_stack([np.sin(2 * np.pi * delta), np.cos(2 * np.pi * delta), np.ones(m)])
    coef, *_ = np.linalg.lstsq(design, err, rcond=None)
    s_res = float(np.std(err - design @ coef, ddof=3))
    amp = float(math.hypot(coef[0], coef[1]))
    amp_se = math.sqrt(2.0 / m) * s_res
    u_emp = float(math.sqrt(np.mean(err**2)))
    u_se = u_emp / math.sqrt(2.0 * m)
    u_model = lm.u_px
    ok = _agrees(u_emp, u_model, u_se)
    fixed_model = math.sqrt(lm.fixed_var_px2)
    what = (f"{loc.method} locator, {'disk' if disk else 'spot'} target, {cam.bit_depth}-bit ADC, "
            f"{frames} frame(s) per reading ({averaged} averaged)"
            + (f", streak {streak:.3g} px along x" if streak else "")
            + (f", window {loc.window_px} px on the {loc.window_at} pixel" if loc.method != "integer" else ""))
    verdict = [what + ".",
               f"u of a located reading: rendered {u_emp:.4g} px against {u_model:.4g} px in the budget "
               f"(±{u_se:.2g} px standard error): {'supported' if ok else 'NOT supported'}."]
    if not math.isnan(noise_emp):
        verdict.append(f"frame-to-frame scatter: rendered {noise_emp:.4g} px per frame against "
                       f"{lm.noise_px_per_frame:.4g} px in the budget (information).")
    verdict.append(f"error fixed by the sub-pixel phase: {fixed_model:.3g} px rms in the budget; rendered first "
                   f"harmonic {amp:.3g} px (±{amp_se:.2g} px) (information).")
    if s_rend != s_model:
        verdict.append(f"Rendered with σ = {s_rend:g} px where the rig states {s_model:g} px.")
    peak = t.signal_e * float(spot.peak_fraction(s_rend)) + t.background_e
    if peak > cam.full_well_e and not disk:
        verdict.append(f"The brightest pixel holds about {peak:.3g} e, above the full well ({cam.full_well_e:g} e): "
                       "saturation, which the budget's formulas do not describe.")
    verdict.append("The budget's locator entries are " + ("supported" if ok else "NOT supported")
                   + f" by {renders} synthetic readings (within a factor {RATIO_TOLERANCE:g} or 3 standard errors).")
    return LocatorCheck(method=loc.method, renders=renders, seed=seed, sigma_px_model=s_model,
                        sigma_px_rendered=s_rend, noise_px_model=lm.noise_px_per_frame, noise_px_empirical=noise_emp,
                        noise_px_se=noise_se, locking_px_model=fixed_model, locking_px_empirical=amp / math.sqrt(2.0),
                        locking_px_se=amp_se / math.sqrt(2.0), bias_px_empirical=float(coef[2]),
                        sd_px_model=u_model, sd_px_empirical=u_emp, sd_px_se=u_se, frames=frames, averaged=averaged,
                        streak_px=streak, supported=bool(ok), verdict=tuple(verdict))
