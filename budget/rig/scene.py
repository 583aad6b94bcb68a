"""Synthetic frames of a whole rig: every located point rendered where the rig's geometry images it.

A new user can try the path from frames to a budget without a camera: the true image position of
the zero image, each reading, each pivot-arc point and a pivot mark comes from the rig's own
projection (:func:`budget.rig.geometry.image_points`: the stated tilt, pivot offset, target height,
no random errors), and each frame is drawn with the rig's target, light and camera by
:func:`budget.imaging.render.render_target` (shot noise, read noise, full well, ADC). Every
frame holds one target (the point it is named after), in image coordinates (x right, y down).
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np

from budget.errors import BudgetInputError
from budget.imaging.locator_model import spot_sigma_px
from budget.imaging.render import render_target
from budget.rig.description import RigDescription, point_labels
from budget.rig.geometry import dial_angles_deg, image_points

__all__ = ["true_points", "render_frames", "check_renderable"]


def true_points(rig: RigDescription, reading_deg=None) -> dict[str, tuple[float, float]]:
    """Image coordinates of every located point, without random errors: ``{label: (x, y)}``.

    ``reading_deg`` (one per reading) replaces the nominal readings, e.g. a curved response.
    """
    readings = None if reading_deg is None else np.asarray(reading_deg, dtype=float)[:, None]
    if readings is not None and readings.shape[0] != len(rig.nominal_angles_deg):
        raise BudgetInputError(f"reading_deg must give {len(rig.nominal_angles_deg)} readings; "
                               f"got {readings.shape[0]}.")
    x, y = image_points(rig, {}, 1, dial_angles_deg(rig), reading_deg=readings)  # (n_points, 1)
    return {lab: (float(x[j, 0]), float(y[j, 0])) for j, lab in enumerate(point_labels(rig))}


def _target(rig: RigDescription) -> dict:
    """The rendered target: a Gaussian spot of the rig's σ, or its disk blurred by the spot's σ."""
    t = rig.target
    if t.shape != "disk":
        return {"kind": "gaussian", "sigma_px": spot_sigma_px(rig)}
    d_px = t.diameter_mm * rig.magnification / (rig.camera.pitch_um * 1e-3)
    blur = t.sigma_px if t.sigma_px is not None else math.sqrt(max(spot_sigma_px(rig) ** 2 - d_px**2 / 16.0, 1e-4))
    return {"kind": "disk", "sigma_px": blur, "diameter_px": d_px}


def check_renderable(rig: RigDescription, frames: int) -> None:
    """Refuse what :func:`render_frames` cannot draw, before anything is written."""
    if rig.motion.state == "moving":
        raise BudgetInputError("render draws a still pointer; [motion] state = 'moving' is not rendered.")
    if frames < 4:
        raise BudgetInputError(f"render needs at least 4 frames per position (the Type A rule of run); got {frames}.")
    if rig.camera.bit_depth > 16:
        raise BudgetInputError(f"render writes 8- or 16-bit frames; the rig's bit_depth is {rig.camera.bit_depth}.")


def render_frames(rig: RigDescription, *, rng: np.random.Generator, frames: int,
                  reading_deg=None) -> Iterator[tuple[str, int, np.ndarray, tuple[float, float]]]:
    """Yield ``(label, frame number from 1, image, true (x, y))`` for every located point's frames.

    Images are (pixels_y, pixels_x) arrays of whole ADU (uint8 for bit depths up to 8, else
    uint16), one frame at a time so that memory stays one frame.

    Raises
    ------
    BudgetInputError
        What :func:`check_renderable` refuses.
    """
    check_renderable(rig, frames)
    cam, t = rig.camera, rig.target
    spot = _target(rig)
    dtype = np.uint8 if cam.bit_depth <= 8 else np.uint16
    for lab, xy in true_points(rig, reading_deg).items():
        for k in range(frames):
            img = render_target(shape=(cam.pixels_y, cam.pixels_x), centre_xy=xy, signal_e=t.signal_e,
                                background_e=t.background_e, read_noise_e=cam.read_noise_e,
                                full_well_e=cam.full_well_e, bit_depth=cam.bit_depth, rng=rng, **spot)
            yield lab, k + 1, img.images.astype(dtype), xy
