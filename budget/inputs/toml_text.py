"""Writing a rig document (plain dict of tables) as TOML text that :mod:`tomllib` reads back unchanged.

Only what rig files hold: a top-level ``title``, tables of strings, booleans, integers, floats and
lists of numbers. Floats are written with ``repr`` (the shortest text that reads back to the same
double), so a document written and read again is equal to the one written.
"""

from __future__ import annotations

import json
import math

from budget.errors import BudgetInputError

__all__ = ["dumps_toml"]


def _value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise BudgetInputError(f"A rig file cannot hold the number {v!r}.")
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)  # a JSON string is a valid TOML basic string
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise BudgetInputError(f"A rig file cannot hold the value {v!r}.")


def dumps_toml(doc: dict, header: str = "") -> str:
    """TOML text of ``doc``; ``header`` lines become comments at the top."""
    lines = [f"# {line}".rstrip() for line in header.splitlines()]
    for key, value in doc.items():
        if not isinstance(value, dict):
            lines.append(f"{key} = {_value(value)}")
    for key, value in doc.items():
        if isinstance(value, dict):
            lines += ["", f"[{key}]"]
            lines += [f"{k} = {_value(v)}" for k, v in value.items() if v is not None]
    return "\n".join(lines).lstrip("\n") + "\n"
