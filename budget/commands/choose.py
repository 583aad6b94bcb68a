"""``thetabudget choose``: rank candidate cameras and lenses for a rig before buying one."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from budget.commands.common import dumps, make_rng, seed_of, terminal_width
from budget.errors import BudgetInputError
from budget.report.safe_write import check_targets

__all__ = ["execute"]

PLOT_NAME = "choice_U_vs_pixels.png"


def execute(args: argparse.Namespace) -> int:
    """Rank candidate cameras and lenses for a rig; optional rig-model check, rig file, workbook and plot."""
    from budget.choice.rank import choose
    from budget.inputs.choose_file import load_choose
    from budget.report.choice import SHOWN, choice_to_dict, render_choice, write_choice_plot, write_choice_xlsx
    from budget.report.safe_write import FileSet

    plot = args.plots / PLOT_NAME if args.plots is not None else None
    _check_outputs(args, plot, [args.file])  # the paths alone, before the inputs are read
    spec = load_choose(args.file)
    _check_outputs(args, plot, [args.file, Path(spec.cameras.path)])
    result = choose(spec)
    confirmation = seed = None
    if args.verify:
        from budget.choice.confirm import confirm_top

        rng = make_rng(args.seed)
        seed = seed_of(rng)
        confirmation = confirm_top(result, rng=rng, trials=args.trials)
    limit = None if args.all else SHOWN
    if args.json:
        text = dumps(choice_to_dict(result, str(args.file), limit, confirmation, seed)) + "\n"
    else:
        text = render_choice(result, limit, width=terminal_width(None), confirmation=confirmation)
    written = []
    with FileSet(args.force) as files:  # every file or none, before anything is printed
        if args.rig_out is not None:
            files.add(args.rig_out, _rig_writer(result, args.file))
        if args.xlsx is not None:
            files.add(args.xlsx, lambda tmp: write_choice_xlsx(result, tmp, _provenance(args, spec, seed)))
        if plot is not None:
            files.make_folder(args.plots)
            files.add(plot, lambda tmp: write_choice_plot(result, tmp))
        written = files.commit()
    sys.stdout.write(text)
    if not args.json:
        for p in written:
            print(f"wrote {p}")
    return 0


def _provenance(args: argparse.Namespace, spec, seed) -> list[tuple[str, str]]:
    """(label, value) rows naming the inputs of a choice and their SHA-256 (and the --verify seed)."""
    from budget.inputs.data_csv import sha256_of

    rows = [("input file", str(args.file)), ("input file SHA-256", sha256_of(args.file)),
            ("camera list", str(spec.cameras.path)), ("camera list SHA-256", sha256_of(spec.cameras.path))]
    if seed is not None:
        rows.append(("seed of the --verify run", str(seed)))
    return rows


def _check_outputs(args: argparse.Namespace, plot: Path | None, inputs: list[Path]) -> None:
    """Every output path (and the --plots folder), refused before any work; never an input."""
    targets = [p for p in (args.xlsx, args.rig_out) if p is not None]
    if args.plots is not None:
        if args.plots.is_symlink() and not args.plots.exists():
            raise BudgetInputError(f"The --plots path '{args.plots}' is a symbolic link to a missing folder.")
        if args.plots.exists() and not args.plots.is_dir():
            raise BudgetInputError(f"The --plots path '{args.plots}' exists and is not a folder.")
        targets.append(plot if args.plots.is_dir() else args.plots)
    check_targets(targets, args.force, inputs=inputs)


def _rig_writer(result, source):
    """The top pick's equivalent rig file: ``thetabudget run`` on it gives the rig model's budget."""
    from budget.choice.equivalent import equivalent_rig, rig_to_doc
    from budget.inputs.toml_text import dumps_toml

    i = int(result.order[0])
    text = dumps_toml(rig_to_doc(equivalent_rig(result.spec, result.cand, result.pred, i)),
                      header=f"thetabudget rig file written by `choose {source}`: its top pick,\n"
                             f"{result.spec.cameras.name[result.camera_index[i]]} with {result.lens_label[i]}, "
                             "at the chosen setting.\nRun it with `thetabudget run` for the full budget.")

    def write(tmp):
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)

    return write
