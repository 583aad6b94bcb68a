"""Where the checkout's shipped files are, for tests (the package reads them through budget.resources)."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TEMPLATES = ROOT / "templates"
REFERENCES = ROOT / "references"
