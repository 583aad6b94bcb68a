"""The locator model of a rig: what one located position's error is made of, per axis, in px.

It reads the rig description (camera, lens, target, locator) and applies the formulas of
:mod:`budget.imaging.spot` and :mod:`budget.imaging.optics`; the budget turns its figures into
input quantities (:mod:`budget.rig.components`) and ``verify-locator`` checks them against
rendered frames (:mod:`budget.imaging.verify`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from budget.imaging import optics, pixel_model, spot
from budget.rig.description import RigDescription

__all__ = ["LocatorModel", "edge_blur_px", "locator_model", "spot_sigma_px", "peak_electrons", "streak_px"]


def spot_sigma_px(rig: RigDescription) -> float:
    """Standard deviation of the target image per axis, in px (before pixel integration).

    Notes
    -----
    A given ``[target] sigma_px`` wins over the diffraction spot; otherwise the diffraction
    spot of :func:`budget.imaging.optics.spot_sigma_px` (Zhang, Zerubia & Olivo-Marin 2007).
    A disk target adds its second moment per axis, d²/16, in quadrature [derived].
    """
    t = rig.target
    pitch_mm = rig.camera.pitch_um * 1e-3
    disk_px = t.diameter_mm * rig.magnification / pitch_mm if t.shape == "disk" else 0.0
    if t.sigma_px is not None:
        return math.sqrt(t.sigma_px**2 + disk_px**2 / 16.0)
    return float(optics.spot_sigma_px(rig.lens.wavelength_nm, rig.lens.f_number, rig.magnification,
                                      rig.camera.pitch_um, 0.0, disk_px))


@dataclass(frozen=True)
class LocatorModel:
    """What one located position's error is made of, per axis, in px.

    The part fixed by the sub-pixel phase (repeated in every frame) is a rectangular ±h
    (``quantization_half_width_px``, integer locator; ``locking_half_width_px``, a sawtooth-like
    bias) or an arcsine ±a (``locking_amplitude_px``, a sine-like bias), with the model's mean square
    over the phase; the part that changes from frame to frame is ``noise_px_per_frame`` per frame and
    ``noise_px_per_reading`` after the reading's frames are averaged.
    """

    quantization_half_width_px: float  # 0 unless the integer locator
    locking_amplitude_px: float  # arcsine ±a; 0 for the integer locator and for a fit
    noise_px_per_frame: float
    noise_formula: str
    sigma_px: float
    notes: tuple[str, ...]
    locking_half_width_px: float = 0.0  # rectangular ±h
    noise_px_per_reading: float | None = None  # None: noise per frame / √frames
    frames: int = 1
    streak_px: float = 0.0

    @property
    def reading_noise_px(self) -> float:
        """The changing part of one reading's located position, px."""
        if self.noise_px_per_reading is not None:
            return self.noise_px_per_reading
        return self.noise_px_per_frame / math.sqrt(self.frames)

    @property
    def fixed_var_px2(self) -> float:
        """Mean square of the phase-fixed part, px²."""
        return (self.quantization_half_width_px**2 + self.locking_half_width_px**2) / 3.0 \
            + self.locking_amplitude_px**2 / 2.0

    @property
    def u_px(self) -> float:
        """Standard uncertainty of one reading's located position per axis, px."""
        return math.sqrt(self.fixed_var_px2 + self.reading_noise_px**2)


_ARCSINE_ABOVE = 0.5 * (1.0 / math.sqrt(2.0) + 1.0 / math.sqrt(3.0))
"""rms/max of the phase-fixed bias above which it is taken as a sine (arcsine) rather than a sawtooth
(rectangular): halfway between the two shapes' ratios, 0.707 and 0.577."""


def _terms(rig: RigDescription, streak_px: float, window_px: int | None = None) -> pixel_model.LocatorTerms:
    cam, t, loc = rig.camera, rig.target, rig.locator
    disk = _disk_px(rig)
    sigma = edge_blur_px(rig) if t.shape == "disk" else spot_sigma_px(rig)
    return pixel_model.locator_terms(
        loc.method, sigma_px=sigma, signal_e=t.signal_e, background_e=t.background_e,
        read_noise_e=cam.read_noise_e, gain_e_per_adu=cam.gain_e_per_adu, bit_depth=cam.bit_depth,
        window_px=loc.window_px if window_px is None else window_px, shape=t.shape, disk_px=disk,
        streak_px=streak_px, frames=rig.frames.per_reading, averaged=rig.frames.averaged, window_at=loc.window_at)


def streak_px(rig: RigDescription) -> float:
    """Motion blur of a reading: the target's travel during the exposure, |ω|·t·R in px."""
    if rig.motion.state != "moving":
        return 0.0
    return abs(math.radians(rig.motion.rate_deg_per_s)) * rig.camera.exposure_ms * 1e-3 * rig.radius_px


def locator_model(rig: RigDescription, *, moving: bool = False) -> LocatorModel:
    """The locator's error terms from the expected pixel values (:func:`pixel_model.locator_terms`).

    Parameters
    ----------
    rig : RigDescription
    moving : bool
        The readings of a moving pointer: the target streaks ``streak_px`` along its path during the
        exposure (the tangential direction, which the angle depends on; both axes get its figure).

    Notes
    -----
    One vectorized model for every locator and target (``choose`` calls it over candidates):
    centre of mass, Thompson, Larson & Webb 2002 (Biophys. J. 82:2775) photon term plus the
    window's background term and the exact windowed bias over the sub-pixel phase; least-squares
    fit, Mortensen et al. 2010 (Nat. Methods 7:377); integer locator, the brightest pixel's
    probabilities; the ADC's rounding exactly where the noise is below 0.75 count.
    """
    cam, loc = rig.camera, rig.locator
    s = spot_sigma_px(rig)
    streak = streak_px(rig) if moving else 0.0
    terms = _terms(rig, streak)
    fixed_rms = math.sqrt(float(terms.fixed_var[0]))
    fixed_peak = float(terms.fixed_peak[0])
    reading = math.sqrt(float(terms.random_var[0]))
    per_frame = math.sqrt(float(terms.noise_var[0]))
    notes: list[str] = []
    peak = peak_electrons(rig)
    if peak > cam.full_well_e:
        notes.append(
            f"The brightest pixel receives about {peak:.0f} e against a full well of {cam.full_well_e:.0f} e: "
            "a saturated spot biases and flattens the centroid, which this budget does not model; "
            "shorten the exposure or dim the light."
        )
    if bool(terms.exact_adc[0]) and loc.method != "integer":
        notes.append(
            f"The noise of the dark pixels is below {pixel_model.EXACT_BELOW:g} ADC count: the rounding to whole "
            "counts is modelled exactly; its error is fixed by the sub-pixel phase and does not average away "
            "over frames.")
    if streak > 0:
        notes.append(f"A moving reading streaks {streak:.3g} px during the {cam.exposure_ms:g} ms exposure; the "
                     "locator's noise and locking are those of the streaked target.")
    frames = rig.frames.per_reading
    if loc.method == "integer":
        h = math.sqrt(3.0) * fixed_rms
        return LocatorModel(h, 0.0, per_frame, "brightest pixel under pixel noise (derived)", s,
                            (f"integer-pixel locator: brightest pixel; ±{h:.3g} px fixed by the sub-pixel phase "
                             "(rectangular with the model's mean square)", *notes),
                            noise_px_per_reading=reading, frames=frames, streak_px=streak)
    if loc.method == "fit":
        return LocatorModel(0.0, 0.0, per_frame, "Mortensen et al. 2010 (least-squares fit)", s,
                            ("least-squares fit of the pixel-integrated spot model: no pixel-locking "
                             "bias assumed", *notes), noise_px_per_reading=reading, frames=frames, streak_px=streak)
    amp = half = 0.0
    if fixed_rms > 0 and fixed_peak > 0 and fixed_rms / fixed_peak > _ARCSINE_ABOVE:
        amp = math.sqrt(2.0) * fixed_rms
    else:
        half = math.sqrt(3.0) * fixed_rms
    wide = _wide_window(rig, s, streak)
    if wide > loc.window_px:
        unclipped = math.sqrt(float(_terms(rig, streak, wide).fixed_var[0]))
        if fixed_rms > 1.2 * unclipped + 1e-4:
            notes.append(
                f"The centroid window ({loc.window_px} px) clips the target: the error fixed by the sub-pixel "
                f"phase is {fixed_rms:.2g} px rms against {unclipped:.2g} px with a {wide} px window.")
    return LocatorModel(0.0, amp, per_frame,
                        "Thompson et al. 2002 photon term + window background (centre of mass)", s,
                        tuple(notes), locking_half_width_px=half, noise_px_per_reading=reading, frames=frames,
                        streak_px=streak)


def _disk_px(rig: RigDescription) -> float:
    t = rig.target
    return t.diameter_mm * rig.magnification / (rig.camera.pitch_um * 1e-3) if t.shape == "disk" else 0.0


def _wide_window(rig: RigDescription, s: float, streak: float) -> int:
    """A window that holds the whole target from any pixel of its top (odd)."""
    blur = edge_blur_px(rig) if rig.target.shape == "disk" else s
    half = int(math.ceil(6.0 * blur + _disk_px(rig) + streak)) + 1
    return 2 * half + 1


def peak_electrons(rig: RigDescription) -> float:
    """Electrons in the brightest pixel: a spot centred on a pixel, plus the background.

    Pixel-integrated Gaussian of the rig's spot sigma: the central pixel holds
    erf(1/(2√2σ))² of the signal [derived]; for a disk, the disk's area fraction
    per pixel bounds it.
    """
    t = rig.target
    s = spot_sigma_px(rig)
    frac = float(spot.peak_fraction(s))
    if t.shape == "disk":
        d_px = t.diameter_mm * rig.magnification / (rig.camera.pitch_um * 1e-3)
        frac = min(frac, 1.0 / max(math.pi * d_px**2 / 4.0, 1.0)) if d_px > 1 else frac
    return t.signal_e * frac + t.background_e


def edge_blur_px(rig: RigDescription) -> float:
    """The Gaussian blur of a disk target's edge: ``[target] sigma_px`` or the diffraction spot, px."""
    t = rig.target
    if t.sigma_px is not None:
        return t.sigma_px
    d_px = _disk_px(rig)  # the diffraction spot alone: the rig's sigma without the disk's own second moment
    return math.sqrt(max(spot_sigma_px(rig) ** 2 - d_px**2 / 16.0, 1e-6))
