"""``thetabudget frames``: locate a still target in real frames and write the per-frame CSV."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from budget.commands.common import dumps
from budget.errors import BudgetInputError, field_error
from budget.report.safe_write import atomic_write, check_targets

__all__ = ["execute", "parse_roi"]


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


def execute(args: argparse.Namespace) -> int:
    """Locate a still target in frames; print the Type A summary; write the per-frame CSV."""
    from budget.imaging.frames import check_position_label, frames_csv_text, locate_frames

    roi = parse_roi(args.roi)
    pos = check_position_label(args.position, "--position")
    if args.out is not None:
        check_targets([args.out], args.force)
    for p in args.paths:
        if not Path(p).is_file():
            raise BudgetInputError(f"The frame file '{p}' does not exist.")
    res = locate_frames(args.paths, roi=roi, method=args.method)
    if args.out is not None:
        text = frames_csv_text(res, position_id=pos)
        atomic_write(args.out, lambda tmp: tmp.write_text(text, encoding="utf-8"), force=args.force)
    if args.json:
        out = res.as_dict()
        out = {k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in out.items()}
        out.update(position=pos, csv=str(args.out) if args.out else None)
        print(dumps(out))
        return 0
    print(f"{res.n} frames, locator '{res.method}', ROI {res.roi}")
    print(f"  mean      x = {res.mean_x_px:.4f} px, y = {res.mean_y_px:.4f} px")
    print(f"  sd        x = {res.sd_x_px:.4f} px, y = {res.sd_y_px:.4f} px (n − 1 = {res.n - 1} degrees of freedom)")
    print(f"  sd / √n   x = {res.se_x_px:.4f} px, y = {res.se_y_px:.4f} px (JCGM 100 4.2.3)")
    print(f"  {res.drift_verdict}")
    if args.out is not None:
        print(f"wrote {args.out} (position {pos})")
    return 0
