"""The package's layout holds: no import cycles, imports only in the allowed directions, every
subpackage says what it owns, modules stay small, and the wheel lists every package.

Common practice (architecture tests as in import-linter style checks); the allowed directions are
those of DEVELOPERS.md, section "Architecture".
"""

from __future__ import annotations

import ast
import tomllib
from pathlib import Path

from tests.paths import ROOT

PACKAGE = ROOT / "budget"

ALLOWED = {
    # layer: layers (or single modules) it may import; "budget" is the package's own __init__
    "errors": set(),
    "propagation": {"errors"},
    "fit": {"errors"},
    "results": {"errors", "propagation", "dataframes"},
    "dataframes": set(),
    "resources": {"errors"},
    "scratch": set(),
    "heap": set(),
    "imaging": {"errors", "propagation", "rig.description", "scratch"},
    "inputs": {"errors", "rig.description", "imaging.locator_model"},
    "rig": {"budget", "errors", "propagation", "fit", "imaging", "results", "scratch"},
    "choice": {"errors", "propagation", "imaging", "rig", "inputs.choose_file"},
    "advice": {"errors", "propagation", "fit", "imaging", "rig", "choice", "results", "inputs"},
    "report": {"budget", "errors", "results", "dataframes", "propagation", "choice", "advice"},
    "reference_models": {"errors", "propagation"},
    "reference_cases": {"budget", "errors", "propagation", "fit", "resources", "reference_models"},
    "commands": {"*"},
    "api": {"*"},
    "cli": {"budget", "errors", "commands", "heap"},
    "__main__": {"cli"},
    "budget": {"api", "results"},  # only inside its PEP 562 __getattr__, on first use (see LAZY)
}
LAZY = {"budget": {"budget.api", "budget.results"}}
"""Edges taken on first use of a public name (PEP 562 ``__getattr__`` in the package's __init__): modules
that import ``budget`` for ``__version__`` never follow them, so they close no import cycle."""
MAX_LINES = 400
"""STYLE.md: when a module passes about 400 lines, split it by concept."""


def _modules() -> dict[str, Path]:
    out = {}
    for f in PACKAGE.rglob("*.py"):
        parts = f.relative_to(ROOT).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = f
    return out


def _imports(path: Path, name: str, modules: set[str]) -> set[str]:
    """Every budget module imported anywhere in the file (top level or inside functions).

    ``from pkg import sub`` imports the module ``pkg.sub`` (and ``pkg`` only for names that
    are not modules).
    """
    found = set()
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            mod = node.module or ""
            if node.level:  # relative import
                base = name.split(".")[: len(name.split(".")) - node.level + (1 if path.name == "__init__.py" else 0)]
                mod = ".".join([*base, mod] if mod else base)
            if mod.startswith("budget"):
                subs = {f"{mod}.{a.name}" for a in node.names}
                found.update(subs & modules)
                if subs - modules:
                    found.add(mod)
        elif isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.startswith("budget"))
    return found


def _graph() -> dict[str, set[str]]:
    mods = _modules()
    return {m: {i for i in _imports(p, m, set(mods)) if i in mods and i != m} for m, p in mods.items()}


def _layer(module: str) -> str:
    parts = module.split(".")
    return "budget" if len(parts) == 1 else parts[1]


def test_no_import_cycles():
    graph = _graph()
    for mod, lazy in LAZY.items():
        graph[mod] -= lazy
    state: dict[str, int] = {}
    path: list[str] = []

    def visit(m: str) -> None:
        state[m] = 1
        path.append(m)
        for n in sorted(graph[m]):
            if state.get(n) == 1:
                raise AssertionError("import cycle: " + " -> ".join(path[path.index(n):] + [n]))
            if n not in state:
                visit(n)
        path.pop()
        state[m] = 2

    for m in sorted(graph):
        if m not in state:
            visit(m)


def test_imports_follow_the_allowed_directions():
    bad = []
    for mod, targets in _graph().items():
        layer = _layer(mod)
        allowed = ALLOWED[layer]
        for t in targets:
            tl = _layer(t)
            if tl == layer or "*" in allowed:
                continue
            short = t.removeprefix("budget.")
            if tl in allowed or any(short == a or short.startswith(a + ".") for a in allowed):
                continue
            bad.append(f"{mod} -> {t}")
    assert not bad, "imports against the layering of DEVELOPERS.md: " + ", ".join(sorted(bad))


def test_every_subpackage_says_what_it_owns():
    for init in PACKAGE.rglob("__init__.py"):
        doc = ast.get_docstring(ast.parse(init.read_text(encoding="utf-8")))
        assert doc and len(doc.split()) >= 15, f"{init.relative_to(ROOT)} needs a docstring saying what it owns"


def test_modules_stay_small():
    long = {str(p.relative_to(ROOT)): n for p in PACKAGE.rglob("*.py")
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"modules past {MAX_LINES} lines (split them by concept): {long}"


def test_wheel_lists_every_package():
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]["packages"])
    folders = {".".join(p.parent.relative_to(ROOT).parts) for p in PACKAGE.rglob("__init__.py")}
    assert listed == folders | {"budget.templates", "budget.references"}
