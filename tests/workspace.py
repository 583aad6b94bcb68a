"""A small folder of inputs for every sub-command, built in seconds (tests of the promise use it).

``rig.toml`` is the gauge starter with ``[data]`` naming ``positions.csv`` (nominal positions with a
little scatter, each frame naming an image ``frames/*.png``); ``bench.toml`` the bench starter (design
mode); ``choose.toml`` and ``cameras.csv`` the choose starter; ``frames/`` holds 4 synthetic frames of a
bright spot for each of two positions (32 x 32 px, 16-bit). Invented data, for tests only.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from budget.inputs.rig_file import load_rig
from budget.rig.description import point_labels
from budget.rig.geometry import nominal_image_points
from tests.paths import TEMPLATES

FRAME_LABELS = ("Z", "P1")


def spot_frames(folder: Path, labels=FRAME_LABELS, n: int = 4, size: int = 32, seed: int = 3) -> dict[str, list[Path]]:
    """``n`` 16-bit PNG frames of a Gaussian spot per label, the spot a little off-centre, with noise."""
    from PIL import Image

    rng = np.random.default_rng(seed)
    folder.mkdir(exist_ok=True)
    yy, xx = np.mgrid[0:size, 0:size]
    out: dict[str, list[Path]] = {}
    for j, lab in enumerate(labels):
        cx, cy = size / 2 + 2 * j + 0.3, size / 2 - j - 0.2
        for k in range(1, n + 1):
            img = 100 + 2000 * np.exp(-((xx - cx) ** 2 + (yy - cy) ** 2) / (2 * 1.5 ** 2))
            img = np.clip(img + rng.normal(scale=3.0, size=img.shape), 0, 65535).astype(np.uint16)
            path = folder / f"{lab}_{k:02d}.png"
            Image.fromarray(img).save(path)
            out.setdefault(lab, []).append(path)
    return out


def make_workspace(folder: Path) -> dict[str, Path]:
    """Write every input file into ``folder``; return their paths by role."""
    frames = spot_frames(folder / "frames")
    rig = folder / "rig.toml"
    src = (TEMPLATES / "gauge_static.toml").read_text(encoding="utf-8")
    rig.write_text(src + '\n[data]\nreadings_csv = "positions.csv"\n', encoding="utf-8")
    design = load_rig(TEMPLATES / "gauge_static.toml")
    x, y = nominal_image_points(design)
    rng = np.random.default_rng(8)
    with open(folder / "positions.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["position", "frame", "x_px", "y_px", "image", "sha256"])
        for j, lab in enumerate(point_labels(design)):
            for k in range(5):
                image = f"frames/{FRAME_LABELS[0]}_0{k % 4 + 1}.png" if j == 0 else ""
                w.writerow([lab, k + 1, x[j] + rng.normal(scale=0.02), y[j] + rng.normal(scale=0.02), image, ""])
    bench = folder / "bench.toml"
    bench.write_text((TEMPLATES / "bench_sweep.toml").read_text(encoding="utf-8"), encoding="utf-8")
    choose = folder / "choose.toml"
    choose.write_text((TEMPLATES / "choose_cameras.toml").read_text(encoding="utf-8"), encoding="utf-8")
    (folder / "cameras.csv").write_text((TEMPLATES / "cameras.csv").read_text(encoding="utf-8"), encoding="utf-8")
    return {"rig": rig, "data": folder / "positions.csv", "image": frames["Z"][0], "bench": bench,
            "choose": choose, "cameras": folder / "cameras.csv", "frames_Z": frames["Z"], "frames_P1": frames["P1"]}


def frames_args(ws: dict[str, Path]) -> list[str]:
    """``--position Z ... --position P1 ...`` for the workspace's frames (with a window that fits them)."""
    return ["--window", "9", "--position", "Z", *map(str, ws["frames_Z"]),
            "--position", "P1", *map(str, ws["frames_P1"])]
