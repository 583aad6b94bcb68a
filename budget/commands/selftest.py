"""``thetabudget selftest``: the published reference cases run through the engine."""

from __future__ import annotations

import argparse

from budget.commands.common import make_rng

__all__ = ["execute", "SELFTEST_SEED"]

SELFTEST_SEED = 20081
"""Fixed seed of the self-test's Monte Carlo runs, so that its evidence is repeatable."""


def execute(args: argparse.Namespace) -> int:
    from rich.console import Console
    from rich.table import Table

    from budget import __version__
    from budget.reference_cases import load_cases, run_cases
    from budget.resources import reference_location

    print(f"thetabudget {__version__}; reference cases read from {reference_location()}; "
          f"Monte Carlo seed {SELFTEST_SEED}")
    rows = run_cases(load_cases(), rng=make_rng(SELFTEST_SEED))
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
