"""``thetabudget new``: write a commented starter rig file (never replaces a file)."""

from __future__ import annotations

import argparse
from pathlib import Path

from budget.errors import BudgetInputError

__all__ = ["execute", "STARTERS"]

STARTERS = {
    "gauge": "gauge_static.toml",
    "sweep": "gain_sweep.toml",
    "moving": "moving_pointer.toml",
    "bench": "bench_sweep.toml",
}
"""Kinds of starter file and the template each one copies."""


def execute(args: argparse.Namespace) -> int:
    from budget.resources import template_text

    text = template_text(STARTERS[args.kind])
    dest: Path = args.path
    if dest.exists():
        raise BudgetInputError(f"The output file '{dest}' exists; new never replaces a file.")
    if not dest.parent.exists():
        raise BudgetInputError(f"The folder '{dest.parent}' does not exist.")
    with open(dest, "x", encoding="utf-8") as fh:
        fh.write(text)
    print(f"wrote {dest} ({args.kind} starter; edit every value marked with its unit)")
    return 0
