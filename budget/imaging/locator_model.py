"""The locator model of a rig: what one located position's error is made of, per axis, in px.

It reads the rig description (camera, lens, target, locator) and applies the formulas of
:mod:`budget.imaging.spot` and :mod:`budget.imaging.optics`; the budget turns its figures into
input quantities (:mod:`budget.rig.components`) and ``verify-locator`` checks them against
rendered frames (:mod:`budget.imaging.verify`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from budget.imaging import optics, spot
from budget.rig.description import RigDescription

__all__ = ["LocatorModel", "locator_model", "spot_sigma_px", "peak_electrons"]


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
    """What one located position's error is made of, per axis, in px."""

    quantization_half_width_px: float  # 0 unless the integer locator
    locking_amplitude_px: float  # 0 for the integer locator and for a fit
    noise_px_per_frame: float
    noise_formula: str
    sigma_px: float
    notes: tuple[str, ...]


def locator_model(rig: RigDescription) -> LocatorModel:
    """The locator's error terms from the light budget and the spot size.

    Notes
    -----
    Noise per frame: centre of mass, Thompson, Larson & Webb 2002 (Biophys. J.
    82:2775) photon term plus the window's background term (``com_variance``);
    least-squares fit, Mortensen et al. 2010 (Nat. Methods 7:377). Background
    variance per pixel: background electrons + read noise² + g²/12 for the ADC
    step. Pixel-locking of the centre of mass: leading harmonic exp(−2π²σ²)/π of
    a pixel-integrated Gaussian, plus the largest finite-window bias; integer
    locator: ±0.5 px (JCGM 100 F.2.2.1).
    """
    cam, t, loc = rig.camera, rig.target, rig.locator
    s = spot_sigma_px(rig)
    b2 = t.background_e + cam.read_noise_e**2 + float(spot.adc_variance_e2(cam.gain_e_per_adu))
    notes: list[str] = []
    peak = peak_electrons(rig)
    if peak > cam.full_well_e:
        notes.append(
            f"The brightest pixel receives about {peak:.0f} e against a full well of {cam.full_well_e:.0f} e: "
            "a saturated spot biases and flattens the centroid, which this budget does not model; "
            "shorten the exposure or dim the light."
        )
    if loc.method == "integer":
        return LocatorModel(spot.INTEGER_HALF_WIDTH_PX, 0.0, 0.0, "integer peak", s,
                            ("integer-pixel locator: error uniform over one pixel (JCGM 100 F.2.2.1)", *notes))
    if loc.method == "fit":
        var = float(spot.mortensen_variance(s, 1.0, t.signal_e, b2))
        return LocatorModel(0.0, 0.0, math.sqrt(var), "Mortensen et al. 2010 (least-squares fit)", s,
                            ("least-squares fit of the pixel-integrated spot model: no pixel-locking "
                             "bias assumed", *notes))
    var = float(spot.com_variance(s, t.signal_e, b2, loc.window_px))
    if t.shape == "disk":
        amp = _disk_locking_amplitude(rig)
    else:
        amp = float(spot.pixel_locking_amplitude(s))
    trunc = float(spot.window_truncation_max(s, loc.window_px))
    if loc.window_px < 6 * s + 1:
        notes.append(
            f"The centroid window ({loc.window_px} px) is narrower than 6σ + 1 = {6 * s + 1:.1f} px: "
            f"truncation adds up to {trunc:.2g} px of locking bias."
        )
    return LocatorModel(0.0, amp + trunc, math.sqrt(var),
                        "Thompson et al. 2002 photon term + window background (centre of mass)", s,
                        tuple(notes))


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


def _disk_locking_amplitude(rig: RigDescription) -> float:
    """Leading pixel-locking harmonic of the rig's disk target (:func:`spot.disk_locking_amplitude`)."""
    t = rig.target
    d_px = t.diameter_mm * rig.magnification / (rig.camera.pitch_um * 1e-3)
    if t.sigma_px is not None:
        blur = t.sigma_px
    else:  # the diffraction spot alone: the rig's sigma without the disk's own second moment
        blur = math.sqrt(max(spot_sigma_px(rig) ** 2 - d_px**2 / 16.0, 0.0))
    return float(spot.disk_locking_amplitude(d_px, blur))
