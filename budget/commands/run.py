"""``thetabudget run``: the full budget of a rig file by both methods, and its report files."""

from __future__ import annotations

import argparse
import sys

from budget.commands.common import make_rng, progress_bar
from budget.errors import BudgetInputError
from budget.report.safe_write import check_targets

__all__ = ["execute", "evaluate_rig_file"]


def evaluate_rig_file(args: argparse.Namespace, quiet: bool, claim: bool = False):
    """Read the rig file (and its measured data), run the budget; return ``(rig, result)``.

    The result carries the file's goal verdicts and conformity decisions, and with ``claim`` its
    range claim (which runs the midpoints).
    """
    from budget.advice.targets import run_p, with_verdicts
    from budget.inputs.data_csv import read_rig_data
    from budget.inputs.rig_file import load_rig
    from budget.rig.budget import run_budget
    from budget.rig.evaluation import load_evaluation

    rig = load_rig(args.file)
    ev = load_evaluation(rig, read_rig_data(rig))
    prog, cb = progress_bar(not quiet)
    rng = make_rng(args.seed)
    kwargs = dict(rng=rng, p=run_p(args.p, rig), trials=args.trials, input_path=args.file, evaluation=ev)
    if prog is not None:
        with prog:
            result = run_budget(ev.rig, progress=cb, **kwargs)
    else:
        result = run_budget(ev.rig, **kwargs)
    result = with_verdicts(rig, result)
    if claim and rig.range_claim is not None:
        from dataclasses import replace

        from budget.advice.range_claim import claim_for_range

        result = replace(result, range_claim=claim_for_range(ev.rig, result, rng=rng, trials=args.trials))
    return ev.rig, result


def execute(args: argparse.Namespace) -> int:
    outputs = [p for p in (args.xlsx, args.md, args.csv) if p is not None]
    check_targets(outputs, args.force)
    if args.plots is not None and args.plots.exists():
        if not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        from budget.inputs.rig_file import load_rig
        from budget.report.plots import plot_names

        rig = load_rig(args.file)
        n = len(rig.nominal_angles_deg)
        names = [f"P{i + 1}" for i in range(n)] + (["gain", "intercept"] if rig.sweep is not None else [])
        check_targets([args.plots / f for f in plot_names(names, sweep=rig.sweep is not None, n_angles=n)],
                      args.force)
    _, result = evaluate_rig_file(args, quiet=args.quiet or args.json, claim=True)
    if args.json:
        from budget.report.jsonout import run_to_json

        print(run_to_json(result))
    else:
        from budget.report.console import render_run

        sys.stdout.write(render_run(result))
    if outputs or args.plots is not None:
        from budget.report.files import write_reports

        written = write_reports(result, xlsx=args.xlsx, md=args.md, csv=args.csv, plots=args.plots,
                                force=args.force)
        if not args.json:
            for p in written:
                print(f"wrote {p}")
    return 0
