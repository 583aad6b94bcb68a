"""``thetabudget selftest``: the reference cases run through the engine, each value with its provenance."""

from __future__ import annotations

import argparse
from collections import Counter

from budget.commands.common import make_rng

__all__ = ["execute", "SELFTEST_SEED", "COLUMNS"]

SELFTEST_SEED = 20081
"""Fixed seed of the self-test's Monte Carlo runs, so that its evidence is repeatable."""

COLUMNS = ("case", "source", "quantity", "reference value", "provenance", "computed",
           "tolerance", "result")
"""The table's columns. A recalled value is a reference value, not a published one: the
provenance column says for each value whether it was checked against the text of its
source (and where), recalled from memory and unverified, or derived from the stated inputs."""

LEGEND = ("Provenance: 'checked against ...' = read in the text of the source at the place named; "
          "'recalled from memory, unverified' = not read in the source, may be wrong; "
          "'derived from the stated inputs' = exact consequence of the case's inputs, recomputed "
          "with its tolerance by tools/reference_tolerances.py in the source repository.")


def execute(args: argparse.Namespace) -> int:
    from rich.console import Console
    from rich.table import Table

    from budget import __version__
    from budget.reference_cases import load_cases, run_cases
    from budget.resources import reference_location

    print(f"thetabudget {__version__}; reference cases read from {reference_location()}; "
          f"Monte Carlo seed {SELFTEST_SEED} (numpy.random.default_rng)")
    rows = run_cases(load_cases(), rng=make_rng(SELFTEST_SEED))
    table = Table(title=f"thetabudget selftest: reference cases, Monte Carlo seed {SELFTEST_SEED}")
    for col in COLUMNS:
        table.add_column(col)
    for r in rows:
        table.add_row(r.case_id, r.source, r.quantity, _cell(r.reference), r.provenance,
                      _cell(r.computed), _cell(r.tolerance), "pass" if r.passed else "FAIL")
    Console(width=200).print(table)
    print(LEGEND)
    marks = Counter(r.mark for r in rows)
    print(f"Values: {marks['checked']} checked against their source, {marks['recalled']} recalled "
          f"from memory and unverified, {marks['derived']} derived.")
    failed = sum(not r.passed for r in rows)
    print(f"{len(rows) - failed} passed, {failed} failed")
    return 1 if failed else 0


def _cell(v: object) -> str:
    if isinstance(v, bool) or not isinstance(v, float | int):
        return str(v)
    return f"{v:.6g}"
