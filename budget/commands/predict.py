"""``thetabudget predict``: the voltage for a wanted angle, or the angle for a voltage, from a sweep."""

from __future__ import annotations

import argparse

from budget.commands.common import dumps, make_rng
from budget.errors import BudgetInputError, field_error

__all__ = ["execute"]


def execute(args: argparse.Namespace) -> int:
    from budget.commands.run import evaluate_rig_file
    from budget.inputs.rig_file import load_rig
    from budget.rig.prediction import predict_from_sweep

    rig = load_rig(args.file)
    if rig.sweep is None:  # answer before spending seconds on the budget
        raise BudgetInputError(f"predict needs a [sweep] rig file; '{args.file}' has [positions].")
    if args.volts is not None:  # the source cannot be commanded outside its own range
        lo, hi = rig.source.range_v
        if not lo <= args.volts <= hi:
            raise field_error("--volts", f"a voltage within the source's range [{lo:g}, {hi:g}] V "
                              f"({rig.source.polarity}, span {rig.source.span_v:g} V)", args.volts)
    rig, result = evaluate_rig_file(args, quiet=True)
    pred = predict_from_sweep(rig, result, angle_deg=args.angle, volts=args.volts,
                              rng=make_rng(result.seed, stream=1))
    if args.json:
        print(dumps(pred))
        return 0
    what = "voltage to command" if args.angle is not None else "expected angle"
    print(f"{what}: {pred['statement']}")
    print(f"  Monte Carlo, {pred['trials']} trials, probabilistically symmetric interval (JCGM 101 7.7); "
          f"linear: u = {pred['u_linear']:.3g} {pred['unit']}")
    for w in pred["warnings"]:
        print(f"  ! {w}")
    return 0
