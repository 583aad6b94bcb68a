"""What each sub-command does. Input errors raise BudgetInputError; :mod:`budget.cli` maps them to exit 2."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError, field_error

TEMPLATE_DIR = Path(__file__).resolve().parent.parent / "templates"
"""Starter files live in the checkout (the project is installed editable, as the README says)."""


def _rng(seed: int | None) -> np.random.Generator:
    """The one place a generator is made from a seed; fresh entropy is recorded when none is given."""
    return np.random.default_rng(np.random.SeedSequence(seed))


def _refuse_existing(paths: list[Path | None], force: bool) -> None:
    for p in paths:
        if p is not None and p.exists() and not force:
            raise BudgetInputError(f"The output file '{p}' exists; pass --force to replace it.")


def _progress(enabled: bool):
    """A progress callback on stderr, or None (not a terminal, --quiet or --json)."""
    if not enabled or not sys.stderr.isatty():
        return None, None
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn

    prog = Progress(TextColumn("Monte Carlo"), BarColumn(), TextColumn("{task.completed:,.0f} trials"),
                    console=Console(stderr=True), transient=True)
    task = prog.add_task("mc", total=None)
    return prog, (lambda done: prog.update(task, completed=done))


def _run(args: argparse.Namespace, quiet: bool):
    from budget.camera.analysis import run_budget
    from budget.camera.evaluation import load_evaluation
    from budget.config import load_rig

    ev = load_evaluation(load_rig(args.file))
    prog, cb = _progress(not quiet)
    kwargs = dict(rng=_rng(args.seed), p=args.p, trials=args.trials, input_path=args.file,
                  type_a=ev.type_a, measured_deg=ev.measured_deg)
    if prog is not None:
        with prog:
            return ev.rig, run_budget(ev.rig, progress=cb, **kwargs)
    return ev.rig, run_budget(ev.rig, **kwargs)


def cmd_run(args: argparse.Namespace) -> int:
    outputs = [args.xlsx, args.md, args.csv]
    _refuse_existing(outputs, args.force)
    if args.plots is not None and args.plots.exists():
        if not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        from budget.config import load_rig
        from budget.report.plots import plot_names

        rig = load_rig(args.file)
        n = len(rig.nominal_angles_deg)
        names = [f"P{i + 1}" for i in range(n)] + (["gain", "intercept"] if rig.sweep is not None else [])
        _refuse_existing([args.plots / f for f in plot_names(names, sweep=rig.sweep is not None, n_angles=n)],
                         args.force)
    _, result = _run(args, quiet=args.quiet or args.json)
    if args.json:
        from budget.report.jsonout import run_to_json

        print(run_to_json(result))
    else:
        from budget.report.console import render_run

        sys.stdout.write(render_run(result))
    if any(p is not None for p in (*outputs, args.plots)):
        from budget.report.files import write_reports

        written = write_reports(result, xlsx=args.xlsx, md=args.md, csv=args.csv, plots=args.plots,
                                force=args.force)
        if not args.json:
            for p in written:
                print(f"wrote {p}")
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    from budget.camera.components import build_inputs, locator_model
    from budget.camera.evaluation import load_evaluation
    from budget.config import load_rig
    from budget.report.console import fmt, fmt_dof

    ev = load_evaluation(load_rig(args.file))
    rig = ev.rig
    inputs, corr = build_inputs(rig, ev.type_a)
    lm = locator_model(rig)
    print(f"{args.file}: valid. {rig.title}")
    print(f"pointer radius {rig.radius_px:.1f} px, spot sigma {rig.spot_sigma_px:.3g} px, "
          f"magnification {rig.magnification:.4g}, locator noise {lm.noise_px_per_frame:.3g} px per frame")
    print(f"{len(inputs)} input quantities, {len(corr)} correlated pairs:")
    print(f"  {'name':<22} {'component':<22} {'type':<4} {'distribution':<36} {'u':>10}  {'ν':>4}  source")
    for name, q in inputs.items():
        d = q.distribution
        print(f"  {name:<22} {q.group or name:<22} {q.evaluation:<4} {d.describe():<36} "
              f"{fmt(d.u):>7} {q.unit:<3} {fmt_dof(d.dof):>4}  {q.source}")
    for note in lm.notes:
        print(f"! {note}")
    return 0


def cmd_new(args: argparse.Namespace) -> int:
    from budget.cli import TEMPLATES

    src = TEMPLATE_DIR / TEMPLATES[args.kind]
    dest: Path = args.path
    if dest.exists():
        raise BudgetInputError(f"The output file '{dest}' exists; new never replaces a file.")
    if not dest.parent.exists():
        raise BudgetInputError(f"The folder '{dest.parent}' does not exist.")
    with open(dest, "x", encoding="utf-8") as fh:
        fh.write(src.read_text(encoding="utf-8"))
    print(f"wrote {dest} ({args.kind} starter; edit every value marked with its unit)")
    return 0


def cmd_selftest(args: argparse.Namespace) -> int:
    from rich.console import Console
    from rich.table import Table

    from budget.selftest import load_cases, run_cases

    rows = run_cases(load_cases(), rng=np.random.default_rng(np.random.SeedSequence(20081)))
    table = Table(title="thetabudget selftest: published reference cases (ISO/IEC 17025 7.11.2 evidence)")
    for col in ("case", "source", "quantity", "published", "computed", "tolerance", "result"):
        table.add_column(col)
    for r in rows:
        table.add_row(r.case_id, r.source, r.quantity, _cell(r.published), _cell(r.computed),
                      _cell(r.tolerance), "pass" if r.passed else "FAIL")
    Console(width=160).print(table)
    failed = sum(not r.passed for r in rows)
    print(f"{len(rows) - failed} passed, {failed} failed")
    return 1 if failed else 0


def _cell(v: object) -> str:
    if isinstance(v, bool) or not isinstance(v, float | int):
        return str(v)
    return f"{v:.6g}"


def cmd_predict(args: argparse.Namespace) -> int:
    from budget.camera.prediction import predict
    from budget.config import load_rig

    rig = load_rig(args.file)
    if rig.sweep is None:  # answer before spending seconds on the budget
        raise BudgetInputError(f"predict needs a [sweep] rig file; '{args.file}' has [positions].")
    if args.volts is not None:  # the source cannot be commanded outside its own range
        span, polarity = rig.source.span_v, rig.source.polarity
        lo, hi = (-span / 2, span / 2) if polarity == "bipolar" else (0.0, span)
        if not lo <= args.volts <= hi:
            raise field_error("--volts", f"a voltage within the source's range [{lo:g}, {hi:g}] V "
                              f"({polarity}, span {span:g} V)", args.volts)
    rig, result = _run(args, quiet=True)
    pred = predict(rig, result, angle_deg=args.angle, volts=args.volts)
    if args.json:
        print(json.dumps(pred, indent=2, allow_nan=False, ensure_ascii=False))
        return 0
    what = "voltage to command" if args.angle is not None else "expected angle"
    print(f"{what}: {pred['statement']}")
    print(f"  u = {pred['u']:.3g} {pred['unit']} (Monte Carlo, {pred['trials']} trials; "
          f"linear: {pred['u_linear']:.3g} {pred['unit']})")
    for w in pred["warnings"]:
        print(f"  ! {w}")
    return 0
