"""The ``choose`` input file: a rig's scene, light and use, a goal, and candidate cameras and lenses.

TOML with one table per concept, units in the key names and a ``source`` note in each
section (it reaches every report). Validation mirrors :mod:`budget.inputs.rig_file`: an unknown key
suggests the nearest valid one, and every problem raises :class:`BudgetInputError` in one
line naming the field, its section, the allowed range and the value received. The camera
list is a CSV file (columns :data:`CAMERA_COLUMNS`, read by :mod:`budget.inputs.cameras_csv`); lenses are
a list of tables or ``"auto"``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from pathlib import Path

from budget.errors import BudgetInputError, field_error
from budget.inputs.cameras_csv import CAMERA_COLUMNS, MAX_CAMERAS, CameraTable, read_cameras_csv
from budget.inputs.schema import (
    MAX_LIST,
    Field,
    choice,
    coerce,
    non_negative,
    number,
    positive,
    read_toml,
    suggest,
)

__all__ = ["CAMERA_COLUMNS", "ChooseSpec", "CameraTable", "LensList", "SCHEMA", "load_choose", "parse_choose",
           "read_cameras_csv", "MAX_CAMERAS", "MAX_CANDIDATES", "MAX_EVALUATIONS"]

MAX_CANDIDATES = 100_000
"""Most camera × lens candidates one choose file may ask for."""
MAX_EVALUATIONS = 20_000_000
"""Most candidate × setting evaluations of the search (candidates × f-numbers × exposures × distances)."""
_SOURCE = Field("str", "a text note (datasheet, drawing, measured, assumed)")
_ANGLES = Field("floats", "a list of angles in (-360, 360)", lambda v: all(-360 < a < 360 for a in v))

SCHEMA: dict[str, dict[str, Field]] = {
    "scene": {
        "pointer_radius_mm": positive(True),
        "dial_diameter_mm": positive(True),
        "field_margin_pct": number("a number in [0, 100]", lambda v: 0 <= v <= 100),
        "working_distance_min_mm": positive(True),
        "working_distance_max_mm": positive(True),
        "pivot_offset_x_mm": number("a finite number", math.isfinite),
        "pivot_offset_y_mm": number("a finite number", math.isfinite),
        "zero_direction_deg": number("a number in [-360, 360]", lambda v: -360 <= v <= 360),
        "tilt_bound_deg": number("a number in [0, 30]", lambda v: 0 <= v <= 30),
        "target_height_mm": non_negative(),
        "source": _SOURCE,
    },
    "target": {
        "shape": choice("spot", "disk"),
        "sigma_mm": non_negative(),
        "diameter_mm": non_negative(),
        "wavelength_nm": number("a number in [200, 2000]", lambda v: 200 <= v <= 2000),
        "source": _SOURCE,
    },
    "light": {
        "signal_e_per_ms": positive(True),
        "background_e_per_um2_per_ms": non_negative(),
        "reference_f_number": number("a number in [0.5, 64]", lambda v: 0.5 <= v <= 64),
        "exposure_ms": positive(True),
        "source": _SOURCE,
    },
    "locator": {
        "method": choice("integer", "centroid", "fit"),
        "window_px": Field("int", "an odd integer in [3, 255], or 0 for automatic (smallest odd >= 8 sigma + 1)",
                           lambda v: v == 0 or (3 <= v <= 255 and v % 2 == 1)),
        "frames_per_reading": Field("int", "an integer in [1, 100000]", lambda v: 1 <= v <= 100_000),
        "frames_averaged": choice("positions", "images"),
        "window_at": choice("brightest", "centroid"),
        "distortion_residual_rms_px": non_negative(),
        "coc_px": number("a number in (0, 100]", lambda v: 0 < v <= 100),
        "source": _SOURCE,
    },
    "pivot": {
        "method": choice("readings", "arc", "mark"),
        "arc_half_angle_deg": number("a number in (0, 180]", lambda v: 0 < v <= 180),
        "arc_points": Field("int", "an integer in [3, 1000]", lambda v: 3 <= v <= 1000),
        "mark_offset_bound_mm": non_negative(),
        "source": _SOURCE,
    },
    "measurement": {
        "angles_deg": _ANGLES,
        "set_points_v": Field("floats", "a list of at least 3 strictly increasing voltages",
                              lambda v: len(v) >= 3 and all(b > a for a, b in zip(v, v[1:], strict=False))),
        "nominal_gain_deg_per_v": number("a non-zero finite number", lambda v: v != 0),
        "source": _SOURCE,
    },
    "motion": {
        "rate_deg_per_s": number("a finite number", math.isfinite),
        "jitter_ms": non_negative(),
        "max_blur_px": positive(),
        "sample_step_deg": positive(),
        "source": _SOURCE,
    },
    "goal": {
        "angle_U_deg": positive(),
        "gain_U_pct": positive(),
        "p": number("a number in (0, 1)", lambda v: 0 < v < 1),
        "source": _SOURCE,
    },
    "candidates": {
        "cameras_csv": Field("str", "a path to a CSV file of cameras", required=True),
        "lenses": Field("lenses", "a list of {focal_length_mm, f_number} tables, or \"auto\"", required=True),
        "auto_f_number": number("a number in [0.5, 64]", lambda v: 0.5 <= v <= 64),
        "source": _SOURCE,
    },
    "search": {  # what choose may vary per camera × lens (the working distance always, in its range)
        "distance_steps": Field("int", "an integer in [2, 200]", lambda v: 2 <= v <= 200),
        "f_numbers": Field("floats", "a list of f-numbers in [0.5, 64]", lambda v: all(0.5 <= x <= 64 for x in v)),
        "exposures_ms": Field("floats", "a list of exposures > 0 ms", lambda v: all(x > 0 for x in v)),
        "source": _SOURCE,
    },
    "pixel_model": {
        "sensor_width_mm": positive(True),
        "read_noise_e": non_negative(),
        "full_well_e_per_um2": positive(),
        "bit_depth": Field("int", "an integer in [1, 32]", lambda v: 1 <= v <= 32),
        "f_number": number("a number in [0.5, 64]", lambda v: 0.5 <= v <= 64),
        "pixels_min": Field("int", "an integer in [16, 100000]", lambda v: 16 <= v <= 100_000),
        "pixels_max": Field("int", "an integer in [16, 100000]", lambda v: 16 <= v <= 100_000),
        "source": _SOURCE,
    },
}
_REQUIRED = ("scene", "light", "goal", "candidates")
_TOP = ("title",)


@dataclass(frozen=True)
class LensList:
    """Fixed lenses (focal length, f-number), or automatic focal length at ``auto_f_number``."""

    auto: bool
    focal_length_mm: tuple[float, ...]
    f_number: tuple[float, ...]
    auto_f_number: float


@dataclass(frozen=True)
class ChooseSpec:
    """Everything ``choose`` needs; each section's dict holds validated values with defaults filled in."""

    title: str
    scene: dict
    target: dict
    light: dict
    locator: dict
    pivot: dict
    measurement: dict
    motion: dict
    goal: dict
    pixel_model: dict | None
    cameras: CameraTable
    lenses: LensList
    raw: dict
    search: dict = dataclass_field(default_factory=dict)


_DEFAULTS = {
    "scene": {"field_margin_pct": 10.0, "pivot_offset_x_mm": 0.0, "pivot_offset_y_mm": 0.0,
              "zero_direction_deg": 90.0, "tilt_bound_deg": 0.0, "target_height_mm": 0.0, "source": "assumed"},
    "target": {"shape": "spot", "sigma_mm": 0.0, "diameter_mm": 0.0, "wavelength_nm": 550.0, "source": "assumed"},
    "light": {"background_e_per_um2_per_ms": 0.0, "reference_f_number": 8.0, "source": "assumed"},
    "locator": {"method": "centroid", "window_px": 0, "frames_per_reading": 1, "frames_averaged": "positions",
                "window_at": "brightest", "distortion_residual_rms_px": 0.0,
                "coc_px": 2.0, "source": "assumed"},
    "pivot": {"method": "readings", "arc_half_angle_deg": 45.0, "arc_points": 9, "mark_offset_bound_mm": 0.0,
              "source": "assumed"},
    "measurement": {"source": "assumed"},
    "motion": {"rate_deg_per_s": 0.0, "jitter_ms": 0.0, "max_blur_px": 0.5, "sample_step_deg": 1.0,
               "source": "assumed"},
    "goal": {"p": 0.95, "source": "assumed"},
    "candidates": {"auto_f_number": 8.0, "source": "assumed"},
    "search": {"distance_steps": 12, "source": "assumed"},
    "pixel_model": {"read_noise_e": 2.5, "full_well_e_per_um2": 900.0, "bit_depth": 12, "f_number": 8.0,
                    "pixels_min": 100, "pixels_max": 8000, "source": "assumed"},
}


def _section(doc: dict, name: str) -> dict | None:
    raw = doc.get(name)
    if raw is None:
        return None if name == "pixel_model" else dict(_DEFAULTS.get(name, {}))
    if not isinstance(raw, dict):
        raise BudgetInputError(f"[{name}] must be a table of keys, got {raw!r}.")
    fields = SCHEMA[name]
    out = dict(_DEFAULTS.get(name, {}))
    for key, value in raw.items():
        if key not in fields:
            raise BudgetInputError(f"Unknown key '{key}' in [{name}].{suggest(key, fields)}")
        spec = fields[key]
        out[key] = value if spec.kind == "lenses" else coerce(name, key, spec, value)
    for key, spec in fields.items():
        if spec.required and key not in out:
            raise BudgetInputError(f"The '{key}' field of [{name}] is missing; it must be {spec.allowed}.")
    return out


def _lenses(cand: dict) -> LensList:
    value = cand["lenses"]
    allowed = SCHEMA["candidates"]["lenses"].allowed
    if value == "auto":
        return LensList(True, (), (), cand["auto_f_number"])
    if not isinstance(value, list) or not value:
        raise field_error("lenses", allowed, value, "[candidates]")
    if len(value) > MAX_LIST:
        raise field_error("lenses", f"{allowed} (at most {MAX_LIST} lenses)", f"a list of {len(value)} lenses",
                          "[candidates]")
    f, n = [], []
    for i, item in enumerate(value):
        if not isinstance(item, dict) or set(item) - {"focal_length_mm", "f_number"} or "focal_length_mm" not in item:
            raise field_error(f"lenses[{i}]", "a table {focal_length_mm = ..., f_number = ...}", item, "[candidates]")
        fl = coerce("candidates", f"lenses[{i}].focal_length_mm",
                     number("a number in (0, 2000]", lambda v: 0 < v <= 2000), item["focal_length_mm"])
        fn = coerce("candidates", f"lenses[{i}].f_number",
                     number("a number in [0.5, 64]", lambda v: 0.5 <= v <= 64), item.get("f_number", 8.0))
        f.append(fl)
        n.append(fn)
    return LensList(False, tuple(f), tuple(n), cand["auto_f_number"])


def parse_choose(doc: dict, base: Path | None = None) -> ChooseSpec:
    """Validate a parsed ``choose`` document and read its camera list (relative to ``base``)."""
    for key in doc:
        if key not in SCHEMA and key not in _TOP:
            raise BudgetInputError(f"Unknown section [{key}] in the choose file.{suggest(key, [*SCHEMA, *_TOP])}")
    for name in _REQUIRED:
        if name not in doc:
            raise BudgetInputError(f"The section [{name}] is missing from the choose file.")
    sec = {name: _section(doc, name) for name in SCHEMA}
    title = doc.get("title", "untitled choice")
    if not isinstance(title, str):
        raise field_error("title", "a text", title)
    _cross_checks(sec)
    cand = sec["candidates"]
    csv_path = Path(cand["cameras_csv"])
    if base is not None and not csv_path.is_absolute():
        csv_path = base / csv_path
    lenses = _lenses(cand)
    cameras = read_cameras_csv(csv_path)
    _check_size(len(cameras.name), lenses, sec["search"])
    return ChooseSpec(title=title, scene=sec["scene"], target=sec["target"], light=sec["light"],
                      locator=sec["locator"], pivot=sec["pivot"], measurement=sec["measurement"],
                      motion=sec["motion"], goal=sec["goal"], pixel_model=sec["pixel_model"],
                      cameras=cameras, lenses=lenses, raw=doc, search=sec["search"])


def _check_size(n_cameras: int, lenses: LensList, search: dict) -> None:
    """Refuse, before the search allocates, more candidates or evaluations than the limits."""
    n = n_cameras * (1 if lenses.auto else len(lenses.focal_length_mm))
    if n > MAX_CANDIDATES:
        raise BudgetInputError(f"The choose file asks for {n:,} camera × lens candidates; at most "
                               f"{MAX_CANDIDATES:,} are searched: give fewer cameras or lenses.")
    settings = (len(search.get("f_numbers") or (1,)) * len(search.get("exposures_ms") or (1,))
                * (search.get("distance_steps", 12) + 4))
    if n * settings > MAX_EVALUATIONS:
        raise BudgetInputError(f"The search would evaluate {n:,} candidates at {settings:,} settings each; at most "
                               f"{MAX_EVALUATIONS:,} evaluations are made: give fewer f_numbers, exposures_ms or "
                               "distance_steps in [search], or fewer candidates.")


def _cross_checks(sec: dict) -> None:
    s, t, g, m, pv = sec["scene"], sec["target"], sec["goal"], sec["measurement"], sec["pivot"]
    if s["working_distance_max_mm"] < s["working_distance_min_mm"]:
        raise field_error("working_distance_max_mm", f"a number >= working_distance_min_mm "
                          f"({s['working_distance_min_mm']:g})", s["working_distance_max_mm"], "[scene]")
    if 2 * s["pointer_radius_mm"] > s["dial_diameter_mm"] + 1e-12:
        raise field_error("dial_diameter_mm", f"a number >= twice pointer_radius_mm ({2 * s['pointer_radius_mm']:g})",
                          s["dial_diameter_mm"], "[scene]")
    if t["shape"] == "disk" and t["diameter_mm"] <= 0:
        raise field_error("diameter_mm", "a number > 0 for a disk target", t["diameter_mm"], "[target]")
    if "angle_U_deg" not in g and "gain_U_pct" not in g:
        raise BudgetInputError("[goal] needs 'angle_U_deg' (the angle's expanded uncertainty, deg) and/or "
                               "'gain_U_pct' (the gain's, % of the gain).")
    has_angles, has_sweep = "angles_deg" in m, "set_points_v" in m
    if has_angles == has_sweep:
        raise BudgetInputError("[measurement] must give exactly one of 'angles_deg' (readings relative to the zero "
                               "image) or 'set_points_v' with 'nominal_gain_deg_per_v' (a sweep).")
    if has_sweep and "nominal_gain_deg_per_v" not in m:
        raise BudgetInputError("The 'nominal_gain_deg_per_v' field of [measurement] is missing; a sweep needs it, "
                               "a non-zero finite number.")
    if "gain_U_pct" in g and not has_sweep:
        raise BudgetInputError("[goal] gives 'gain_U_pct' but [measurement] has no sweep: give 'set_points_v' and "
                               "'nominal_gain_deg_per_v'.")
    n_read = len(m["angles_deg"]) if has_angles else len(m["set_points_v"])
    if pv["method"] == "readings" and n_read < 2:
        raise BudgetInputError("[pivot] method = 'readings' fits a circle through the zero image and the readings: "
                               f"it needs at least 2 readings. Got {n_read}.")
    pm = sec["pixel_model"]
    if pm is not None and pm["pixels_max"] <= pm["pixels_min"]:
        raise field_error("pixels_max", f"an integer > pixels_min ({pm['pixels_min']})", pm["pixels_max"],
                          "[pixel_model]")


def load_choose(path: str | Path) -> ChooseSpec:
    """Read and validate a ``choose`` file.

    Raises
    ------
    BudgetInputError
        A missing or unreadable file, malformed TOML, or any invalid field (one line).
    """
    return parse_choose(read_toml(path, "choose file"), base=Path(path).parent)
