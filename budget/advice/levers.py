"""The changes a user can make to a rig, as fields of the rig file and the values to try.

A :class:`Lever` names one field in the rig file's own ``section.key`` form, what changing it means
in words, and the values to try ordered from the smallest change to the largest. Monotonic levers
(a smaller tilt bound never hurts) are searched for the least change that meets a target; the
others (a focal length, a window size) are tried value by value, nearest first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from budget.imaging import spot
from budget.imaging.locator_model import spot_sigma_px
from budget.rig.description import RigDescription

__all__ = ["Lever", "levers", "nice_values", "FOCAL_LENGTHS_MM", "READBACK_METER"]

FOCAL_LENGTHS_MM = (6.0, 8.0, 12.0, 16.0, 25.0, 35.0, 50.0, 75.0, 100.0)
"""Common machine-vision focal lengths (common practice)."""

READBACK_METER = {"source.dmm_pct_reading": 0.0035, "source.dmm_counts": 5.0, "source.dmm_resolution_v": 1e-5}
"""A typical 6½-digit bench meter on its 10 V range (common practice, value from memory): the figures
a read-back change assumes; the advice says so and asks for the user's own."""


@dataclass(frozen=True)
class Lever:
    """One change a user can make: a field, its present value, and the values to try."""

    field: str  # "section.key" as in the rig file
    what: str
    current: object
    values: tuple  # smallest change first
    monotonic: bool = True
    also: dict = field(default_factory=dict)  # other fields set with it ("section.key": value)
    note: str = ""


def nice_values(start: float, stop: float) -> tuple[float, ...]:
    """Two-significant-digit values strictly between ``start`` and ``stop``, ordered from ``start``.

    Notes
    -----
    The values a user would write in a file (1.0, 1.1, ... 9.9 times a power of ten), so that the
    least change is stated to two significant digits (the rounding of JCGM 100 7.2.6) [common practice].
    """
    lo, hi = sorted((start, stop))
    if hi <= 0:
        return ()
    lo = max(lo, hi * 1e-6)
    out = []
    for e in range(math.floor(math.log10(lo)) - 1, math.floor(math.log10(hi)) + 1):
        for m in range(10, 100):
            v = float(f"{m}e{e - 1}")
            if lo < v < hi and not math.isclose(v, start, rel_tol=1e-9):
                out.append(v)
    vals = sorted(set(out), reverse=start > stop)
    return tuple(vals)


def _ints(start: int, stop: int, step: int = 1) -> tuple[int, ...]:
    return tuple(range(start + step, stop + 1, step)) if stop > start else ()


def _down(rig: RigDescription, section: str, key: str, what: str, factor: float = 100.0, note: str = "") -> list:
    cur = getattr(getattr(rig, section), key)
    if cur is None or cur <= 0:
        return []
    return [Lever(f"{section}.{key}", what, cur, nice_values(cur, cur / factor), note=note)]


def _up(rig: RigDescription, section: str, key: str, what: str, cap: float, note: str = "") -> list:
    cur = getattr(getattr(rig, section), key)
    return [Lever(f"{section}.{key}", what, cur, nice_values(cur, cap), note=note)] if cap > cur else []


def _signal_cap(rig: RigDescription) -> float:
    """Signal per frame at which the brightest pixel reaches the full well (a spot centred on a pixel)."""
    frac = float(spot.peak_fraction(spot_sigma_px(rig)))
    return max((rig.camera.full_well_e - rig.target.background_e) / frac, rig.target.signal_e)


def _geometry(rig: RigDescription) -> list[Lever]:
    g, out = rig.geometry, []
    if g.tilt_bound_deg is not None:
        out += _down(rig, "geometry", "tilt_bound_deg", "camera tilt bound: a better fixture or alignment")
    if g.tilt_deg is not None:
        out += _down(rig, "geometry", "tilt_u_deg", "uncertainty of the measured camera tilt")
    out += _down(rig, "geometry", "target_height_u_mm", "uncertainty of the target height (parallax)")
    if g.remounted:
        out += _down(rig, "geometry", "roll_bound_deg", "camera roll bound between zero image and readings")
    d, f = g.working_distance_mm, rig.lens.focal_length_mm
    dists = [v for v in np.geomspace(max(1.2 * f, 0.3 * d), 3 * d, 25) if not math.isclose(v, d, rel_tol=0.02)]
    dists = [float(f"{v:.2g}") for v in sorted(dists, key=lambda v: abs(math.log(v / d)))]
    out.append(Lever("geometry.working_distance_mm", "working distance (camera closer or farther)", d,
                     tuple(dict.fromkeys(dists)), monotonic=False))
    return out


def _lens(rig: RigDescription) -> list[Lever]:
    lens, out = rig.lens, []
    focal = sorted((v for v in FOCAL_LENGTHS_MM if not math.isclose(v, lens.focal_length_mm)),
                   key=lambda v: abs(math.log(v / lens.focal_length_mm)))
    out.append(Lever("lens.focal_length_mm", "lens focal length (a longer lens fills more of the sensor)",
                     lens.focal_length_mm, tuple(focal), monotonic=False))
    if lens.distortion == "corrected":
        out += _down(rig, "lens", "residual_rms_px", "calibration residual: a better lens calibration", 20.0)
    else:
        out += _down(rig, "lens", "distortion_edge_pct", "uncorrected lens distortion: a lower-distortion lens")
    return out


def _locator(rig: RigDescription) -> list[Lever]:
    out = []
    loc, cur = rig.locator, rig.locator.window_px
    if loc.method != "integer":
        wins = sorted((w for w in range(3, max(33, cur + 12), 2) if w != cur), key=lambda w: abs(w - cur))
        out.append(Lever("locator.window_px", "locator window size", cur, tuple(wins), monotonic=False))
    methods = [m for m in ("fit", "centroid", "integer") if m != loc.method]
    out.append(Lever("locator.method", "locator method (a least-squares fit has no pixel-locking bias)",
                     loc.method, tuple(methods), monotonic=False))
    frames = rig.frames.per_reading
    out.append(Lever("frames.per_reading", "frames averaged per reading", frames,
                     _ints(frames, min(100_000, max(64, 16 * frames)))))
    out += _up(rig, "target", "signal_e", "signal per frame: longer exposure or more light", _signal_cap(rig),
               note="capped where the brightest pixel reaches the full well")
    out += _down(rig, "target", "background_e", "background per pixel: darker surround or a filter")
    return out


def _pivot(rig: RigDescription) -> list[Lever]:
    pv, out = rig.pivot, []
    if pv.method == "arc":
        out += _up(rig, "pivot", "arc_half_angle_deg", "pivot arc: a longer arc", 180.0)
        out.append(Lever("pivot.arc_points", "pivot arc: more points", pv.arc_points,
                         _ints(pv.arc_points, min(1000, 8 * pv.arc_points))))
    if pv.method == "mark":
        out += _down(rig, "pivot", "mark_offset_bound_mm", "pivot mark offset bound: a better-placed mark")
    return out


def _timing(rig: RigDescription) -> list[Lever]:
    m, out = rig.motion, []
    if m.state != "moving":
        return out
    out += _down(rig, "motion", "jitter_ms", "timestamp jitter")
    if m.timestamp == "start":
        out.append(Lever("motion.timestamp", "stamp the middle of the exposure", "start", ("middle",),
                         monotonic=False))
    if rig.camera.shutter == "rolling":
        out += _down(rig, "camera", "row_time_us", "rolling-shutter row time (a faster readout)")
        out.append(Lever("camera.shutter", "a global-shutter camera", "rolling", ("global",), monotonic=False))
    return out


def _sweep(rig: RigDescription) -> list[Lever]:
    if rig.sweep is None or rig.source is None:
        return []
    sp, s = rig.sweep.set_points_v, rig.source
    lo, hi = min(sp), max(sp)
    n = len(sp)
    more = tuple(tuple(float(f"{v:.6g}") for v in np.linspace(lo, hi, k)) for k in range(n + 1, 4 * n + 1))
    out = [Lever("sweep.set_points_v", "more sweep points over the same range", list(sp), more)]
    top = s.range_v[1]
    if top > hi:
        wider = tuple(tuple(float(f"{v:.6g}") for v in np.linspace(lo, h, n)) for h in nice_values(hi, top) + (top,))
        out.append(Lever("sweep.set_points_v", "a wider sweep (same number of points)", list(sp), wider))
    for key, what in (("gain_error_pct", "source gain error: a better source"),
                      ("offset_mv", "source offset: a better source"), ("inl_lsb", "source non-linearity"),
                      ("noise_uv", "source output noise"), ("output_impedance_ohm", "source output impedance")):
        out += _down(rig, "source", key, what)
    out.append(Lever("source.bits", "source resolution (DAC bits)", s.bits, _ints(s.bits, 24)))
    if s.readback == "commanded":
        out.append(Lever("source.readback", "read the voltage back with a bench meter", "commanded", ("dmm",),
                         monotonic=False, also=dict(READBACK_METER),
                         note="assumes a typical 6½-digit meter (value from memory): give your meter's figures"))
    return out


def levers(rig: RigDescription) -> list[Lever]:
    """Every change this rig allows, each with its values to try (empty ladders dropped)."""
    found = _geometry(rig) + _pivot(rig) + _locator(rig) + _lens(rig) + _timing(rig) + _sweep(rig)
    return [lv for lv in found if lv.values]
