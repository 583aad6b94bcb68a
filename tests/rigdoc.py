"""Building small rig documents in tests: a base document with sections or keys overridden."""

from __future__ import annotations

import copy


def merge_doc(base: dict, over: dict | None = None) -> dict:
    """A deep copy of ``base`` with ``over`` merged in: a section or key given as None is deleted."""
    doc = copy.deepcopy(base)
    for section, value in (over or {}).items():
        if value is None:
            doc.pop(section, None)
        elif isinstance(value, dict):
            table = doc.setdefault(section, {})
            for key, v in value.items():
                if v is None:
                    table.pop(key, None)
                else:
                    table[key] = v
        else:
            doc[section] = value
    return doc
