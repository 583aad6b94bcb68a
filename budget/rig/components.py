"""Budget components: the rig's error sources as named, grouped input quantities.

Each component (a row the user sees) is a group of input quantities of the
propagation engine; each quantity carries the source note of the section it
comes from. The names of per-point quantities end in the point's label:
``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm`` the pivot-arc points,
``M`` the pivot mark.
"""

from __future__ import annotations

import math

import numpy as np

from budget.imaging.fixed_pattern import FORMULA as FPN_FORMULA
from budget.imaging.fixed_pattern import dsnu_sd_px, prnu_sd_px
from budget.imaging.locator_model import locator_model
from budget.propagation import Arcsine, InputQuantity, MultivariateT, Normal, Rectangular
from budget.rig.description import RigDescription, point_labels
from budget.rig.evaluation import PointScatter, as_point_scatter
from budget.rig.geometry import nominal_image_points
from budget.rig.source import READBACK, SOURCE, source_inputs

__all__ = ["GROUPS", "DESCRIPTIONS", "build_inputs"]

QUANT = "pixel quantization"
LOCK = "pixel-locking"
NOISE = "centroid noise"
PIVOT = "pivot estimate"
SKEW = "camera skew"
DIST = "lens distortion"
TIMING = "frame timing"
DRIFT = "drift in frames"
MISFIT = "lack of fit"
FPN = "fixed-pattern noise"
REPEAT = "pointer repeatability"
SETTLE = "pointer settling"
PLAY = "pivot runout"
MOUNT = "camera-mount drift"
GROUPS = (QUANT, LOCK, NOISE, FPN, DRIFT, PIVOT, SKEW, MOUNT, REPEAT, SETTLE, PLAY, DIST, TIMING, SOURCE, READBACK,
          MISFIT)

DESCRIPTIONS = {
    QUANT: "integer-pixel locator: the located position is a whole pixel",
    LOCK: "sub-pixel locator's bias towards pixel centres, over the unknown sub-pixel phase",
    NOISE: "scatter of the located position from frame to frame (light, background, read noise, ADC)",
    PIVOT: "the pivot as the user finds it: a circle fit to located points, or a located mark",
    SKEW: "the camera not square to the dial: tilt of the dial plane to the image plane, camera roll "
          "between the zero image and the readings, and parallax of a raised target (not the "
          "non-orthogonality of the pixel axes that camera calibration calls skew)",
    DIST: "lens distortion left after calibration (residual), or uncorrected radial distortion",
    TIMING: "a moving pointer read at the wrong instant: timestamp offset, rolling-shutter rows, jitter",
    SOURCE: "the voltage at the pointer differs from the set point: gain, offset, DAC step, INL, noise",
    READBACK: "the meter that reads the voltage back: its ±% of reading, ±counts and resolution",
    DRIFT: "the located target moved steadily during a position's frames (a significant trend): where the "
           "pointer was is uncertain over the drift's extent",
    FPN: "pixel-to-pixel differences of gain (PRNU) and dark signal (DSNU): the same in every frame, so "
         "averaging frames does not reduce them",
    REPEAT: "the pointer does not come to rest at the same angle each time (friction, hysteresis): zero image "
            "and readings each",
    SETTLE: "a reading taken before the pointer has settled: what it still moves afterwards",
    PLAY: "the shaft's runout or bearing play: the pointer's pivot moves between images",
    MOUNT: "the camera moves on its mount between the zero image and the readings (thermal drift, knocks): "
           "a shift at the dial and a roll",
    MISFIT: "the sweep's readings scatter about the straight line more than their own uncertainties allow "
            "(χ² test): a per-point discrepancy of the line, carried into the gain and the intercept",
}
"""What each budget component is, in words; every report shows it beside the component's name."""


def _q(dist, unit: str, group: str, source: str) -> InputQuantity:
    return InputQuantity(distribution=dist, unit=unit, group=group, source=source)


def _supplied(rig: RigDescription, *names: str) -> str:
    """Words for a source note when a value behind the term came from the tool, not from the section's source."""
    found = [n for n in names if rig.assumed(n)]
    return f"; {', '.join(found)} supplied by thetabudget (an assumption, not from this source)" if found else ""


def build_inputs(
    rig: RigDescription, type_a: dict[str, PointScatter] | None = None
) -> tuple[dict[str, InputQuantity], dict[tuple[str, str], float]]:
    """All input quantities of the virtual rig and their correlations.

    Parameters
    ----------
    rig : RigDescription
    type_a : dict, optional
        Per point label, the repeated frames' :class:`PointScatter` (or ``(s_x/√n, s_y/√n, n)``);
        replaces the light-budget noise of that point by one bivariate t (:func:`type_a_inputs`)
        and adds its drift term.

    Returns
    -------
    inputs, correlation
        Mapping of names to :class:`InputQuantity`, and ``{(a, b): r}``.
    """
    lm = locator_model(rig)
    lm_moving = locator_model(rig, moving=True) if rig.motion.state == "moving" else lm
    lens = rig.lens
    n_frames = rig.frames.per_reading
    out: dict[str, InputQuantity] = {}
    corr: dict[tuple[str, str], float] = {}
    labels = point_labels(rig)
    averaged = f"{n_frames} frame(s) per reading, {rig.frames.averaged} averaged"
    fpn, fpn_src = _fixed_pattern(rig, lm.sigma_px)
    supplied = _supplied(rig, "target.signal_e", "target.sigma_px")
    for lab in labels:
        pivot_point = lab.startswith("C") or lab == "M"
        m = lm_moving if lab.startswith("P") else lm
        loc_src = f"{rig.locator.source}; {m.noise_formula}{supplied}"
        streak = f"; streak {m.streak_px:.3g} px" if m.streak_px > 0 else ""
        for ax in ("x", "y"):
            if m.quantization_half_width_px > 0:
                h = m.quantization_half_width_px
                out[f"quant_{ax}_{lab}"] = _q(Rectangular(-h, h), "px", PIVOT if pivot_point else QUANT,
                                              rig.locator.source + f"; integer locator, ±{h:.3g} px fixed by the "
                                              f"sub-pixel phase{streak}")
            if m.locking_amplitude_px > 0:
                a = m.locking_amplitude_px
                out[f"lock_{ax}_{lab}"] = _q(Arcsine(-a, a), "px", PIVOT if pivot_point else LOCK,
                                             rig.target.source + f"; sub-pixel phase unknown (arcsine){streak}")
            elif m.locking_half_width_px > 0:
                h = m.locking_half_width_px
                out[f"lock_{ax}_{lab}"] = _q(Rectangular(-h, h), "px", PIVOT if pivot_point else LOCK,
                                             rig.target.source + "; sub-pixel phase unknown (sawtooth-like bias: "
                                             f"rectangular){streak}")
            if type_a and lab in type_a:
                pass  # the frames' own scatter, below
            elif m.reading_noise_px > 0:
                s = m.reading_noise_px
                out[f"noise_{ax}_{lab}"] = _q(Normal(0.0, s), "px", PIVOT if pivot_point else NOISE,
                                              f"{loc_src}; {averaged}{streak}")
            if fpn > 0:
                out[f"fpn_{ax}_{lab}"] = _q(Normal(0.0, fpn), "px", PIVOT if pivot_point else FPN, fpn_src)
            if lens.distortion == "corrected":
                s = lens.residual_rms_px / math.sqrt(2.0)
                out[f"resid_{ax}_{lab}"] = _q(Normal(0.0, s), "px", DIST,
                                              lens.source + "; RMS reprojection residual / √2 per axis"
                                              + _supplied(rig, "lens.residual_rms_px"))
        if type_a and lab in type_a:
            out.update(type_a_inputs(as_point_scatter(lab, type_a[lab]), PIVOT if pivot_point else None))
    if lens.distortion == "corrected" and lens.residual_correlation_px > 0:
        _residual_correlation(rig, labels, corr)
    if lens.distortion == "uncorrected" and lens.distortion_edge_pct > 0:
        k1 = _k1_bound(rig)
        out["k1"] = _q(Rectangular(-k1, k1), "", DIST,
                       lens.source + f"; ±{lens.distortion_edge_pct:g} % at the field edge, uncorrected")
    _skew_inputs(rig, out)
    _mechanical_inputs(rig, labels, out)
    if rig.pivot.method == "mark" and rig.pivot.mark_offset_bound_mm > 0:
        b = rig.pivot.mark_offset_bound_mm
        for ax in ("x", "y"):
            out[f"mark_offset_{ax}_mm"] = _q(Rectangular(-b, b), "mm", PIVOT,
                                             rig.pivot.source + "; mark offset from the true axis")
    if rig.motion.state == "moving" and rig.motion.jitter_ms > 0:
        for lab in labels:
            if lab.startswith("P"):
                out[f"jitter_ms_{lab}"] = _q(Normal(0.0, rig.motion.jitter_ms), "ms", TIMING,
                                             rig.motion.source + "; timestamp jitter")
    if rig.sweep is not None and rig.source is not None:
        out.update(source_inputs(rig))
    return out, corr


def type_a_inputs(pt: PointScatter, group: str | None = None) -> dict[str, InputQuantity]:
    """One located point's frames as input quantities: one bivariate t and, if it drifts, a drift term.

    Notes
    -----
    The mean position of n frames is one bivariate quantity with covariance S/n (S/n_eff with
    correlated frames) and ν = n − 1 (n_eff − 1); along the principal axes of that covariance
    its two components are uncorrelated, so they are two inputs ``noise_major_L`` and
    ``noise_minor_L`` of one :class:`~budget.propagation.MultivariateT` (JCGM 102 6.5.3): drawn
    together by Monte Carlo, counted once in ν_eff, and the budget's root-sum-of-squares stays
    exact. A significant drift D over the frames adds ``drift_L``, rectangular ±|D|/2 along D
    (JCGM 100 4.3.7: the still position is anywhere along the drift). The model moves the point
    along each input's direction (:meth:`PointScatter.directions`).
    """
    axes = pt.principal_axes()
    if not axes:
        raise ValueError(f"position '{pt.label}' has no scatter")  # refused earlier, with the reason
    variances = [v for _, v, _ in axes]
    joint = MultivariateT(tuple(0.0 for _ in axes), np.diag(variances), pt.dof, label=pt.label)
    out = {}
    for (name, _, vec), dist in zip(axes, joint.components(), strict=True):
        angle = math.degrees(math.atan2(-vec[1], vec[0])) % 180.0  # counterclockwise on the displayed image
        out[f"noise_{name}_{pt.label}"] = _q(dist, "px", group or NOISE,
                                             f"{pt.note}; {name} axis of the frames' scatter, at {angle:.0f}° "
                                             "on the image; joint t with its partner axis")
    d = math.hypot(*pt.drift_px)
    if d > 0:
        out[f"drift_{pt.label}"] = _q(Rectangular(-0.5 * d, 0.5 * d), "px", group or DRIFT,
                                      f"{pt.note}; drift of {d:.3g} px over the frames, rectangular over its extent")
    return out


def _k1_bound(rig: RigDescription) -> float:
    """k1 whose radial distortion at the sensor's corner is the datasheet percentage."""
    cam = rig.camera
    r_edge_px = 0.5 * math.hypot(cam.pixels_x, cam.pixels_y)
    return rig.lens.distortion_edge_pct / 100.0 / (r_edge_px / rig.focal_px) ** 2


def _residual_correlation(rig: RigDescription, labels, corr) -> None:
    """Residuals of nearby points are correlated: r = exp(−d²/2L²) (assumption, per axis)."""
    x, y = nominal_image_points(rig)
    length = rig.lens.residual_correlation_px
    for i, a in enumerate(labels):
        for j in range(i + 1, len(labels)):
            b = labels[j]
            r = math.exp(-((x[i] - x[j]) ** 2 + (y[i] - y[j]) ** 2) / (2 * length**2))
            if r > 1e-6:
                for ax in ("x", "y"):
                    corr[(f"resid_{ax}_{a}", f"resid_{ax}_{b}")] = r


def _skew_inputs(rig: RigDescription, out: dict) -> None:
    g = rig.geometry
    src = g.source
    if g.tilt_bound_deg is not None:
        b = g.tilt_bound_deg
        out["tilt_x_deg"] = _q(Rectangular(-b, b), "°", SKEW, src + "; tilt bound, each axis")
        out["tilt_y_deg"] = _q(Rectangular(-b, b), "°", SKEW, src + "; tilt bound, each axis")
    elif g.tilt_deg is not None:
        out["tilt_deg"] = _q(Normal(g.tilt_deg, g.tilt_u_deg), "°", SKEW, src + "; measured tilt")
        if g.tilt_azimuth_deg is None:
            out["tilt_azimuth_deg"] = _q(Rectangular(0.0, 360.0), "°", SKEW, src + "; azimuth unknown")
    if g.remounted:
        b = g.roll_bound_deg
        out["roll_deg"] = _q(Rectangular(-b, b), "°", SKEW, src + "; camera re-mounted after the zero image")
    if g.target_height_u_mm > 0:
        out["target_height_mm"] = _q(Normal(g.target_height_mm, g.target_height_u_mm), "mm", SKEW,
                                     src + "; target height above the dial (parallax)")


def _fixed_pattern(rig: RigDescription, sigma_px: float) -> tuple[float, str]:
    """sd per axis of a located position from the fixed pattern (PRNU and DSNU in quadrature), and its note.

    The centre-of-mass formulas (:mod:`budget.imaging.fixed_pattern`); a fit weights the pixels much
    alike and is given the same figure (approximation); an integer locator's whole pixel rarely moves
    with a pattern of a few %, so it gets none.
    """
    cam = rig.camera
    if rig.locator.method == "integer" or not (cam.prnu_pct or cam.dsnu_e):
        return 0.0, ""
    shape = "disk" if rig.target.shape == "disk" else "spot"
    prnu = prnu_sd_px(cam.prnu_pct or 0.0, shape)
    dsnu = dsnu_sd_px(cam.dsnu_e or 0.0, rig.target.signal_e, rig.locator.window_px)
    note = (f"{cam.source}; PRNU {cam.prnu_pct or 0:g} % rms, DSNU {cam.dsnu_e or 0:g} e rms; {FPN_FORMULA}"
            + ("; the fit is given the centre-of-mass figure (approximation)" if rig.locator.method == "fit" else ""))
    return math.hypot(prnu, dsnu), note


def _mechanical_inputs(rig: RigDescription, labels, out: dict) -> None:
    """The pointer's repeatability and settling, its pivot's play, and the camera mount's drift."""
    pt, g = rig.pointer, rig.geometry
    for lab in labels:
        if lab == "M":
            continue  # a pivot mark is on the dial: the shaft's play does not move it
        if pt.repeatability_deg and (lab == "Z" or lab.startswith("P")):
            out[f"repeat_deg_{lab}"] = _q(Normal(0.0, pt.repeatability_deg), "°", REPEAT,
                                          pt.source + "; rest angle from one approach to the next (sd)")
        if pt.settling_deg and lab.startswith("P"):
            b = pt.settling_deg
            out[f"settle_deg_{lab}"] = _q(Rectangular(-b, b), "°", SETTLE, pt.source + "; not yet settled, bound")
        if pt.pivot_play_mm:
            b = pt.pivot_play_mm
            for ax in ("x", "y"):
                out[f"play_{ax}_{lab}"] = _q(Rectangular(-b, b), "mm", PLAY,
                                             pt.source + "; pivot runout / bearing play, bound per axis, each image")
    if g.mount_shift_um:
        b = g.mount_shift_um
        for ax in ("x", "y"):
            out[f"mount_shift_{ax}_um"] = _q(Rectangular(-b, b), "µm", MOUNT,
                                             g.source + "; camera shift at the dial between the zero image and the "
                                                        "readings, bound per axis")
    if g.mount_roll_deg:
        b = g.mount_roll_deg
        out["mount_roll_deg"] = _q(Rectangular(-b, b), "°", MOUNT,
                                   g.source + "; camera roll between the zero image and the readings, bound")
