"""Runs shared by the report tests: each rig is run once per session (20 000 trials, seed 1)."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from budget.inputs.rig_file import load_rig
from budget.rig.budget import run_budget
from tests.paths import TEMPLATES

TEMPLATE_DIR = TEMPLATES

INJECTIONS = {
    "title": '=HYPERLINK("http://example.invalid","open me")',
    "lens": "=1+2",
    "geometry": "+SUM(1,2)",
    "target": "-3+4",
    "locator": "@SUM(1)",
}
"""Text a user might write that a spreadsheet would run as a formula (CWE-1236)."""


def run(path: Path, type_a: dict | None = None):
    return run_budget(load_rig(path), rng=np.random.default_rng(1), trials=20_000, input_path=path,
                      type_a=type_a)


def injected_rig(text: str) -> str:
    """The gauge template with a formula-like title and formula-like source notes."""
    text = re.sub(r'^title = .*$', f"title = '{INJECTIONS['title']}'", text, count=1, flags=re.M)
    for section in ("lens", "geometry", "target", "locator"):
        block = re.search(rf"^\[{section}\]\n(.*?)(?=^\[|\Z)", text, flags=re.M | re.S)
        assert block is not None, section
        new = re.sub(r'^source = .*$', f"source = '{INJECTIONS[section]}'", block.group(0), count=1, flags=re.M)
        text = text.replace(block.group(0), new)
    return text


@pytest.fixture(scope="session")
def injections() -> dict[str, str]:
    return dict(INJECTIONS)


@pytest.fixture(scope="session")
def gauge():
    """The static gauge template: uncorrelated inputs, every ν infinite."""
    return run(TEMPLATE_DIR / "gauge_static.toml")


@pytest.fixture(scope="session")
def sweep():
    """The gain sweep template: 9 angles, the gain and the intercept."""
    return run(TEMPLATE_DIR / "gain_sweep.toml")


@pytest.fixture(scope="session")
def moving():
    """The moving-pointer template: components of a single input (k1, the measured tilt)."""
    return run(TEMPLATE_DIR / "moving_pointer.toml")


@pytest.fixture(scope="session")
def type_a(tmp_path_factory):
    """The gauge with formula-like user text and Type A centroid noise (t, 5 dof): finite ν_eff."""
    path = tmp_path_factory.mktemp("rigs") / "injected.toml"
    path.write_text(injected_rig((TEMPLATE_DIR / "gauge_static.toml").read_text(encoding="utf-8")),
                    encoding="utf-8")
    scatter = {lab: (0.01, 0.012, 6) for lab in ("Z", "P1", "P2", "P3", "P4")}
    return run(path, type_a=scatter)


@pytest.fixture(scope="session")
def correlated(tmp_path_factory):
    """The gauge with correlated lens residuals (residual_correlation_px set)."""
    text = (TEMPLATE_DIR / "gauge_static.toml").read_text(encoding="utf-8")
    text = re.sub(r"^residual_correlation_px = .*$", "residual_correlation_px = 800", text, count=1, flags=re.M)
    path = tmp_path_factory.mktemp("rigs") / "correlated.toml"
    path.write_text(text, encoding="utf-8")
    return run(path)
