"""``thetabudget render``: synthetic frames of a rig for its zero image and positions (no camera needed)."""

from __future__ import annotations

import argparse
import shlex
from pathlib import Path

from budget.commands.common import make_rng, rig_inputs, seed_of
from budget.errors import BudgetInputError
from budget.report.safe_write import check_targets

__all__ = ["execute", "check_render_size", "FRAMES_METHOD", "MAX_FRAME_PIXELS", "MAX_RENDER_FRAMES",
           "MAX_RENDER_PIXELS"]

FRAMES_METHOD = {"centroid": "com", "fit": "gauss"}
"""``frames --method`` that matches a rig's ``[locator] method`` (the integer locator has none)."""
MAX_FRAME_PIXELS = 25_000_000
"""Largest frame render draws (pixels_x × pixels_y): a few arrays of this size are held while it draws."""
MAX_RENDER_FRAMES = 1000
"""Most frames render draws per position."""
MAX_RENDER_PIXELS = 2_000_000_000
"""Most pixels one render writes (all frames): about 4 GB of 16-bit PNG before compression."""


def check_render_size(pixels_x: int, pixels_y: int, per_position: int, positions: int) -> None:
    """Refuse, before anything is drawn, a frame or a set of frames larger than the limits."""
    if per_position > MAX_RENDER_FRAMES:
        raise BudgetInputError(f"render draws at most {MAX_RENDER_FRAMES} frames per position; got {per_position} "
                               "(--frames, or the rig's [frames] per_reading).")
    frames = per_position * positions
    if pixels_x * pixels_y > MAX_FRAME_PIXELS:
        raise BudgetInputError(f"render draws frames of at most {MAX_FRAME_PIXELS:,} pixels; the rig's camera has "
                               f"{pixels_x} x {pixels_y} = {pixels_x * pixels_y:,}.")
    if pixels_x * pixels_y * frames > MAX_RENDER_PIXELS:
        raise BudgetInputError(f"render writes at most {MAX_RENDER_PIXELS:,} pixels in one call; {frames} frames of "
                               f"{pixels_x} x {pixels_y} are {pixels_x * pixels_y * frames:,}: give fewer --frames.")


def _check_folder(outdir: Path, inputs) -> None:
    """The output folder: an existing folder, or a new one whose parent exists and is writable."""
    if outdir.is_symlink() and not outdir.exists():
        raise BudgetInputError(f"The output folder '{outdir}' is a symbolic link to a missing folder.")
    if outdir.exists() and not outdir.is_dir():
        raise BudgetInputError(f"The output path '{outdir}' exists and is not a folder.")
    if not outdir.is_dir():
        check_targets([outdir], False, inputs=inputs)


def _png_writer(image):
    def write(tmp: Path) -> None:
        from PIL import Image

        Image.fromarray(image).save(tmp, format="PNG")

    return write


def execute(args: argparse.Namespace) -> int:
    """Render every located point's frames as PNG, the ground truth as CSV; print the next command."""
    from budget.inputs.rig_file import load_rig
    from budget.report.safe_write import FileSet
    from budget.rig.description import point_labels
    from budget.rig.scene import check_renderable, render_frames, true_points

    outdir: Path = args.outdir
    _check_folder(outdir, [args.file])  # the path alone, before the rig file is read
    rig = load_rig(args.file)
    n = args.frames if args.frames is not None else rig.frames.per_reading
    if n < 4:
        raise BudgetInputError(f"render needs at least 4 frames per position (the Type A rule of run); the rig's "
                               f"[frames] per_reading is {n}: give --frames 4 or more.")
    check_renderable(rig, n)
    labels = point_labels(rig)
    check_render_size(rig.camera.pixels_x, rig.camera.pixels_y, n, len(labels))
    inputs = rig_inputs(args.file, rig)
    _check_folder(outdir, inputs)
    names = [outdir / f"{lab}_{k:02d}.png" for lab in labels for k in range(1, n + 1)] + [outdir / "truth.csv"]
    if outdir.is_dir():
        check_targets(names, False, inputs=inputs)
    rng = make_rng(args.seed)
    with FileSet(force=False) as files:  # every frame and truth.csv, or (on any error or signal) none
        files.make_folder(outdir)
        for lab, k, image, _ in render_frames(rig, rng=rng, frames=n):
            files.add(outdir / f"{lab}_{k:02d}.png", _png_writer(image))
        truth = ["position,x_px,y_px,reading_deg"]
        readings = dict(zip((f"P{i + 1}" for i in range(len(rig.nominal_angles_deg))), rig.nominal_angles_deg,
                            strict=True))
        for lab, (x, y) in true_points(rig).items():
            reading = f"{readings[lab]:.9g}" if lab in readings else ""
            truth.append(f"{lab},{x:.6f},{y:.6f},{reading}")
        files.add(outdir / "truth.csv", lambda tmp: tmp.write_text("\n".join(truth) + "\n", encoding="utf-8"))
        files.commit()
    print(f"wrote {len(labels) * n} frames ({n} per position, {rig.camera.pixels_x} x {rig.camera.pixels_y} px, "
          f"{8 if rig.camera.bit_depth <= 8 else 16}-bit PNG) and truth.csv into {outdir} (seed {seed_of(rng)}); "
          "synthetic frames, invented data")
    method = FRAMES_METHOD.get(rig.locator.method)
    parts = ["thetabudget", "frames", "--out", str(outdir / "data.csv"), "--window", str(rig.locator.window_px)]
    if method:
        parts += ["--method", method]
    cmd = shlex.join(parts)
    for lab in labels:
        cmd += f" --position {lab} {shlex.quote(str(outdir))}/{lab}_*.png"
    print(f"next: {cmd}")
    return 0
