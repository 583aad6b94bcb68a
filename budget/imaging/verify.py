"""Check a rig's locator entries against synthetic images: render, locate, compare with the budget.

The budget assumes, per located position and axis, a noise per frame and a pixel-locking
amplitude (centre of mass) or a quantization (integer locator) from :func:`locator_model`.
Here targets are rendered at uniformly random sub-pixel positions with the rig's spot, light
and camera (:func:`render_target`), located with the rig's locator, and the errors compared.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from budget.errors import field_error
from budget.imaging import spot
from budget.imaging.locate import centre_of_mass, gaussian_fit, integer_peak
from budget.imaging.locator_model import LocatorModel, locator_model
from budget.imaging.render import render_target
from budget.rig.description import RigDescription

__all__ = ["LocatorCheck", "verify_locator", "RATIO_TOLERANCE"]

MAX_RENDERED_PIXELS = 100_000_000
"""Most pixels rendered at once (renders × image size): 0.8 GB per copy of the images."""

RATIO_TOLERANCE = 1.2
"""Model formulas are first-order (com_variance is derived for a pixel-centred spot): a figure
within this factor of the model is accepted even beyond 3 Monte Carlo standard errors."""


@dataclass(frozen=True)
class LocatorCheck:
    """Empirical locator figures against the budget's, and the verdict in words."""

    method: str
    renders: int
    seed: object
    sigma_px_model: float
    sigma_px_rendered: float
    noise_px_model: float
    noise_px_empirical: float
    noise_px_se: float
    locking_px_model: float
    locking_px_empirical: float
    locking_px_se: float
    bias_px_empirical: float
    sd_px_model: float  # total per-axis sd the budget assumes (noise, locking, quantization)
    sd_px_empirical: float
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


def verify_locator(rig: RigDescription, *, renders: int, rng: np.random.Generator, seed: object = None,
                   rendered_sigma_px: float | None = None, model: LocatorModel | None = None) -> LocatorCheck:
    """Render ``renders`` targets, locate them, and compare with the budget's locator entries.

    Parameters
    ----------
    rig : RigDescription
    renders : int
        Number of images (>= 50).
    rng : numpy.random.Generator
        Positions and noise.
    seed : object, optional
        Recorded in the result.
    rendered_sigma_px : float, optional
        Render a different spot than the rig states (to test the check itself).
    model : LocatorModel, optional
        The budget's assumption; default :func:`locator_model` of the rig.

    Returns
    -------
    LocatorCheck

    Notes
    -----
    Errors e = located − true on both axes (2n samples). Bias against the sub-pixel phase δ
    (true centre minus the nearest pixel centre): least-squares fit of e = a·sin 2πδ + b·cos 2πδ + c,
    first-harmonic amplitude √(a² + b²), compared with the locking amplitude (leading harmonic
    of the pixel-locking series, :mod:`budget.imaging.spot`); standard error of a
    coefficient √(2/n)·s for n uniform phases [derived]. Noise: standard deviation of the
    residual of that fit against the noise per frame, standard error s/√(2(n − 1)) (normal
    sample, common practice). Integer locator: the total sd against 1/√12 px (JCGM 100 F.2.2.1).
    A figure is supported within 3 standard errors or within a factor ``RATIO_TOLERANCE``.
    """
    if isinstance(renders, bool) or not isinstance(renders, int) or renders < 50:
        raise field_error("renders", "an integer >= 50", renders, "verify-locator")
    lm = model or locator_model(rig)
    cam, t, loc = rig.camera, rig.target, rig.locator
    s_model = lm.sigma_px
    s_rend = s_model if rendered_sigma_px is None else float(rendered_sigma_px)
    if rig.target.shape == "disk":
        raise field_error("shape", "'spot' (the check renders a Gaussian spot)", "disk", "[target]")
    win = loc.window_px if loc.method != "integer" else 3
    size = int(max(win, 2 * math.ceil(5 * s_rend) + 1)) + 6
    size += 1 - size % 2
    if renders * size * size > MAX_RENDERED_PIXELS:
        raise field_error("renders", f"at most {MAX_RENDERED_PIXELS // (size * size):,} for this rig's {size} x {size} "
                          f"px images (renders × pixels <= {MAX_RENDERED_PIXELS:,}, the memory they take)", renders,
                          "verify-locator")
    c0 = (size - 1) / 2.0
    centres = c0 + rng.uniform(low=-0.5, high=0.5, size=(renders, 2))
    img = render_target(shape=(size, size), centre_xy=centres, sigma_px=s_rend, signal_e=t.signal_e,
                        background_e=t.background_e, read_noise_e=cam.read_noise_e, full_well_e=cam.full_well_e,
                        bit_depth=cam.bit_depth, rng=rng)
    bg_adu = t.background_e / img.gain_e_per_adu
    if loc.method == "integer":
        x, y = integer_peak(img.images)
    elif loc.method == "fit":
        x, y = gaussian_fit(img.images, window_px=loc.window_px)
    else:
        x, y = centre_of_mass(img.images, window_px=loc.window_px, background=bg_adu)
    err = np.concatenate([np.asarray(x) - centres[:, 0], np.asarray(y) - centres[:, 1]])
    true = np.concatenate([centres[:, 0], centres[:, 1]])
    delta = true - np.round(true)
    n = err.size
    design = np.column_stack([np.sin(2 * np.pi * delta), np.cos(2 * np.pi * delta), np.ones(n)])
    coef, *_ = np.linalg.lstsq(design, err, rcond=None)
    resid = err - design @ coef
    s_noise = float(np.std(resid, ddof=3))
    amp = float(math.hypot(coef[0], coef[1]))
    amp_se = math.sqrt(2.0 / n) * s_noise
    noise_se = s_noise / math.sqrt(2.0 * (n - 1))
    sd_emp = float(np.std(err, ddof=1))
    sd_model = math.sqrt(lm.noise_px_per_frame**2 + lm.locking_amplitude_px**2 / 2
                         + lm.quantization_half_width_px**2 / 3)
    verdict = []
    if loc.method == "integer":
        sd_se = sd_emp / math.sqrt(2.0 * (n - 1))
        ok = _agrees(sd_emp, sd_model, sd_se)
        verdict.append(f"quantization: empirical sd {sd_emp:.4g} px against {sd_model:.4g} px assumed "
                       f"(±{sd_se:.2g} px standard error): {'supported' if ok else 'NOT supported'}.")
    else:
        ok_n = _agrees(s_noise, lm.noise_px_per_frame, noise_se)
        ok_l = _agrees(amp, lm.locking_amplitude_px, amp_se)
        ok = ok_n and ok_l
        verdict.append(f"noise per frame: empirical {s_noise:.4g} px against {lm.noise_px_per_frame:.4g} px assumed "
                       f"(±{noise_se:.2g} px standard error): {'supported' if ok_n else 'NOT supported'}.")
        verdict.append(f"pixel-locking: first-harmonic amplitude {amp:.3g} px against {lm.locking_amplitude_px:.3g} "
                       f"px assumed (±{amp_se:.2g} px standard error): {'supported' if ok_l else 'NOT supported'}.")
    if s_rend != s_model:
        verdict.append(f"Rendered with σ = {s_rend:g} px where the rig states {s_model:g} px.")
    peak = t.signal_e * float(spot.peak_fraction(s_rend)) + t.background_e
    if peak > cam.full_well_e:
        verdict.append(f"The brightest pixel holds about {peak:.3g} e, above the full well ({cam.full_well_e:g} e): "
                       "saturation, which the budget's formulas do not describe.")
    verdict.append("The budget's locator entries are " + ("supported" if ok else "NOT supported")
                   + f" by {renders} synthetic images (within 3 standard errors or a factor {RATIO_TOLERANCE:g}).")
    return LocatorCheck(method=loc.method, renders=renders, seed=seed, sigma_px_model=s_model,
                        sigma_px_rendered=s_rend, noise_px_model=lm.noise_px_per_frame, noise_px_empirical=s_noise,
                        noise_px_se=noise_se, locking_px_model=lm.locking_amplitude_px, locking_px_empirical=amp,
                        locking_px_se=amp_se, bias_px_empirical=float(coef[2]), sd_px_model=sd_model,
                        sd_px_empirical=sd_emp, supported=bool(ok), verdict=tuple(verdict))
