"""``thetabudget new``: write a commented starter rig file (never replaces a file)."""

from __future__ import annotations

import argparse
from pathlib import Path

from budget.errors import BudgetInputError

__all__ = ["execute", "STARTERS", "KINDS"]

STARTERS = {
    "gauge": "gauge_static.toml",
    "sweep": "gain_sweep.toml",
    "moving": "moving_pointer.toml",
    "bench": "bench_sweep.toml",
}
"""Kinds of starter rig file and the template each one copies."""
KINDS = {**STARTERS, "choose": "choose_cameras.toml"}
"""Every kind ``new`` writes: the rig starters and the choose starter."""
COMPANIONS = {"choose": ("cameras.csv",)}
"""Files a starter needs beside it (written into the same folder, never replacing one)."""


def execute(args: argparse.Namespace) -> int:
    from budget.report.safe_write import FileSet, check_targets
    from budget.resources import template_text

    dest: Path = args.path
    files = [(dest, KINDS[args.kind])] + [(dest.parent / name, name) for name in COMPANIONS.get(args.kind, ())]
    for path, _ in files:
        if path.is_file():
            raise BudgetInputError(f"The output file '{path}' exists; new never replaces a file.")
    check_targets([path for path, _ in files], force=False)
    with FileSet(force=False) as out:  # the starter and its companions, all or none
        for path, name in files:
            text = template_text(name)
            out.add(path, lambda tmp, text=text: tmp.write_text(text, encoding="utf-8"))
        written = out.commit()
    for path in written:
        print(f"wrote {path} ({args.kind} starter; edit every value marked with its unit)")
    return 0
