"""What every input file reader shares: a field's kind and allowed range, coercion with one-line
errors, the typo suggestion, and reading TOML.

Readers of rig files (:mod:`budget.inputs.rig_file`), choose files
(:mod:`budget.inputs.choose_file`) and data files (:mod:`budget.inputs.data_csv`) build on it.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from budget.errors import BudgetInputError, field_error

__all__ = ["Field", "number", "positive", "non_negative", "choice", "suggest", "coerce", "read_toml"]


@dataclass(frozen=True)
class Field:
    """One allowed key: its kind, what is allowed (for the message) and a check."""

    kind: str  # "int", "float", "str", "bool", "floats"
    allowed: str
    ok: Callable[[object], bool] = lambda v: True
    required: bool = False
    assumed: str = ""
    """Why the default is a fair value when the file leaves the field out; a field with this text
    is listed as an assumption (field, value, reason) in every report whenever its default is used."""


def number(allowed: str, ok: Callable[[float], bool], required: bool = False, assumed: str = "") -> Field:
    """A real number with the check ``ok`` and the words ``allowed`` for the message."""
    return Field("float", allowed, ok, required, assumed)


def positive(required: bool = False) -> Field:
    """A real number > 0."""
    return number("a number > 0", lambda v: v > 0, required)


def non_negative(required: bool = False) -> Field:
    """A real number >= 0."""
    return number("a number >= 0", lambda v: v >= 0, required)


def choice(*options: str) -> Field:
    """One of the given words."""
    return Field("str", "one of " + ", ".join(repr(o) for o in options), lambda v: v in options)


def suggest(key: str, options) -> str:
    near = difflib.get_close_matches(key, list(options), n=1, cutoff=0.6)
    return f" Did you mean '{near[0]}'?" if near else ""


def coerce(section: str, key: str, spec: Field, value: object) -> object:
    where = f"[{section}]"
    if spec.kind == "bool":
        if not isinstance(value, bool):
            raise field_error(key, spec.allowed, value, where)
        return value
    if spec.kind == "str":
        if not isinstance(value, str):
            raise field_error(key, spec.allowed, value, where)
    elif spec.kind == "int":
        if isinstance(value, bool) or not isinstance(value, int):
            raise field_error(key, spec.allowed, value, where)
    elif spec.kind == "float":
        if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
            raise field_error(key, spec.allowed, value, where)
        value = float(value)
    elif spec.kind == "floats":
        if not isinstance(value, list) or not all(
            isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v) for v in value
        ) or not value:
            raise field_error(key, spec.allowed, value, where)
        value = tuple(float(v) for v in value)
    if not spec.ok(value):
        raise field_error(key, spec.allowed, value, where)
    return value


def read_toml(path: str | Path, what: str = "input file") -> dict:
    """Read a TOML file; a missing, unreadable or malformed file is one BudgetInputError line."""
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8-sig")  # a byte-order mark (as some editors save) is not text
    except FileNotFoundError:
        raise BudgetInputError(f"The {what} '{p}' does not exist.") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise BudgetInputError(f"The {what} '{p}' cannot be read: {exc}.") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BudgetInputError(f"The {what} '{p}' is not valid TOML: {exc}.") from None
