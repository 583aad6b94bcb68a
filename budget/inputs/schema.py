"""What every input file reader shares: a field's kind and allowed range, coercion with one-line
errors, the typo suggestion, and reading TOML.

Readers of rig files (:mod:`budget.inputs.rig_file`), choose files
(:mod:`budget.inputs.choose_file`) and data files (:mod:`budget.inputs.data_csv`) build on it.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from budget.errors import BudgetInputError, field_error

__all__ = ["Field", "number", "positive", "non_negative", "choice", "suggest", "coerce", "read_toml", "check_text",
           "MAX_INPUT_BYTES", "MAX_LIST"]


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


MAX_LIST = 200
"""Most values in a list field (angles, set points, f-numbers, ...): each may add an output or a search step."""


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
        if isinstance(value, list) and len(value) > MAX_LIST:
            raise field_error(key, f"{spec.allowed} (at most {MAX_LIST} values)", f"a list of {len(value)} values",
                              where)
        if not isinstance(value, list) or not all(
            isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v) for v in value
        ) or not value:
            raise field_error(key, spec.allowed, value, where)
        value = tuple(float(v) for v in value)
    if not spec.ok(value):
        raise field_error(key, spec.allowed, value, where)
    return value


MAX_INPUT_BYTES = 10_000_000
"""Largest TOML input file read (a rig file is a few kB)."""
CONTROL_CHARACTERS = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
"""Control characters other than tab and line breaks: never text a report could show or a spreadsheet hold."""
TEXT_RULE = "text without control characters (tab and line breaks are allowed)"


def check_text(value: str, field: str, where: str | None = None) -> str:
    """``value`` unless it holds a control character (one-line error naming the field)."""
    if CONTROL_CHARACTERS.search(value):
        raise field_error(field, TEXT_RULE, value[:80], where)
    return value


def _check_strings(doc: dict, what: str) -> None:
    """Every key and text value of a parsed TOML document: no control characters."""
    stack: list[tuple[str, object]] = [("", doc)]
    while stack:
        path, node = stack.pop()
        items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
        for key, value in items:
            here = f"{path}.{key}" if isinstance(key, str) and path else f"{path}[{key}]" if path else str(key)
            if isinstance(key, str):
                check_text(key, here, f"the {what}")
            if isinstance(value, str):
                check_text(value, here, f"the {what}")
            elif isinstance(value, dict | list):
                stack.append((here, value))


def read_toml(path: str | Path, what: str = "input file") -> dict:
    """Read a TOML file; a missing, unreadable, oversized, malformed or too deeply nested file, or text
    with control characters, is one BudgetInputError line. A byte-order mark is not text."""
    p = Path(path)
    try:
        if p.is_dir():
            raise IsADirectoryError
        size = p.stat().st_size
        data = p.read_bytes() if size <= MAX_INPUT_BYTES else b""
        text = data.decode("utf-8-sig")  # a byte-order mark (as some editors save) is not text
    except FileNotFoundError:
        raise BudgetInputError(f"The {what} '{p}' does not exist.") from None
    except IsADirectoryError:
        raise BudgetInputError(f"The {what} '{p}' is a folder, not a file.") from None
    except UnicodeDecodeError as exc:
        raise BudgetInputError(f"The {what} '{p}' is not UTF-8 text (byte {exc.start}); save it as UTF-8.") from None
    except (OSError, ValueError) as exc:  # ValueError: a NUL in the path
        raise BudgetInputError(f"The {what} '{p}' cannot be read: {getattr(exc, 'strerror', None) or exc}.") from None
    if size > MAX_INPUT_BYTES:
        raise BudgetInputError(f"The {what} '{p}' has {size:,} bytes; at most {MAX_INPUT_BYTES:,} are read.")
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BudgetInputError(f"The {what} '{p}' is not valid TOML: {exc}.") from None
    except RecursionError:
        raise BudgetInputError(f"The {what} '{p}' nests arrays or tables too deeply to read.") from None
    _check_strings(doc, what)
    return doc
