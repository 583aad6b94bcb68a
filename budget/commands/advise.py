"""``thetabudget advise``: what to change in a rig, and by how much, to meet its [goal]."""

from __future__ import annotations

import argparse
import sys

from budget.commands.common import dumps, make_rng, seed_of

__all__ = ["execute"]


def _costs(path) -> dict[str, float]:
    """Costs of changes: a TOML file of ``"section.key" = cost`` lines."""
    from budget.errors import field_error
    from budget.inputs.schema import read_toml

    doc = read_toml(path, "costs file")
    out = {}
    for key, value in doc.items():
        if "." not in key or isinstance(value, bool) or not isinstance(value, int | float) or value <= 0:
            raise field_error(key, "a \"section.key\" of the rig file with a cost > 0", value, "the costs file")
        out[key] = float(value)
    return out


def execute(args: argparse.Namespace) -> int:
    from budget.advice.advise import advise
    from budget.advice.targets import run_p
    from budget.inputs.rig_file import load_rig
    from budget.inputs.schema import read_toml
    from budget.report.advice import advice_to_dict, render_advice

    rig = load_rig(args.file)  # validates the file (one-line errors) before any work
    costs = _costs(args.costs) if args.costs is not None else None
    seed = args.seed if args.seed is not None else seed_of(make_rng(None))
    result = advise(read_toml(args.file), base=args.file.parent, p=run_p(None, rig), rng=lambda: make_rng(seed),
                    trials=args.trials, costs=costs, seed=seed)
    if args.json:
        print(dumps(advice_to_dict(result, str(args.file))))
    else:
        sys.stdout.write(render_advice(result))
    return 0
