"""references/README.md lists every file of the folder (and no file that is not there).

Not a reference check of a value: it keeps the index of the reference cases complete, so that
each case file's source (named in the file itself and in the README) can be found.
"""

from __future__ import annotations

import re

from tests.paths import REFERENCES


def test_readme_lists_every_reference_file():
    text = (REFERENCES / "README.md").read_text(encoding="utf-8")
    files = {p.name for p in REFERENCES.iterdir() if p.is_file() and not p.name.endswith(".pyc")}
    named = set(re.findall(r"^\| `([^`]+)` \|", text, re.M))
    assert files == named, {"not listed": sorted(files - named), "listed, absent": sorted(named - files)}
