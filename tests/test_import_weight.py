"""`import budget` stays light: the CLI's start-up must not pay for scipy, pandas or matplotlib.

Common practice (a guard against import-time creep, as click and similar CLIs test it).
"""

import subprocess
import sys

HEAVY = ("scipy", "pandas", "matplotlib", "openpyxl", "rich")


def _modules_after(statement: str) -> set[str]:
    code = f"import sys; {statement}; print(' '.join(sorted(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return set(out.stdout.split())


def test_import_budget_is_light():
    loaded = _modules_after("import budget")
    assert not [m for m in HEAVY if m in loaded]


def test_cli_parser_is_light():
    loaded = _modules_after("import budget.cli; budget.cli.build_parser()")
    assert not [m for m in HEAVY if m in loaded]
