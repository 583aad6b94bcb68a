"""What the tool supplies when a rig file leaves a field out, and the plausible range of every number.

Two lists reach every report through the rig description:

* **assumptions** (:class:`~budget.rig.description.Assumption`: field, value, reason): each value the
  tool supplied that changes a budget. A field whose absence leaves a component out of the budget
  (the camera's tilt, the source's gain error, ...) is listed with the value "not given" and a reason that
  begins with :data:`OMISSION`: the budget is optimistic by that component.
* **plausibility warnings**: a number outside the range a real rig has, with the likely unit slip
  (a tilt typed in radians, a radius in cm, an exposure in seconds).

Defaults that always apply are given by ``Field(assumed=...)`` in :mod:`budget.inputs.rig_file`;
this module adds those that apply only in some rigs, and the omissions.
"""

from __future__ import annotations

from budget.errors import BudgetInputError
from budget.imaging.locator_model import spot_sigma_px
from budget.rig import description as d

__all__ = ["OMISSION", "NOT_GIVEN", "conditional_assumptions", "plausibility_warnings", "PLAUSIBLE", "applies",
           "meter_check"]

OMISSION = "optimistic omission: "
"""How the reason of a left-out component begins: the budget lacks that term and is smaller for it."""
NOT_GIVEN = "not given"
"""The value listed for a left-out component."""


def _given(doc: dict, section: str, key: str) -> bool:
    table = doc.get(section)
    return isinstance(table, dict) and key in table


def _rules(rig: d.RigDescription):
    """(section, key, applies, value, reason) for every conditional default and omission."""
    g, lens, cam, t = rig.geometry, rig.lens, rig.camera, rig.target
    moving = rig.motion.state == "moving"
    sub_pixel = rig.locator.method != "integer"
    yield ("geometry", "tilt_bound_deg", g.tilt_bound_deg is None and g.tilt_deg is None, NOT_GIVEN,
           OMISSION + "no camera-tilt term: the camera is taken as exactly square to the dial (often the largest "
                      "component); give tilt_bound_deg (a bound per axis) or a measured tilt_deg with tilt_u_deg")
    yield ("lens", "distortion", True, lens.distortion,
           "the lens distortion is taken as calibrated and corrected (residual_rms_px then sets its term)")
    yield ("lens", "distortion_edge_pct", lens.distortion == "uncorrected", NOT_GIVEN,
           OMISSION + "uncorrected distortion of unknown size: no distortion term; give the datasheet's % at the "
                      "field edge")
    yield ("lens", "residual_correlation_px", lens.distortion == "corrected", 0.0,
           "calibration residuals taken as independent from point to point (assumption); nearby points' residuals "
           "are often alike: give their correlation length")
    for key, value in (("f_number", lens.f_number), ("wavelength_nm", lens.wavelength_nm)):
        yield ("lens", key, t.sigma_px is None, value,
               "sets the diffraction spot (the target's size in the image) since [target] sigma_px is not given")
    yield ("target", "sigma_px", t.sigma_px is None, round(spot_sigma_px(rig), 4),
           "the spot is the in-focus diffraction spot of the lens (computed): optimistic for a defocused or "
           "blurred target; measure sigma_px from a frame")
    yield ("geometry", "pivot_offset_x_mm", True, g.pivot_offset_x_mm, "the pivot on the optical axis (assumption)")
    yield ("geometry", "pivot_offset_y_mm", True, g.pivot_offset_y_mm, "the pivot on the optical axis (assumption)")
    yield ("geometry", "zero_direction_deg", True, g.zero_direction_deg,
           "the pointer's zero points up on the displayed image (assumption)")
    yield ("geometry", "target_height_mm", True, g.target_height_mm, "the target on the dial plane: no parallax")
    yield ("geometry", "target_height_u_mm", g.target_height_mm > 0, NOT_GIVEN,
           OMISSION + "the target's height above the dial is taken as exact (no parallax term)")
    yield ("geometry", "mount_shift_um", True, NOT_GIVEN,
           OMISSION + "no camera-mount shift between the zero image and the readings (10 µm at R = 42 mm is "
                      "0.014°); give a bound per axis at the dial")
    yield ("geometry", "mount_roll_deg", True, NOT_GIVEN,
           OMISSION + "no camera-mount roll between the zero image and the readings; give a bound")
    yield ("pointer", "repeatability_deg", True, NOT_GIVEN,
           OMISSION + "the pointer taken to rest at the same angle every time; give its repeatability (sd)")
    yield ("pointer", "settling_deg", True, NOT_GIVEN,
           OMISSION + "every reading taken after the pointer has settled; give a bound of what it still moves")
    yield ("pointer", "pivot_play_mm", True, NOT_GIVEN,
           OMISSION + "no pivot runout or bearing play; give a bound per axis")
    yield ("camera", "prnu_pct", sub_pixel, NOT_GIVEN,
           OMISSION + "no fixed gain pattern (PRNU), which averaging frames does not remove; give the datasheet's "
                      "% rms")
    yield ("camera", "dsnu_e", sub_pixel, NOT_GIVEN,
           OMISSION + "no fixed dark-signal pattern (DSNU); give the datasheet's e rms")
    yield ("camera", "exposure_ms", moving, cam.exposure_ms, "sets the motion during the exposure (assumption)")
    yield ("camera", "shutter", moving, cam.shutter, "all rows exposed together (assumption)")
    yield ("target", "shape", True, t.shape, "a spot target (assumption)")
    yield ("locator", "method", True, rig.locator.method, "the centre of mass (assumption): say what the rig uses")
    yield ("locator", "window_px", rig.locator.method != "integer", rig.locator.window_px,
           "the locator's window (assumption)")
    yield ("pivot", "method", True, rig.pivot.method,
           "the pivot fitted as a circle through the zero image and the readings (assumption)")
    yield ("pivot", "mark_offset_bound_mm", rig.pivot.method == "mark", NOT_GIVEN,
           OMISSION + "the pivot mark taken as exactly on the shaft's axis; give a bound of its offset")
    yield ("frames", "per_reading", True, rig.frames.per_reading, "one frame per reading (assumption)")
    yield ("motion", "state", True, rig.motion.state, "the pointer still during the exposure (assumption)")
    yield ("motion", "timestamp", moving, rig.motion.timestamp, "images stamped at mid-exposure (assumption)")
    yield ("motion", "jitter_ms", moving, NOT_GIVEN, OMISSION + "the timestamps taken as exact; give their jitter")
    s = rig.source
    if rig.sweep is not None and s is not None:
        for key, value in (("span_v", s.span_v), ("polarity", s.polarity), ("bits", s.bits),
                           ("readback", s.readback)):
            yield ("source", key, True, value, "the voltage source's range, DAC and read-back (assumption)")
        for key, what in (("gain_error_pct", "gain error"), ("offset_mv", "offset"), ("inl_lsb", "non-linearity"),
                          ("noise_uv", "output noise")):
            yield ("source", key, True, NOT_GIVEN,
                   OMISSION + f"the source's {what} taken as zero; give its datasheet value")
        yield ("source", "output_impedance_ohm", s.load_resistance_ohm is not None, NOT_GIVEN,
               OMISSION + "the source's output impedance taken as zero into the load")
        yield ("source", "dmm_resolution_v", s.readback == "dmm", s.dmm_resolution_v,
               "the meter's resolution (assumption); give the meter's")


def applies(rig: d.RigDescription, name: str) -> bool:
    """Whether a default of ``Field(assumed=...)`` changes this rig's budget (some fields serve one mode only)."""
    if name == "lens.residual_rms_px":
        return rig.lens.distortion == "corrected"
    return True


def conditional_assumptions(rig: d.RigDescription, doc: dict, listed: tuple[str, ...]) -> list[d.Assumption]:
    """The defaults and omissions of :func:`_rules` that apply to this rig and the file left out.

    ``listed``: fields already listed (by ``Field(assumed=...)``), not repeated."""
    out = []
    for section, key, applies, value, reason in _rules(rig):
        name = f"{section}.{key}"
        if applies and not _given(doc, section, key) and name not in listed:
            out.append(d.Assumption(name, value, reason))
    return out


RADIANS = "was it typed in radians? (1° = 0.01745 rad)"
PLAUSIBLE: dict[tuple[str, str], tuple[float, float, str, str, str]] = {
    # (section, key): (low, high, unit, slip if below, slip if above)
    ("camera", "pitch_um"): (0.8, 30, "µm", "was it typed in mm?", "was it typed in nm?"),
    ("camera", "bit_depth"): (8, 16, "bits", "", ""),
    ("camera", "read_noise_e"): (0.3, 100, "e", "", "was it typed in ADU, or in e²?"),
    ("camera", "full_well_e"): (1000, 500_000, "e", "was it typed in thousands of electrons (ke)?", ""),
    ("camera", "row_time_us"): (0.5, 200, "µs", "was it typed in ms?", "was it typed in ns?"),
    ("camera", "frame_rate_hz"): (0.1, 20_000, "Hz", "", ""),
    ("camera", "exposure_ms"): (0.005, 2000, "ms", "was it typed in seconds?", "was it typed in µs?"),
    ("camera", "prnu_pct"): (0.05, 5, "% rms", "was it typed as a fraction, not %?", ""),
    ("camera", "dsnu_e"): (0, 200, "e rms", "", "was it typed in ADU at a high gain, or in e/s?"),
    ("lens", "focal_length_mm"): (2, 600, "mm", "", "was it typed in µm?"),
    ("lens", "f_number"): (0.95, 32, "", "", ""),
    ("lens", "residual_rms_px"): (0.005, 2, "px", "", "was it typed in µm on the sensor?"),
    ("lens", "distortion_edge_pct"): (0.01, 10, "%", "was it typed as a fraction, not %?", ""),
    ("lens", "wavelength_nm"): (350, 1100, "nm", "was it typed in µm?", ""),
    ("geometry", "working_distance_mm"): (20, 10_000, "mm", "was it typed in cm?", "was it typed in µm?"),
    ("geometry", "pointer_radius_mm"): (3, 1000, "mm", "was it typed in cm?", "was it typed in µm?"),
    ("geometry", "target_height_mm"): (0, 50, "mm", "", "was it typed in µm?"),
    ("geometry", "target_height_u_mm"): (0, 10, "mm", "", "was it typed in µm?"),
    ("geometry", "tilt_bound_deg"): (0.02, 15, "°", RADIANS, ""),
    ("geometry", "tilt_deg"): (0, 15, "°", "", ""),
    ("geometry", "tilt_u_deg"): (0.005, 10, "°", RADIANS, ""),
    ("geometry", "roll_bound_deg"): (0, 5, "°", "", ""),
    ("geometry", "mount_shift_um"): (0, 500, "µm", "", "was it typed in nm?"),
    ("geometry", "mount_roll_deg"): (0, 2, "°", "", ""),
    ("pointer", "repeatability_deg"): (0, 2, "°", "", ""),
    ("pointer", "settling_deg"): (0, 2, "°", "", ""),
    ("pointer", "pivot_play_mm"): (0, 0.5, "mm", "", "was it typed in µm?"),
    ("target", "sigma_px"): (0.3, 20, "px", "", "was it typed in µm on the sensor?"),
    ("target", "diameter_mm"): (0.05, 20, "mm", "was it typed in cm?", "was it typed in µm?"),
    ("target", "signal_e"): (300, 1e8, "e", "was it typed in ADU or ke?", ""),
    ("target", "background_e"): (0, 1e5, "e", "", ""),
    ("pivot", "mark_offset_bound_mm"): (0, 1, "mm", "", "was it typed in µm?"),
    ("motion", "jitter_ms"): (0, 100, "ms", "", "was it typed in µs?"),
    ("source", "span_v"): (0.1, 100, "V", "", "was it typed in mV?"),
    ("source", "bits"): (6, 32, "bits", "", ""),
    ("source", "gain_error_pct"): (0, 5, "%", "", "was it typed in ppm?"),
    ("source", "offset_mv"): (0, 100, "mV", "", "was it typed in µV?"),
    ("source", "inl_lsb"): (0, 64, "LSB", "", "was it typed in µV or ppm?"),
    ("source", "noise_uv"): (0, 10_000, "µV rms", "", "was it typed in nV?"),
    ("source", "dmm_pct_reading"): (0, 5, "%", "", "was it typed in ppm?"),
    ("source", "dmm_resolution_v"): (1e-8, 1, "V", "", "was it typed in mV or µV?"),
}
"""The range a real rig's value falls in, with its unit and the likely slip on each side (common practice)."""


def plausibility_warnings(doc: dict) -> list[str]:
    """A warning for every number of the file outside its plausible range, naming the field and the slip."""
    out = []
    for (section, key), (lo, hi, unit, below, above) in PLAUSIBLE.items():
        table = doc.get(section)
        if not isinstance(table, dict) or key not in table:
            continue
        v = table[key]
        if isinstance(v, bool) or not isinstance(v, int | float) or lo <= abs(v) <= hi or v == 0:
            continue  # 0 is "none" where the field allows it (a spot's diameter, a corrected lens's edge %)
        slip = below if abs(v) < lo else above
        u = f" {unit}" if unit else ""
        out.append(f"The '{key}' field of [{section}] is {v:g}{u}, outside the plausible range [{lo:g}, {hi:g}]{u}"
                   + (f": {slip}" if slip else "; check it") + " (the budget uses it as given).")
    sweep = doc.get("sweep")
    if isinstance(sweep, dict) and isinstance(sweep.get("nominal_gain_deg_per_v"), int | float):
        k = abs(sweep["nominal_gain_deg_per_v"])
        if not 0.1 <= k <= 1000:
            out.append(f"The 'nominal_gain_deg_per_v' field of [sweep] is {k:g} °/V, outside the plausible range "
                       "[0.1, 1000] °/V: was it typed in rad/V or °/mV? (the budget uses it as given).")
    return out


def meter_check(rig: d.RigDescription, doc: dict) -> None:
    """A read-back meter without its specification would be a perfect meter: refused."""
    s = rig.source
    if s is None or s.readback != "dmm":
        return
    table = doc.get("source") or {}
    for key in ("dmm_pct_reading", "dmm_counts"):
        if key not in table:
            raise BudgetInputError(f"The '{key}' field of [source] is missing; readback = \"dmm\" needs the meter's "
                                   "specification (±% of reading and ±counts, each a number >= 0; 0 only if the "
                                   "meter's certificate says so).")
