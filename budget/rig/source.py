"""The voltage source of a sweep, and the meter that may read it back, as input quantities.

The one home of the source's error terms: the budget samples them (:func:`source_inputs`) and
open-loop prediction takes the per-set-point part from the same quantities
(:func:`per_point_u_v`).
"""

from __future__ import annotations

import math

from budget.propagation import InputQuantity, Normal, Rectangular
from budget.rig.description import RigDescription

__all__ = ["SOURCE", "READBACK", "PER_POINT", "SHARED", "source_inputs", "per_point_u_v", "shared_names"]

SOURCE = "input voltage source"
READBACK = "voltage readback"
PER_POINT = ("lsb_mv", "inl_mv", "vnoise_mv")
"""Name stems of the source's per-set-point inputs (``{stem}_P{j}``), in mV."""
SHARED = ("source_gain_pct", "source_offset_mv", "source_zout_ohm", "dmm_gain_pct", "dmm_offset_mv")
"""Inputs shared by every set point: with the fit's x values as commanded (or read on the meter) they
are the same when the calibration is used later, so a prediction cancels them."""


def _q(dist, unit: str, group: str, source: str) -> InputQuantity:
    return InputQuantity(distribution=dist, unit=unit, group=group, source=source)


def source_inputs(rig: RigDescription) -> dict[str, InputQuantity]:
    """The voltage source's (and read-back meter's) input quantities of a sweep.

    Notes
    -----
    Gain and offset are rectangular and shared by every set point; the DAC step (±LSB/2),
    INL (±INL·LSB, rectangular) and output noise (normal) are drawn per set point and named
    ``…_Pj`` (JCGM 100 4.3.7 for the rectangular bounds). With a read-back meter the fit's x
    values are the meter's readings: ±% of reading and ±counts shared, its resolution per point.
    """
    out: dict[str, InputQuantity] = {}
    s = rig.source
    assert s is not None and rig.sweep is not None
    src = s.source
    if s.gain_error_pct > 0:
        out["source_gain_pct"] = _q(Rectangular(-s.gain_error_pct, s.gain_error_pct), "%", SOURCE,
                                    src + "; gain error, shared by all set points")
    if s.offset_mv > 0:
        out["source_offset_mv"] = _q(Rectangular(-s.offset_mv, s.offset_mv), "mV", SOURCE,
                                     src + "; offset, shared by all set points")
    if s.load_resistance_ohm is not None and s.output_impedance_ohm > 0:
        out["source_zout_ohm"] = _q(Rectangular(0.0, s.output_impedance_ohm), "Ω", SOURCE,
                                    src + "; output impedance into the load (divider)")
    lsb_mv = s.lsb_v * 1e3
    for i in range(len(rig.sweep.set_points_v)):
        lab = f"P{i + 1}"
        out[f"lsb_mv_{lab}"] = _q(Rectangular(-lsb_mv / 2, lsb_mv / 2), "mV", SOURCE,
                                  src + f"; {s.bits}-bit step over {s.span_v:g} V")
        if s.inl_lsb > 0:
            out[f"inl_mv_{lab}"] = _q(Rectangular(-s.inl_lsb * lsb_mv, s.inl_lsb * lsb_mv), "mV", SOURCE,
                                      src + "; integral non-linearity")
        if s.noise_uv > 0:
            out[f"vnoise_mv_{lab}"] = _q(Normal(0.0, s.noise_uv * 1e-3), "mV", SOURCE, src + "; output noise")
        if s.readback == "dmm":
            res_mv = s.dmm_resolution_v * 1e3
            out[f"dmm_res_mv_{lab}"] = _q(Rectangular(-res_mv / 2, res_mv / 2), "mV", READBACK,
                                          src + "; meter resolution")
    if s.readback == "dmm":
        if s.dmm_pct_reading > 0:
            out["dmm_gain_pct"] = _q(Rectangular(-s.dmm_pct_reading, s.dmm_pct_reading), "%", READBACK,
                                     src + "; meter ±% of reading, shared")
        if s.dmm_counts > 0:
            c = s.dmm_counts * s.dmm_resolution_v * 1e3
            out["dmm_offset_mv"] = _q(Rectangular(-c, c), "mV", READBACK, src + "; meter ±counts, shared")
    return out


def per_point_u_v(rig: RigDescription) -> float:
    """Standard uncertainty of one commanded voltage from the source's per-point terms, V.

    The root sum of squares of the standard uncertainties of the per-set-point inputs of
    :func:`source_inputs` (step, INL, noise) of the first set point; they are the same at every
    set point. The shared gain and offset are not in it: a calibration and its use share them.
    """
    if rig.source is None or rig.sweep is None:
        return 0.0
    q = source_inputs(rig)
    u_mv2 = sum(q[f"{stem}_P1"].distribution.u ** 2 for stem in PER_POINT if f"{stem}_P1" in q)
    return math.sqrt(u_mv2) * 1e-3


def shared_names(rig: RigDescription) -> tuple[str, ...]:
    """The inputs of :func:`source_inputs` that calibration and later use share (:data:`SHARED`) and that
    set the line from the fit's x to the pointer's voltage: the source's with ``readback = "commanded"``,
    the meter's with ``readback = "dmm"``."""
    if rig.source is None or rig.sweep is None:
        return ()
    own = ("dmm_",) if rig.source.readback == "dmm" else ("source_",)
    return tuple(n for n in source_inputs(rig) if n in SHARED and n.startswith(own))
