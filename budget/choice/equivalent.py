"""The rig a candidate amounts to: a rig description for the virtual rig, and as a rig-file document.

``choose`` checks its surrogate against the rig model on this rig, and ``choose --rig-out`` writes it
so that ``run`` gives the same budget: :func:`rig_to_doc` writes every field, so reading the document
back gives an equal description (no value is supplied by default).
"""

from __future__ import annotations

import dataclasses

from budget.choice.model import Candidates, Prediction
from budget.inputs.choose_file import ChooseSpec
from budget.rig import description as d

__all__ = ["equivalent_rig", "rig_to_doc", "SECTIONS"]

SECTIONS = ("camera", "lens", "geometry", "target", "locator", "pivot", "frames", "motion", "source",
            "positions", "sweep", "goal")
"""Rig-file sections of an equivalent rig, in the order written."""


def _goal(spec: ChooseSpec) -> d.Goal:
    g = spec.goal
    return d.Goal(angle_U_deg=g.get("angle_U_deg"), gain_U_pct=g.get("gain_U_pct"), p=g["p"],
                  source=g.get("source", "choose file"))


def equivalent_rig(spec: ChooseSpec, choice_cand: Candidates, pred: Prediction, i: int) -> d.RigDescription:
    """The rig description that candidate ``i`` amounts to at its chosen setting.

    The spot is given as its blur σ in px (diffraction and the target's own spot; a disk keeps its
    diameter); signal and background are those of the chosen exposure; a rolling shutter gets the row
    time 1/(max frame rate·rows) (common practice); a sweep gets a 32-bit source without errors (the
    choice predicts the camera's part); the goal is the choose file's.
    """
    c, p = choice_cand, pred
    sc, lo, mo, tg = spec.scene, spec.locator, spec.motion, spec.target
    moving = mo["rate_deg_per_s"] != 0
    rolling = bool(c.rolling[i]) and moving
    row_us = 1e6 / (float(c.max_frame_rate_hz[i]) * float(c.pixels_y[i])) if rolling else 0.0
    cam = d.Camera(pixels_x=int(c.pixels_x[i]), pixels_y=int(c.pixels_y[i]), pitch_um=float(c.pitch_um[i]),
                   bit_depth=int(c.bit_depth[i]), read_noise_e=float(c.read_noise_e[i]),
                   full_well_e=float(c.full_well_e[i]), shutter="rolling" if rolling else "global",
                   row_time_us=row_us, frame_rate_hz=float(c.max_frame_rate_hz[i]),
                   exposure_ms=float(p.exposure_ms[i]), source="choose candidate")
    lens = d.Lens(focal_length_mm=float(p.focal_length_mm[i]), f_number=float(c.f_number[i]),
                  residual_rms_px=max(lo["distortion_residual_rms_px"], 1e-12),
                  wavelength_nm=tg["wavelength_nm"], source="choose candidate")
    tilt = sc["tilt_bound_deg"] if sc["tilt_bound_deg"] > 0 else None
    geom = d.Geometry(working_distance_mm=float(p.working_distance_mm[i]), pointer_radius_mm=sc["pointer_radius_mm"],
                      pivot_offset_x_mm=sc["pivot_offset_x_mm"], pivot_offset_y_mm=sc["pivot_offset_y_mm"],
                      zero_direction_deg=sc["zero_direction_deg"], tilt_bound_deg=tilt, source=sc["source"])
    if tg["shape"] == "disk":
        target = d.Target(shape="disk", diameter_mm=tg["diameter_mm"], sigma_px=float(p.sigma_diffraction_px[i]),
                          signal_e=float(p.signal_e[i]), background_e=float(p.background_e[i]), source=tg["source"])
    else:
        target = d.Target(shape="spot", sigma_px=float(p.sigma_px[i]), signal_e=float(p.signal_e[i]),
                          background_e=float(p.background_e[i]), source=tg["source"])
    locator = d.Locator(method=lo["method"], window_px=int(p.window_px[i]), window_at=lo["window_at"],
                        source=lo["source"])
    pv = spec.pivot
    pivot = d.Pivot(method=pv["method"], arc_half_angle_deg=pv["arc_half_angle_deg"], arc_points=pv["arc_points"],
                    mark_offset_bound_mm=pv["mark_offset_bound_mm"], source=pv["source"])
    motion = d.Motion(state="moving" if moving else "static", rate_deg_per_s=mo["rate_deg_per_s"],
                      jitter_ms=mo["jitter_ms"] if moving else 0.0, source=mo["source"])
    meas = spec.measurement
    positions = sweep = source = None
    if "angles_deg" in meas:
        positions = d.Positions(tuple(meas["angles_deg"]))
    else:
        sweep = d.Sweep(tuple(meas["set_points_v"]), meas["nominal_gain_deg_per_v"])
        span = 2 * max(abs(v) for v in meas["set_points_v"])
        source = d.VoltageSource(span_v=span, bits=32, source="ideal source (choose predicts the camera's part)")
    frames = d.Frames(per_reading=lo["frames_per_reading"], averaged=lo["frames_averaged"], source=lo["source"])
    return d.RigDescription(title=spec.title, camera=cam, lens=lens, geometry=geom, target=target, locator=locator,
                            pivot=pivot, frames=frames,
                            motion=motion, source=source, positions=positions, sweep=sweep, goal=_goal(spec))


def rig_to_doc(rig: d.RigDescription) -> dict:
    """Every field of the rig as a rig-file document (None fields left out), for ``dumps_toml``."""
    doc: dict = {"title": rig.title}
    for name in SECTIONS:
        section = getattr(rig, name)
        if section is None:
            continue
        table = {}
        for f in dataclasses.fields(section):
            v = getattr(section, f.name)
            if v is not None:
                table[f.name] = list(v) if isinstance(v, tuple) else v
        doc[name] = table
    return doc
