"""``thetabudget verify-locator``: render synthetic targets for a rig and test its locator entries."""

from __future__ import annotations

import argparse
import math

from budget.commands.common import dumps, make_rng, seed_of

__all__ = ["execute"]


def execute(args: argparse.Namespace) -> int:
    from budget.imaging.verify import verify_locator
    from budget.inputs.rig_file import load_rig

    rig = load_rig(args.file)
    rng = make_rng(args.seed)
    seed = args.seed if args.seed is not None else str(seed_of(rng))
    res = verify_locator(rig, renders=args.renders, rng=rng, seed=seed)
    if args.json:
        print(dumps(res.as_dict()))
        return 0
    print(f"{args.file}: {rig.title}")
    print(f"locator '{res.method}', {res.renders} readings of {res.frames} frame(s) ({res.averaged} averaged), "
          f"seed {seed}; spot σ {res.sigma_px_rendered:.3g} px"
          + (f", streak {res.streak_px:.3g} px" if res.streak_px else ""))
    print(f"  {'figure':<34}{'budget':>12}{'rendered':>12}{'std. error':>12}")
    rows = [("u of a located reading (px)", res.sd_px_model, res.sd_px_empirical, res.sd_px_se),
            ("noise per frame (px)", res.noise_px_model, res.noise_px_empirical, res.noise_px_se),
            ("fixed by the phase, rms (px)", res.locking_px_model, res.locking_px_empirical, res.locking_px_se)]
    for name, a, b, c in rows:
        shown = "" if math.isnan(b) else format(b, ".4g")
        print(f"  {name:<34}{a:>12.4g}{shown:>12}{'' if math.isnan(c) else format(c, '.2g'):>12}")
    print(f"  mean error (px): {res.bias_px_empirical:+.3g}")
    for line in res.verdict:
        print(line)
    return 0
