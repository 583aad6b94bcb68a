"""``thetabudget check``: validate a rig file and list its input quantities, or validate a choose file."""

from __future__ import annotations

import argparse

__all__ = ["execute"]


def execute(args: argparse.Namespace) -> int:
    from budget.imaging.locator_model import locator_model
    from budget.inputs.data_csv import read_rig_data
    from budget.inputs.rig_file import load_rig
    from budget.inputs.schema import read_toml
    from budget.report.console import fmt, fmt_dof
    from budget.rig.arc import refuse_short_arc
    from budget.rig.components import build_inputs
    from budget.rig.evaluation import load_evaluation

    doc = read_toml(args.file)
    if "candidates" in doc or "scene" in doc:  # a choose file (its required sections)
        return _check_choose(args)
    rig = load_rig(args.file)
    ev = load_evaluation(rig, read_rig_data(rig))
    rig = ev.rig
    inputs, corr = build_inputs(rig, ev.type_a)
    refuse_short_arc(rig, inputs)  # what run, advise and predict would refuse
    lm = locator_model(rig)
    print(f"{args.file}: valid. {rig.title}")
    print(f"pointer radius {rig.radius_px:.1f} px, spot sigma {lm.sigma_px:.3g} px, "
          f"magnification {rig.magnification:.4g}, locator noise {lm.noise_px_per_frame:.3g} px per frame")
    print(f"{len(inputs)} input quantities, {len(corr)} correlated pairs:")
    print(f"  {'name':<22} {'component':<22} {'type':<4} {'distribution':<36} {'u':>10}  {'ν':>4}  source")
    for name, q in inputs.items():
        d = q.distribution
        print(f"  {name:<22} {q.group or name:<22} {q.evaluation:<4} {d.describe():<36} "
              f"{fmt(d.u):>7} {q.unit:<3} {fmt_dof(d.dof):>4}  {q.source}")
    if rig.assumptions:
        print("assumptions (values the tool supplied because the file left them out; an 'optimistic omission' "
              "is a component the budget lacks):")
        for a in rig.assumptions:
            print(f"  {a.field} = {a.value!r}: {a.reason}")
    if ev.data is not None:
        print(f"measured data: {len(ev.data.points)} located points from "
              f"{sum(f.kind == 'data' for f in ev.data.files)} data file(s) naming "
              f"{sum(f.kind == 'image' for f in ev.data.files)} image(s)")
        print(f"  {ev.data.scatter_check}")
    for note in (*rig.input_warnings, *lm.notes, *ev.warnings):
        print(f"! {note}")
    return 0


def _check_choose(args: argparse.Namespace) -> int:
    """Validate a choose file and its cameras list; say what ``choose`` will search."""
    from budget.inputs.choose_file import load_choose

    spec = load_choose(args.file)
    lenses = "automatic focal length" if spec.lenses.auto else f"{len(spec.lenses.focal_length_mm)} lenses"
    n = len(spec.cameras.name) * (1 if spec.lenses.auto else len(spec.lenses.focal_length_mm))
    sc, se = spec.scene, spec.search
    print(f"{args.file}: valid choose file. {spec.title}")
    print(f"{len(spec.cameras.name)} cameras ({spec.cameras.path}) × {lenses} = {n} candidates")
    print(f"working distance searched in [{sc['working_distance_min_mm']:g}, {sc['working_distance_max_mm']:g}] mm "
          f"({se['distance_steps']} steps)" + (f"; f-numbers {list(se['f_numbers'])}" if se.get("f_numbers") else "")
          + (f"; exposures {list(se['exposures_ms'])} ms" if se.get("exposures_ms") else ""))
    goal = ", ".join(f"{k} = {v:g}" for k, v in spec.goal.items() if k != "source")
    print(f"goal: {goal}")
    return 0
