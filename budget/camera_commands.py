"""The camera sub-commands: ``choose``, ``verify-locator`` and ``frames``.

Input errors raise :class:`BudgetInputError`; :mod:`budget.cli` maps them to exit 2 and
nothing is written. Existing output files are never replaced without ``--force``.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError, field_error

__all__ = ["cmd_choose", "cmd_verify_locator", "cmd_frames", "parse_roi"]


def _refuse_existing(path: Path | None, force: bool, option: str) -> None:
    if path is None:
        return
    if path.exists() and not force:
        raise BudgetInputError(f"The {option} file '{path}' exists; pass --force to replace it.")
    if not path.parent.is_dir():
        raise BudgetInputError(f"The folder of the {option} file '{path}' does not exist.")


def _dumps(obj: dict) -> str:
    return json.dumps(obj, indent=2, allow_nan=False, ensure_ascii=False)


def cmd_choose(args: argparse.Namespace) -> int:
    """Rank candidate cameras and lenses for a rig; optional workbook and plot."""
    from budget.camera.choice_config import load_choose
    from budget.camera.choice_output import choice_to_dict, render_choice, write_choice_plot, write_choice_xlsx
    from budget.camera.choice_rank import choose

    _refuse_existing(args.xlsx, args.force, "--xlsx")
    plot_file = None
    if args.plots is not None:
        if args.plots.exists() and not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        plot_file = args.plots / "choice_U_vs_pixels.png"
        if plot_file.exists() and not args.force:
            raise BudgetInputError(f"The plot file '{plot_file}' exists; pass --force to replace it.")
        if not args.plots.parent.is_dir():
            raise BudgetInputError(f"The folder of the --plots path '{args.plots}' does not exist.")
    result = choose(load_choose(args.file))
    if args.json:
        print(_dumps(choice_to_dict(result, str(args.file))))
    else:
        sys.stdout.write(render_choice(result))
    written = []
    if args.xlsx is not None:
        written.append(write_choice_xlsx(result, args.xlsx))
    if args.plots is not None:
        args.plots.mkdir(exist_ok=True)
        written.append(write_choice_plot(result, args.plots))
    if not args.json:
        for p in written:
            print(f"wrote {p}")
    return 0


def cmd_verify_locator(args: argparse.Namespace) -> int:
    """Render synthetic targets for a rig and test its locator entries."""
    from budget.camera.verify import verify_locator
    from budget.config import load_rig

    rig = load_rig(args.file)
    seq = np.random.SeedSequence(args.seed)
    rng = np.random.default_rng(seq)
    seed = args.seed if args.seed is not None else str(seq.entropy)
    res = verify_locator(rig, renders=args.renders, rng=rng, seed=seed)
    if args.json:
        print(_dumps(res.as_dict()))
        return 0
    print(f"{args.file}: {rig.title}")
    print(f"locator '{res.method}', {res.renders} renders, seed {seed}; spot σ {res.sigma_px_rendered:.3g} px")
    print(f"  {'figure':<28}{'budget':>12}{'empirical':>12}{'std. error':>12}")
    rows = [("noise per frame (px)", res.noise_px_model, res.noise_px_empirical, res.noise_px_se),
            ("locking amplitude (px)", res.locking_px_model, res.locking_px_empirical, res.locking_px_se),
            ("total sd per axis (px)", res.sd_px_model, res.sd_px_empirical, math.nan)]
    for name, a, b, c in rows:
        print(f"  {name:<28}{a:>12.4g}{b:>12.4g}{'' if math.isnan(c) else format(c, '.2g'):>12}")
    print(f"  mean error (px): {res.bias_px_empirical:+.3g}")
    for line in res.verdict:
        print(line)
    return 0


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


def cmd_frames(args: argparse.Namespace) -> int:
    """Locate a still target in frames; print the Type A summary; write the per-frame CSV."""
    from budget.camera.frames import locate_frames, write_frames_csv

    roi = parse_roi(args.roi)
    pos = args.position
    if not pos or any(c in pos for c in ',"\r\n') or pos.startswith(("=", "+", "-", "@", "\t")):
        raise field_error("--position", "a non-empty label without commas, quotes or line breaks, not starting "
                          "with =, +, -, @ or a tab (a spreadsheet would run it as a formula)", pos)
    _refuse_existing(args.out, args.force, "--out")
    for p in args.paths:
        if not Path(p).is_file():
            raise BudgetInputError(f"The frame file '{p}' does not exist.")
    res = locate_frames(args.paths, roi=roi, method=args.method)
    if args.out is not None:
        write_frames_csv(res, args.out, position_id=pos, overwrite=args.force)
    if args.json:
        out = res.as_dict()
        out = {k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in out.items()}
        out.update(position=pos, csv=str(args.out) if args.out else None)
        print(_dumps(out))
        return 0
    print(f"{res.n} frames, locator '{res.method}', ROI {res.roi}")
    print(f"  mean      x = {res.mean_x_px:.4f} px, y = {res.mean_y_px:.4f} px")
    print(f"  sd        x = {res.sd_x_px:.4f} px, y = {res.sd_y_px:.4f} px (n − 1 = {res.n - 1} degrees of freedom)")
    print(f"  sd / √n   x = {res.se_x_px:.4f} px, y = {res.se_y_px:.4f} px (JCGM 100 4.2.3)")
    print(f"  {res.drift_verdict}")
    if args.out is not None:
        print(f"wrote {args.out} (position {pos})")
    return 0
