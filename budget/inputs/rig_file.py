"""TOML input file -> :class:`RigDescription`, with validation and one-line errors.

Every problem raises :class:`BudgetInputError` naming the field, its section, the
allowed range and the value received. An unknown key suggests the nearest valid
one (a likely typo). Nothing is repaired silently.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

from budget.errors import BudgetInputError, field_error
from budget.imaging.locator_model import spot_sigma_px
from budget.inputs.schema import Field, choice, coerce, non_negative, number, positive, read_toml, suggest
from budget.inputs.supplied import applies, conditional_assumptions, meter_check, plausibility_warnings
from budget.rig import description as d

__all__ = ["load_rig", "parse_rig", "SCHEMA"]


_SOURCE = Field("str", "a text note (datasheet, certificate, measured, assumed)")

SCHEMA: dict[str, dict[str, Field]] = {
    "camera": {
        "pixels_x": Field("int", "an integer in [16, 100000]", lambda v: 16 <= v <= 100_000, True),
        "pixels_y": Field("int", "an integer in [16, 100000]", lambda v: 16 <= v <= 100_000, True),
        "pitch_um": number("a number in [0.01, 100]", lambda v: 0.01 <= v <= 100, True),
        "bit_depth": Field("int", "an integer in [1, 32]", lambda v: 1 <= v <= 32,
                           assumed="a 12-bit ADC is common in machine-vision cameras (common practice); "
                                   "give the datasheet value"),
        "read_noise_e": number("a number >= 0 and <= 10000", lambda v: 0 <= v <= 1e4,
                               assumed="typical of a machine-vision CMOS sensor (common practice, value from "
                                       "memory); give the datasheet value"),
        "full_well_e": number("a number in (0, 1e8]", lambda v: 0 < v <= 1e8,
                              assumed="typical of a 3-5 um pixel (common practice, value from memory); it sets "
                                      "the ADC step and saturation; give the datasheet value"),
        "shutter": choice("global", "rolling"),
        "row_time_us": non_negative(),
        "frame_rate_hz": positive(),
        "exposure_ms": positive(),
        "prnu_pct": number("a number in [0, 100]", lambda v: 0 <= v <= 100),
        "dsnu_e": number("a number >= 0 and <= 1e6", lambda v: 0 <= v <= 1e6),
        "source": _SOURCE,
    },
    "lens": {
        "focal_length_mm": number("a number in [1, 2000]", lambda v: 1 <= v <= 2000, True),
        "f_number": number("a number in [0.5, 64]", lambda v: 0.5 <= v <= 64),
        "distortion": choice("corrected", "uncorrected"),
        "residual_rms_px": number("a number in (0, 100]", lambda v: 0 < v <= 100,
                                  assumed="possibly optimistic: what a careful calibration reaches (common "
                                          "practice, value from memory); give your calibration's RMS reprojection "
                                          "error"),
        "residual_correlation_px": number("a number in [0, 1e6]", lambda v: 0 <= v <= 1e6),
        "distortion_edge_pct": number("a number in [0, 20]", lambda v: 0 <= v <= 20),
        "wavelength_nm": number("a number in [200, 2000]", lambda v: 200 <= v <= 2000),
        "source": _SOURCE,
    },
    "geometry": {
        "working_distance_mm": number("a number in (0, 1e6]", lambda v: 0 < v <= 1e6, True),
        "pointer_radius_mm": positive(True),
        "pivot_offset_x_mm": number("a finite number", math.isfinite),
        "pivot_offset_y_mm": number("a finite number", math.isfinite),
        "zero_direction_deg": number("a number in [-360, 360]", lambda v: -360 <= v <= 360),
        "travel": Field("str", "one of 'clockwise', 'counterclockwise'",
                        lambda v: v in ("clockwise", "counterclockwise"),
                        assumed="readings counted counterclockwise as seen on the displayed image (the sense of "
                                "angles in mathematics); a pointer that turns clockwise on the image needs "
                                "travel = \"clockwise\""),
        "target_height_mm": non_negative(),
        "target_height_u_mm": non_negative(),
        "tilt_bound_deg": number("a number in (0, 90)", lambda v: 0 < v < 90),
        "tilt_deg": number("a number in [0, 90)", lambda v: 0 <= v < 90),
        "tilt_u_deg": number("a number in (0, 90)", lambda v: 0 < v < 90),
        "tilt_azimuth_deg": number("a number in [-360, 360]", lambda v: -360 <= v <= 360),
        "remounted": Field("bool", "true or false"),
        "roll_bound_deg": number("a number in [0, 45]", lambda v: 0 <= v <= 45),
        "mount_shift_um": number("a number in [0, 1e5]", lambda v: 0 <= v <= 1e5),
        "mount_roll_deg": number("a number in [0, 45]", lambda v: 0 <= v <= 45),
        "source": _SOURCE,
    },
    "pointer": {
        "repeatability_deg": number("a number in [0, 90)", lambda v: 0 <= v < 90),
        "settling_deg": number("a number in [0, 90)", lambda v: 0 <= v < 90),
        "pivot_play_mm": number("a number in [0, 100]", lambda v: 0 <= v <= 100),
        "source": _SOURCE,
    },
    "target": {
        "shape": choice("spot", "disk"),
        "sigma_px": number("a number in [0.01, 100]", lambda v: 0.01 <= v <= 100),
        "diameter_mm": number("a number >= 0 and <= 1000", lambda v: 0 <= v <= 1000),
        "signal_e": number("a number in [1, 1e12]", lambda v: 1 <= v <= 1e12,
                           assumed="possibly optimistic: a well-exposed target (assumption); the signal "
                                   "sets the centroid noise: measure it from a frame"),
        "background_e": number("a number >= 0 and <= 1e9", lambda v: 0 <= v <= 1e9,
                               assumed="a dark surround (assumption); measure it beside the target"),
        "source": _SOURCE,
    },
    "locator": {
        "method": choice("integer", "centroid", "fit"),
        "window_px": Field("int", "an odd integer in [3, 255]", lambda v: 3 <= v <= 255 and v % 2 == 1),
        "window_at": Field("str", "one of 'brightest', 'centroid'", lambda v: v in ("brightest", "centroid"),
                           assumed="the centroid window is centred on each frame's brightest pixel (as "
                                   "'thetabudget frames' does); on a flat-topped target (a disk, a streak) that "
                                   "pixel wanders over the top and a narrow window clips the target: say "
                                   "\"centroid\" if your locator re-centres the window on a first centroid"),
        "source": _SOURCE,
    },
    "pivot": {
        "method": choice("readings", "arc", "mark"),
        "arc_half_angle_deg": number("a number in (0, 180]", lambda v: 0 < v <= 180),
        "arc_points": Field("int", "an integer in [3, 1000]", lambda v: 3 <= v <= 1000),
        "arc_centre_deg": number("a number in [-360, 360]", lambda v: -360 <= v <= 360),
        "mark_offset_bound_mm": non_negative(),
        "source": _SOURCE,
    },
    "frames": {
        "per_reading": Field("int", "an integer in [1, 100000]", lambda v: 1 <= v <= 100_000),
        "averaged": Field("str", "one of 'positions', 'images'", lambda v: v in ("positions", "images"),
                          assumed="each frame is located and the located positions are averaged (as 'thetabudget "
                                  "frames' and 'run' with data do); say \"images\" if the frames are averaged "
                                  "into one image first: the integer locator's answer differs"),
        "source": _SOURCE,
    },
    "motion": {
        "state": choice("static", "moving"),
        "rate_deg_per_s": number("a finite number", math.isfinite),
        "timestamp": choice("start", "middle"),
        "jitter_ms": non_negative(),
        "source": _SOURCE,
    },
    "source": {
        "span_v": positive(),
        "polarity": choice("bipolar", "unipolar"),
        "bits": Field("int", "an integer in [1, 32]", lambda v: 1 <= v <= 32),
        "gain_error_pct": number("a number in [0, 50]", lambda v: 0 <= v <= 50),
        "offset_mv": non_negative(),
        "inl_lsb": non_negative(),
        "noise_uv": non_negative(),
        "output_impedance_ohm": non_negative(),
        "load_resistance_ohm": positive(),
        "readback": choice("commanded", "dmm"),
        "dmm_pct_reading": non_negative(),
        "dmm_counts": non_negative(),
        "dmm_resolution_v": positive(),
        "source": _SOURCE,
    },
    "positions": {"angles_deg": Field("floats", "a list of angles in (-360, 360)",
                                      lambda v: all(-360 < a < 360 for a in v), True)},
    "sweep": {
        "set_points_v": Field("floats", "a list of at least 3 strictly increasing voltages",
                              lambda v: len(v) >= 3 and all(b > a for a, b in zip(v, v[1:], strict=False)),
                              True),
        "nominal_gain_deg_per_v": number("a non-zero finite number", lambda v: v != 0 and math.isfinite(v), True),
    },
    "data": {
        "readings_csv": Field("str", "a path to a CSV file"),
        "pivot_csv": Field("str", "a path to a CSV file"),
        "angle_tolerance_deg": number("a number in (0, 90]", lambda v: 0 < v <= 90,
                                      assumed="a measured reading farther than this from its nominal is refused as "
                                              "an input error (wrong travel, label or zero image), not taken on "
                                              "another branch; 10° allows a gain a few % off its nominal over a "
                                              "full scale (common practice); give your own"),
    },
    "reference": {
        "angles_deg": Field("floats", "a list of reference angles in (-360, 360), one per reading",
                            lambda v: all(-360 < a < 360 for a in v), True),
        "U_deg": Field("floats", "a list of expanded uncertainties > 0, one per reading or one for all",
                       lambda v: all(a > 0 for a in v), True),
        "source": _SOURCE,
    },
    "goal": {  # targets: the run says whether each output meets them (budget.advice.targets)
        "angle_U_deg": positive(),
        "gain_U_pct": positive(),
        "gain_U_deg_per_v": positive(),
        "p": number("a number in (0, 1)", lambda v: 0 < v < 1),
        "source": _SOURCE,
    },
    "conformity": {  # tolerances and the decision rule (JCGM 106; ISO/IEC 17025 7.8.6)
        "rule": Field("str", "one of 'simple', 'guarded'", lambda v: v in ("simple", "guarded"), True),
        "angle_tolerance_deg": positive(),
        "gain_tolerance_pct": positive(),
        "source": _SOURCE,
    },
    "range_claim": {"form": choice("linear", "table"), "source": _SOURCE},
}

_CLASSES = {
    "camera": d.Camera, "lens": d.Lens, "geometry": d.Geometry, "target": d.Target, "pointer": d.Pointer,
    "locator": d.Locator, "pivot": d.Pivot, "frames": d.Frames, "motion": d.Motion,
    "source": d.VoltageSource, "positions": d.Positions, "sweep": d.Sweep, "data": d.Data,
    "reference": d.Reference,
    "goal": d.Goal, "conformity": d.Conformity, "range_claim": d.RangeClaimForm,
}
_REQUIRED_SECTIONS = ("camera", "lens", "geometry")
_TOP_KEYS = ("title",)


def parse_rig(doc: dict, base: Path | None = None) -> d.RigDescription:
    """Validate a parsed TOML document and build the rig description."""
    for key in doc:
        if key not in SCHEMA and key not in _TOP_KEYS:
            raise BudgetInputError(
                f"Unknown section [{key}] in the input file.{suggest(key, [*SCHEMA, *_TOP_KEYS])}"
            )
    for name in _REQUIRED_SECTIONS:
        if name not in doc:
            raise BudgetInputError(f"The section [{name}] is missing from the input file.")
    if ("positions" in doc) == ("sweep" in doc):
        raise BudgetInputError(
            "The input file must have exactly one of [positions] (a list of angles) "
            "or [sweep] (set points and a nominal gain)."
        )
    built: dict[str, object] = {}
    assumed: list[d.Assumption] = []
    for section, fields in SCHEMA.items():
        raw = doc.get(section)
        if raw is None:
            built[section] = None
            continue
        if not isinstance(raw, dict):
            raise BudgetInputError(f"[{section}] must be a table of keys, got {raw!r}.")
        values = {}
        for key, value in raw.items():
            if key not in fields:
                raise BudgetInputError(
                    f"Unknown key '{key}' in [{section}].{suggest(key, fields)}"
                )
            values[key] = coerce(section, key, fields[key], value)
        for key, spec in fields.items():
            if spec.required and key not in values:
                raise BudgetInputError(f"The '{key}' field of [{section}] is missing; it must be {spec.allowed}.")
        built[section] = _CLASSES[section](**values)
        assumed += _assumed(section, fields, values)
    for section in ("target", "pointer", "locator", "pivot", "frames", "motion"):
        if built[section] is None:
            built[section] = _CLASSES[section]()
            assumed += _assumed(section, SCHEMA[section], {})
    title = doc.get("title", "untitled rig")
    if not isinstance(title, str):
        raise field_error("title", "a text", title)
    if built["sweep"] is not None and built["source"] is None:
        built["source"] = d.VoltageSource()
        assumed += _assumed("source", SCHEMA["source"], {})
    if built["data"] is not None and base is not None:
        data = built["data"]
        built["data"] = dataclasses.replace(
            data,
            readings_csv=str(base / data.readings_csv) if data.readings_csv else None,
            pivot_csv=str(base / data.pivot_csv) if data.pivot_csv else None,
        )
    rig = d.RigDescription(title=title, raw=doc, assumptions=tuple(assumed), **built)  # type: ignore[arg-type]
    _cross_checks(rig)
    _target_checks(rig)
    meter_check(rig, doc)
    assumed = [a for a in assumed if applies(rig, a.field)]
    listed = tuple(a.field for a in assumed)
    return dataclasses.replace(rig, assumptions=(*assumed, *conditional_assumptions(rig, doc, listed)),
                               input_warnings=tuple(plausibility_warnings(doc)))


def _assumed(section: str, fields: dict[str, Field], given: dict) -> list[d.Assumption]:
    """The defaults used in one section that change a budget, each with the reason it is fair."""
    defaults = {f.name: f.default for f in dataclasses.fields(_CLASSES[section])}
    return [d.Assumption(f"{section}.{key}", defaults[key], spec.assumed)
            for key, spec in fields.items() if spec.assumed and key not in given]


def _cross_checks(rig: d.RigDescription) -> None:
    """Checks that involve several fields."""
    g, cam, lens = rig.geometry, rig.camera, rig.lens
    if g.working_distance_mm <= lens.focal_length_mm:
        raise field_error("working_distance_mm", f"a number > the focal length ({lens.focal_length_mm:g} mm)",
                          g.working_distance_mm, "[geometry]")
    for key in ("target_height_mm", "target_height_u_mm"):  # the target sits between the dial and the lens
        if getattr(g, key) >= g.working_distance_mm:
            raise field_error(key, f"a number >= 0 and < working_distance_mm ({g.working_distance_mm:g} mm)",
                              getattr(g, key), "[geometry]")
    if rig.radius_px < 1:  # a pointer imaged shorter than a pixel has no measurable angle
        least = g.pointer_radius_mm / rig.radius_px
        raise field_error("pointer_radius_mm", f"a radius that is imaged at least 1 px long (here >= {least:.3g} mm)",
                          g.pointer_radius_mm, "[geometry]")
    modes = [g.tilt_bound_deg is not None, g.tilt_deg is not None]
    if all(modes):
        raise BudgetInputError(
            "[geometry] gives both 'tilt_bound_deg' and 'tilt_deg': give a bound, or a measured tilt "
            "with 'tilt_u_deg'."
        )
    for key in ("tilt_u_deg", "tilt_azimuth_deg"):
        if g.tilt_deg is None and getattr(g, key) is not None:
            raise BudgetInputError(
                f"The '{key}' field of [geometry] belongs to a measured 'tilt_deg', which is not given; "
                f"give 'tilt_deg' too, or remove '{key}' (with 'tilt_bound_deg' the azimuth is unknown). "
                f"Got {getattr(g, key)!r}."
            )
    if g.tilt_deg is not None and g.tilt_u_deg is None:
        raise BudgetInputError("The 'tilt_u_deg' field of [geometry] is missing; a measured 'tilt_deg' "
                               "needs its standard uncertainty, a number in (0, 90).")
    if g.remounted and g.roll_bound_deg <= 0:
        raise field_error("roll_bound_deg", "a number in (0, 45] when remounted = true",
                          g.roll_bound_deg, "[geometry]")
    if rig.target.shape == "disk" and rig.target.diameter_mm <= 0:
        raise field_error("diameter_mm", "a number > 0 for a disk target", rig.target.diameter_mm, "[target]")
    if rig.motion.state == "moving" and rig.motion.rate_deg_per_s == 0:
        raise field_error("rate_deg_per_s", "a non-zero number for a moving pointer",
                          rig.motion.rate_deg_per_s, "[motion]")
    if cam.shutter == "rolling" and cam.row_time_us <= 0:
        raise field_error("row_time_us", "a number > 0 for a rolling shutter", cam.row_time_us, "[camera]")
    angles = rig.nominal_angles_deg
    ref = rig.reference
    if ref is not None:
        if len(ref.angles_deg) != len(angles):
            raise field_error("angles_deg", f"a list of {len(angles)} reference angles, one per reading",
                              list(ref.angles_deg), "[reference]")
        if len(ref.U_deg) not in (1, len(angles)):
            raise field_error("U_deg", f"a list of 1 or {len(angles)} expanded uncertainties", list(ref.U_deg),
                              "[reference]")
    distinct = {round(a % 360.0, 9) % 360.0 for a in (0.0, *angles)}
    if rig.pivot.method == "readings" and (len(angles) < 2 or len(distinct) < 3):
        raise BudgetInputError(
            "[pivot] method = 'readings' fits a circle through the zero image and the readings: "
            f"it needs at least 2 readings at different positions from each other and from 0°. "
            f"Got {list(angles)}."
        )
    if rig.sweep is not None and rig.source is not None:
        span = rig.source.span_v
        lo, hi = (-span / 2, span / 2) if rig.source.polarity == "bipolar" else (0.0, span)
        if min(rig.sweep.set_points_v) < lo or max(rig.sweep.set_points_v) > hi:
            raise field_error("set_points_v", f"voltages within the source's range [{lo:g}, {hi:g}] V "
                              f"({rig.source.polarity}, span {span:g} V)", list(rig.sweep.set_points_v), "[sweep]")
    # the pointer must stay in the field of view (with the spot's 3-sigma margin)
    pitch_mm = cam.pitch_um * 1e-3
    m = rig.magnification
    cx = g.pivot_offset_x_mm * m / pitch_mm
    cy = -g.pivot_offset_y_mm * m / pitch_mm  # up from the centre: the offset's y is down the image
    r = rig.radius_px + 3 * spot_sigma_px(rig) + 1
    half_w, half_h = cam.pixels_x / 2, cam.pixels_y / 2
    sense = 1.0 if g.travel == "counterclockwise" else -1.0  # readings on the displayed image
    points = [("", a) for a in (0.0, *angles)]
    if rig.pivot.method == "arc":  # the pivot-arc points are located too
        p = rig.pivot
        mid = p.arc_centre_deg if p.arc_centre_deg is not None else 0.5 * (min(0.0, *angles) + max(0.0, *angles))
        step = 2 * p.arc_half_angle_deg / (p.arc_points - 1)
        points += [(" (pivot arc)", mid - p.arc_half_angle_deg + i * step) for i in range(p.arc_points)]
    for what, a in points:
        t = math.radians(g.zero_direction_deg + sense * a)
        x, y = cx + r * math.cos(t), cy + r * math.sin(t)
        if abs(x) > half_w or abs(y) > half_h:
            raise BudgetInputError(
                f"The pointer leaves the sensor's field of view at {a:g}°{what}: the target would be imaged at "
                f"x = {half_w - 0.5 + x:.0f}, y = {half_h - 0.5 - y:.0f} px (image coordinates: x right, y down, "
                f"from the top-left pixel), outside the {cam.pixels_x} x {cam.pixels_y} px image. "
                "Check pointer_radius_mm, working_distance_mm, focal_length_mm, pivot_offset_*_mm"
                + (" and the [pivot] arc." if what else ".")
            )


def _target_checks(rig: d.RigDescription) -> None:
    """[goal], [conformity] and [range_claim] against what the rig measures."""
    g, c = rig.goal, rig.conformity
    if g is not None:
        if g.angle_U_deg is None and g.gain_U_pct is None and g.gain_U_deg_per_v is None:
            raise BudgetInputError("[goal] needs 'angle_U_deg' and/or 'gain_U_pct' or 'gain_U_deg_per_v' "
                                   "(the expanded uncertainty wanted).")
        if g.gain_U_pct is not None and g.gain_U_deg_per_v is not None:
            raise BudgetInputError("[goal] gives both 'gain_U_pct' and 'gain_U_deg_per_v': give one.")
    if c is not None and c.angle_tolerance_deg is None and c.gain_tolerance_pct is None:
        raise BudgetInputError("[conformity] needs 'angle_tolerance_deg' and/or 'gain_tolerance_pct' "
                               "(the half-width of the tolerance interval about the nominal).")
    gain_keys = [("goal", k) for k in ("gain_U_pct", "gain_U_deg_per_v") if g and getattr(g, k) is not None]
    gain_keys += [("conformity", "gain_tolerance_pct")] if c and c.gain_tolerance_pct is not None else []
    if rig.sweep is None and gain_keys:
        sec, key = gain_keys[0]
        raise BudgetInputError(f"[{sec}] gives '{key}' but the file has no [sweep]: a gain needs set points.")
    if rig.range_claim is not None and len(rig.nominal_angles_deg) < 2:
        raise BudgetInputError("[range_claim] needs at least 2 angles (a range); the file has "
                               f"{len(rig.nominal_angles_deg)}.")


def load_rig(path: str | Path) -> d.RigDescription:
    """Read and validate a rig description file.

    Raises
    ------
    BudgetInputError
        For a missing or unreadable file, malformed TOML (with the line), or any
        invalid field.
    """
    return parse_rig(read_toml(path), base=Path(path).parent)
