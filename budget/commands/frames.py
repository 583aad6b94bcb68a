"""``thetabudget frames``: locate a still target in many positions' frames and write one per-frame CSV."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from budget.commands.common import dumps
from budget.errors import BudgetInputError, field_error
from budget.report.safe_write import atomic_write, check_targets

__all__ = ["execute", "parse_roi", "DEFAULT_WINDOW_PX"]

DEFAULT_WINDOW_PX = 9
"""Window of ``frames`` without --roi and --window: the default of ``[locator] window_px``."""


def parse_roi(text: str) -> tuple[int, int, int, int]:
    """``"x,y,w,h"`` → four integers (x, y >= 0; w, h >= 3)."""
    parts = text.split(",")
    try:
        vals = tuple(int(p.strip()) for p in parts)
    except ValueError:
        vals = ()
    if len(vals) != 4 or vals[0] < 0 or vals[1] < 0 or vals[2] < 3 or vals[3] < 3:
        raise field_error("--roi", "four integers x,y,w,h with x, y >= 0 and w, h >= 3", text)
    return vals  # type: ignore[return-value]


def _positions(groups: list[list[str]] | None) -> list[tuple[str, list[str]]]:
    if not groups:
        raise field_error("--position", "at least one '--position LABEL IMAGE...' "
                          "(e.g. --position Z z1.png z2.png ...)", None)
    out = []
    for g in groups:
        label, files = g[0], g[1:]
        for p in files:
            if not Path(p).is_file():
                raise BudgetInputError(f"Position '{label}': the frame file '{p}' does not exist.")
        out.append((label, files))
    return out


def execute(args: argparse.Namespace) -> int:
    """Locate each position's frames; print the Type A summary; write the per-frame CSV."""
    from budget.imaging.frame_sets import frames_csv_text, locate_positions
    from budget.inputs.data_csv import sha256_of

    roi = parse_roi(args.roi) if args.roi is not None else None
    window = args.window if args.window is not None else (None if roi else DEFAULT_WINDOW_PX)
    if window is not None and (window < 3 or window % 2 == 0):
        raise field_error("--window", "an odd number of pixels >= 3 (your rig's [locator] window_px)", args.window)
    positions = _positions(args.position)
    if args.out is not None:
        check_targets([args.out], args.force)
    sets = locate_positions(positions, roi=roi, method=args.method, window_px=window)
    if args.out is not None:
        hashes = {p: sha256_of(p) for ps in sets for p in ps.result.paths}
        text = frames_csv_text(sets, hashes, args.out.parent)
        atomic_write(args.out, lambda tmp: tmp.write_text(text, encoding="utf-8"), force=args.force)
    if args.json:
        docs = []
        for ps in sets:
            d = ps.result.as_dict()
            d = {k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in d.items()}
            docs.append({"position": ps.label, **d})
        print(dumps({"positions": docs, "csv": str(args.out) if args.out else None,
                     "window_px": window, "roi": list(roi) if roi else None}))
        return 0
    if roi:
        where = f"ROI {roi}" + (f", window {window} px around the brightest pixel" if window else " as the window")
    else:
        where = f"target found in each position, window {window} px" + \
            (" (the default: give your rig's [locator] window_px)" if args.window is None else "")
    print(f"locator '{args.method}', {where}; image coordinates: x right, y down, px from the centre of the "
          "top-left pixel")
    for ps in sets:
        r = ps.result
        print(f"{ps.label}: {r.n} frames ({r.image_kind}), window at {r.roi}")
        print(f"  mean      x = {r.mean_x_px:.4f} px, y = {r.mean_y_px:.4f} px")
        print(f"  sd        x = {r.sd_x_px:.4f} px, y = {r.sd_y_px:.4f} px (n − 1 = {r.n - 1} degrees of freedom)")
        print(f"  sd / √n   x = {r.se_x_px:.4f} px, y = {r.se_y_px:.4f} px (JCGM 100 4.2.3)")
        print(f"  {r.drift_verdict}")
    if args.out is not None:
        print(f"wrote {args.out} ({len(sets)} positions, {sum(ps.result.n for ps in sets)} frames, "
              "each with its image file and SHA-256)")
    return 0
