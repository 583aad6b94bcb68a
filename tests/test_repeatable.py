"""Every Hypothesis test draws the same examples on every run (derandomized, no database)."""

from __future__ import annotations

import ast
import re

from hypothesis import settings

from tests.paths import ROOT


def test_the_active_profile_is_derandomized():
    assert settings().derandomize is True
    assert settings().database is None


def test_no_property_test_overrides_it():
    """An explicit ``@settings(...)`` may not turn derandomization off."""
    for path in (ROOT / "tests").rglob("test_*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and getattr(node.func, "id", "") == "settings":
                for kw in node.keywords:
                    if kw.arg == "derandomize":
                        assert not (isinstance(kw.value, ast.Constant) and kw.value.value is False), path


def test_no_unit_test_is_timed():
    """Timing belongs to benchmarks/: no test reads a clock (a timed assert fails under load)."""
    clock = re.compile(r"\b(perf_counter|process_time|monotonic|time)(_ns)?\s*\(")
    for path in (ROOT / "tests").rglob("*.py"):
        if path.name == "test_repeatable.py":
            continue
        found = clock.findall(path.read_text(encoding="utf-8"))
        assert not found, (path, found)
