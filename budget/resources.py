"""The files that ship with the package: starter templates and published reference cases.

They live in the project's top-level ``templates/`` and ``references/`` folders and are
installed as the package data ``budget.templates`` and ``budget.references`` (see
``pyproject.toml``), so every install — a wheel, an sdist, an editable checkout — reads them
through :mod:`importlib.resources`, never through a path relative to the source tree.
"""

from __future__ import annotations

from importlib import resources
from importlib.abc import Traversable

from budget.errors import BudgetInputError

__all__ = ["templates", "template_text", "references", "reference_location"]


def templates() -> Traversable:
    """The shipped starter templates (``*.toml``, ``cameras.csv``)."""
    return resources.files("budget.templates")


def template_text(name: str) -> str:
    """The text of one shipped template, e.g. ``"gauge_static.toml"``."""
    item = templates() / name
    if not item.is_file():
        raise BudgetInputError(f"The starter template '{name}' is missing from this installation of "
                               "thetabudget; reinstall the package.")
    return item.read_text(encoding="utf-8")


def references() -> Traversable:
    """The shipped reference cases (``jcgm*.toml``) and reference data."""
    return resources.files("budget.references")


def reference_location() -> str:
    """Where the reference cases are read from, in words for the self-test's report."""
    return str(references())
