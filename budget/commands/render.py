"""``thetabudget render``: synthetic frames of a rig for its zero image and positions (no camera needed)."""

from __future__ import annotations

import argparse
import shlex
from pathlib import Path

from budget.commands.common import make_rng, seed_of
from budget.errors import BudgetInputError
from budget.report.safe_write import atomic_write, check_targets

__all__ = ["execute", "FRAMES_METHOD"]

FRAMES_METHOD = {"centroid": "com", "fit": "gauss"}
"""``frames --method`` that matches a rig's ``[locator] method`` (the integer locator has none)."""


def _save_png(image, path: Path) -> None:
    from PIL import Image

    def write(tmp: Path) -> None:
        Image.fromarray(image).save(tmp, format="PNG")

    atomic_write(path, write, force=False)


def execute(args: argparse.Namespace) -> int:
    """Render every located point's frames as PNG, the ground truth as CSV; print the next command."""
    from budget.inputs.rig_file import load_rig
    from budget.rig.description import point_labels
    from budget.rig.scene import check_renderable, render_frames, true_points

    rig = load_rig(args.file)
    n = args.frames if args.frames is not None else rig.frames.per_reading
    if n < 4:
        raise BudgetInputError(f"render needs at least 4 frames per position (the Type A rule of run); the rig's "
                               f"[frames] per_reading is {n}: give --frames 4 or more.")
    check_renderable(rig, n)
    outdir: Path = args.outdir
    if outdir.exists() and not outdir.is_dir():
        raise BudgetInputError(f"The output path '{outdir}' exists and is not a folder.")
    if not outdir.parent.exists():
        raise BudgetInputError(f"The folder '{outdir.parent}' does not exist.")
    labels = point_labels(rig)
    names = [outdir / f"{lab}_{k:02d}.png" for lab in labels for k in range(1, n + 1)] + [outdir / "truth.csv"]
    check_targets([p for p in names if outdir.exists()], False)
    rng = make_rng(args.seed)
    outdir.mkdir(exist_ok=True)
    for lab, k, image, _ in render_frames(rig, rng=rng, frames=n):
        _save_png(image, outdir / f"{lab}_{k:02d}.png")
    truth = ["position,x_px,y_px,reading_deg"]
    readings = dict(zip((f"P{i + 1}" for i in range(len(rig.nominal_angles_deg))), rig.nominal_angles_deg,
                        strict=True))
    for lab, (x, y) in true_points(rig).items():
        truth.append(f"{lab},{x:.6f},{y:.6f},{readings[lab]:.9g}" if lab in readings else f"{lab},{x:.6f},{y:.6f},")
    atomic_write(outdir / "truth.csv", lambda tmp: tmp.write_text("\n".join(truth) + "\n", encoding="utf-8"),
                 force=False)
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
