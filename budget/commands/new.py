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
    from budget.resources import template_text

    dest: Path = args.path
    files = [(dest, KINDS[args.kind])] + [(dest.parent / name, name) for name in COMPANIONS.get(args.kind, ())]
    for path, _ in files:
        if path.exists():
            raise BudgetInputError(f"The output file '{path}' exists; new never replaces a file.")
    if not dest.parent.exists():
        raise BudgetInputError(f"The folder '{dest.parent}' does not exist.")
    for path, name in files:
        with open(path, "x", encoding="utf-8") as fh:
            fh.write(template_text(name))
        print(f"wrote {path} ({args.kind} starter; edit every value marked with its unit)")
    return 0
