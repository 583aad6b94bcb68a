"""What the physics of a rig says in words, whatever the numbers: the effects its model carries as
known offsets, and the warnings every report of its budget repeats."""

from __future__ import annotations

from budget.rig.description import RigDescription

__all__ = ["bias_causes", "rig_warnings"]


def bias_causes(rig: RigDescription) -> tuple[str, ...]:
    """Effects the model carries as known offsets rather than zero-mean errors."""
    out = []
    if rig.motion.state == "moving":
        if rig.motion.timestamp == "start":
            out.append("start-of-exposure timestamps")
        if rig.camera.shutter == "rolling":
            out.append("rolling-shutter row delay")
    if rig.geometry.tilt_deg:
        out.append("the measured camera tilt")
    if rig.source is not None and rig.source.load_resistance_ohm and rig.source.output_impedance_ohm:
        out.append("the source's output impedance into the load")
    return tuple(out)


def rig_warnings(rig: RigDescription, locator_notes: tuple[str, ...], evaluated: bool = False) -> list[str]:
    """What the physics says about this rig, whatever the numbers (``per_reading`` only in design mode)."""
    out = list(locator_notes)
    g = rig.geometry
    if g.tilt_bound_deg is None and g.tilt_deg is None:  # the omission that matters most, also among the notes
        out.append("No camera tilt is given ([geometry] tilt_bound_deg, or tilt_deg with tilt_u_deg): the budget has "
                   "no camera-tilt term, often its largest component, and is optimistic by it.")
    if rig.frames.per_reading > 1 and rig.locator.method in ("integer", "centroid") and not evaluated:
        what = "pixel quantization" if rig.locator.method == "integer" else "pixel-locking"
        out.append(
            f"Averaging {rig.frames.per_reading} frames divides the centroid noise by "
            f"√{rig.frames.per_reading} but leaves {what} unchanged: a static target keeps its "
            "sub-pixel phase in every frame."
        )
    if rig.motion.state == "moving" and rig.motion.timestamp == "start":
        b = rig.motion.rate_deg_per_s * 0.5 * rig.camera.exposure_ms * 1e-3
        out.append(
            f"Start-of-exposure timestamps: the image shows the mid-exposure angle, a bias of "
            f"ω·t_e/2 = {b:+.3g}° in every moving reading; stamp the middle of the exposure or correct it."
        )
    return out
