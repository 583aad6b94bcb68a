"""``thetabudget choose``: rank candidate cameras and lenses for a rig before buying one."""

from __future__ import annotations

import argparse
import sys

from budget.commands.common import dumps
from budget.errors import BudgetInputError
from budget.report.safe_write import check_targets

__all__ = ["execute"]

PLOT_NAME = "choice_U_vs_pixels.png"


def execute(args: argparse.Namespace) -> int:
    """Rank candidate cameras and lenses for a rig; optional workbook and plot."""
    from budget.choice.rank import choose
    from budget.inputs.choose_file import load_choose
    from budget.report.choice import choice_to_dict, render_choice, write_choice_plot, write_choice_xlsx

    targets = [args.xlsx] if args.xlsx is not None else []
    if args.plots is not None:
        if args.plots.exists() and not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        if not args.plots.parent.is_dir():
            raise BudgetInputError(f"The folder of the --plots path '{args.plots}' does not exist.")
        if args.plots.is_dir():
            targets.append(args.plots / PLOT_NAME)
    check_targets(targets, args.force)
    result = choose(load_choose(args.file))
    if args.json:
        print(dumps(choice_to_dict(result, str(args.file))))
    else:
        sys.stdout.write(render_choice(result))
    written = []
    if args.xlsx is not None:
        written.append(write_choice_xlsx(result, args.xlsx, force=args.force))
    if args.plots is not None:
        args.plots.mkdir(exist_ok=True)
        written.append(write_choice_plot(result, args.plots / PLOT_NAME, force=args.force))
    if not args.json:
        for p in written:
            print(f"wrote {p}")
    return 0
