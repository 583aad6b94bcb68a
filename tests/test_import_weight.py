"""`import budget` stays light: the CLI's start-up must not pay for scipy, pandas or matplotlib.

Common practice (a guard against import-time creep, as click and similar CLIs test it).
"""

import subprocess
import sys

import pytest

from tests.paths import TEMPLATES

HEAVY = ("scipy", "pandas", "matplotlib", "openpyxl", "rich")


def _modules_after(statement: str) -> set[str]:
    code = f"import sys\n{statement}\nprint(' '.join(sorted(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return set(out.stdout.split())


def test_import_budget_is_light():
    loaded = _modules_after("import budget")
    assert not [m for m in HEAVY if m in loaded]


def test_python_api_loads_pandas_and_uncertainties_only_when_asked():
    loaded = _modules_after("import budget; budget.run; budget.RunResult")
    assert not [m for m in (*HEAVY, "uncertainties") if m in loaded]


def test_cli_parser_is_light():
    loaded = _modules_after("import budget.cli; budget.cli.build_parser()")
    assert not [m for m in HEAVY if m in loaded]


RUN_HEAVY = ("scipy", "pandas", "matplotlib", "openpyxl")
"""What a plain ``run`` (console report only) must not import: it needs numpy, and rich for the
console table. Coverage factors and normal quantiles come from
``budget.propagation.quantiles``; the locator model's erf from ``math`` (``imaging/spot.py``)."""


@pytest.mark.parametrize("template", ["gain_sweep.toml", "gauge_static.toml", "moving_pointer.toml"])
def test_run_imports_no_heavy_module(template):
    # The command as a user types it, in a fresh interpreter (a short Monte Carlo to keep it quick).
    argv = ["run", str(TEMPLATES / template), "--quiet", "--seed", "1", "--trials", "2000"]
    loaded = _modules_after(
        "import contextlib, io\n"
        "from budget.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    rc = main({argv!r})\n"
        "assert rc == 0, rc"
    )
    assert not [m for m in RUN_HEAVY if m in loaded], sorted(m for m in loaded if m.split(".")[0] in RUN_HEAVY)


@pytest.mark.parametrize("columns", [None, "100"])
def test_choose_imports_no_heavy_module(columns):
    # The camera choice prints a plain table: no rich, scipy, pandas, matplotlib or openpyxl, whether or
    # not it fits a terminal's width.
    argv = ["choose", str(TEMPLATES / "choose_cameras.toml")]
    env = "" if columns is None else f"import os; os.environ['COLUMNS'] = {columns!r}\n"
    loaded = _modules_after(
        env + "import contextlib, io\n"
        "from budget.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    rc = main({argv!r})\n"
        "assert rc == 0, rc"
    )
    assert not [m for m in HEAVY if m in loaded], sorted(m for m in loaded if m.split(".")[0] in HEAVY)
