"""``thetabudget run``: the full budget of a rig file by both methods, and its report files."""

from __future__ import annotations

import argparse
import sys

from budget.commands.common import make_rng, progress_bar, rig_inputs

__all__ = ["execute", "evaluate_rig_file", "load_inputs"]


def evaluate_rig_file(args: argparse.Namespace, quiet: bool, claim: bool = False, loaded=None):
    """Read the rig file (and its measured data), run the budget; return ``(rig, result)``.

    The result carries the file's goal verdicts and conformity decisions, and with ``claim`` its
    range claim (which runs the midpoints). ``loaded`` is ``(rig, data)`` when the caller has read
    them already (:func:`load_inputs`).
    """
    from budget.advice.targets import run_p, with_verdicts
    from budget.rig.budget import run_budget
    from budget.rig.evaluation import load_evaluation

    rig, data = loaded if loaded is not None else load_inputs(args.file)
    ev = load_evaluation(rig, data)
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


def load_inputs(path):
    """The rig file and the measured data it names (None in design mode), validated."""
    from budget.inputs.data_csv import read_rig_data
    from budget.inputs.rig_file import load_rig

    rig = load_rig(path)
    return rig, read_rig_data(rig)


def execute(args: argparse.Namespace) -> int:
    from budget.report.files import check_reports

    reports = dict(xlsx=args.xlsx, md=args.md, csv=args.csv, html=args.html, plots=args.plots)
    wanted = any(v is not None for v in reports.values())
    if wanted:  # the paths alone, before the inputs are read
        check_reports(**{**reports, "plots": None}, force=args.force, inputs=[args.file])
    rig, data = load_inputs(args.file)
    inputs = rig_inputs(args.file, rig, data)
    if wanted:  # every path, the plots' names and the inputs, before any work
        from budget.report.plots import plot_names

        n = len(rig.nominal_angles_deg)
        names = [f"P{i + 1}" for i in range(n)] + (["gain", "intercept"] if rig.sweep is not None else [])
        check_reports(**reports, plot_files=plot_names(names, sweep=rig.sweep is not None, n_angles=n),
                      force=args.force, inputs=inputs)
    _, result = evaluate_rig_file(args, quiet=args.quiet or args.json, claim=True, loaded=(rig, data))
    if args.json:
        from budget.report.jsonout import run_to_json

        text = run_to_json(result)
    else:
        from budget.commands.common import terminal_width
        from budget.report.console import render_run

        text = render_run(result, width=terminal_width(), detail=getattr(args, "detail", False))
    written = []
    if wanted:  # every file or none, before anything is printed
        from budget.report.files import write_reports

        written = write_reports(result, **reports, force=args.force, inputs=inputs)
    if args.json:
        print(text)
    else:
        sys.stdout.write(text)
        for p in written:
            print(f"wrote {p}")
    return 0
