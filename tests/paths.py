"""Where the checkout's shipped files are, for tests (the package reads them through budget.resources)."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TEMPLATES = ROOT / "templates"
REFERENCES = ROOT / "references"
TOOLS = ROOT / "tools"


def load_tool(name: str):
    """Import a script of tools/ (not a package) as a module, e.g. ``load_tool("reference_tolerances")``."""
    import importlib.util
    import sys

    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.spec_from_file_location(name, TOOLS / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module
