"""``thetabudget choose``: rank candidate cameras and lenses for a rig before buying one."""

from __future__ import annotations

import argparse
import sys

from budget.commands.common import dumps, make_rng, seed_of
from budget.errors import BudgetInputError
from budget.report.safe_write import check_targets

__all__ = ["execute"]

PLOT_NAME = "choice_U_vs_pixels.png"


def execute(args: argparse.Namespace) -> int:
    """Rank candidate cameras and lenses for a rig; optional rig-model check, rig file, workbook and plot."""
    from budget.choice.rank import choose
    from budget.inputs.choose_file import load_choose
    from budget.report.choice import SHOWN, choice_to_dict, render_choice, write_choice_plot, write_choice_xlsx

    targets = [p for p in (args.xlsx, args.rig_out) if p is not None]
    if args.plots is not None:
        if args.plots.exists() and not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        if not args.plots.parent.is_dir():
            raise BudgetInputError(f"The folder of the --plots path '{args.plots}' does not exist.")
        if args.plots.is_dir():
            targets.append(args.plots / PLOT_NAME)
    check_targets(targets, args.force)
    result = choose(load_choose(args.file))
    confirmation = seed = None
    if args.verify:
        from budget.choice.confirm import confirm_top

        rng = make_rng(args.seed)
        seed = seed_of(rng)
        confirmation = confirm_top(result, rng=rng, trials=args.trials)
    limit = None if args.all else SHOWN
    if args.json:
        print(dumps(choice_to_dict(result, str(args.file), limit, confirmation, seed)))
    else:
        sys.stdout.write(render_choice(result, limit, confirmation=confirmation))
    written = []
    if args.rig_out is not None:
        written.append(_write_rig(result, args.rig_out, args.force, args.file))
    if args.xlsx is not None:
        written.append(write_choice_xlsx(result, args.xlsx, force=args.force))
    if args.plots is not None:
        args.plots.mkdir(exist_ok=True)
        written.append(write_choice_plot(result, args.plots / PLOT_NAME, force=args.force))
    if not args.json:
        for p in written:
            print(f"wrote {p}")
    return 0


def _write_rig(result, path, force: bool, source):
    """The top pick's equivalent rig file: ``thetabudget run`` on it gives the rig model's budget."""
    from budget.choice.equivalent import equivalent_rig, rig_to_doc
    from budget.inputs.toml_text import dumps_toml
    from budget.report.safe_write import atomic_write

    i = int(result.order[0])
    text = dumps_toml(rig_to_doc(equivalent_rig(result.spec, result.cand, result.pred, i)),
                      header=f"thetabudget rig file written by `choose {source}`: its top pick,\n"
                             f"{result.spec.cameras.name[result.camera_index[i]]} with {result.lens_label[i]}, "
                             "at the chosen setting.\nRun it with `thetabudget run` for the full budget.")

    def write(tmp):
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)

    return atomic_write(path, write, force=force)
