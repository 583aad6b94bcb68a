"""The README's promise as a test helper: run ``thetabudget`` in process on a folder and check what it did.

The promise: exit 0 success, 1 a failed selftest, 2 bad input with one line on stderr (naming what is
wrong) and nothing written; no existing file replaced without ``--force``; an input never written; no
temporary file left behind; text from the input never a formula in a written workbook or CSV.
"""

from __future__ import annotations

import contextlib
import csv
import io
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path

from budget import cli
from budget.report.safe_write import is_risky

FORMULA_FUNCTIONS = {"SQRT", "SUMSQ", "ABS", "IF", "ISNUMBER", "OR", "INT", "SUM", "_xlfn.T.INV.2T",
                     "_xlfn.NORM.S.INV"}
"""The only functions the budget workbook's own formulas use (tests/report/test_injection.py)."""


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    """Every file under ``folder`` (links not followed): bytes and inode."""
    out = {}
    for p in sorted(folder.rglob("*")):
        if p.is_file() and not p.is_symlink():
            out[str(p.relative_to(folder))] = (p.read_bytes(), p.stat().st_ino)
    return out


@dataclass
class Outcome:
    """What one call did: exit code, stdout, stderr, the folder before and after."""

    argv: list[str]
    code: int
    out: str
    err: str
    before: dict
    after: dict
    warnings: list[str]

    @property
    def new_files(self) -> set[str]:
        return set(self.after) - set(self.before)

    @property
    def changed(self) -> set[str]:
        return {k for k in self.before if k not in self.after or self.after[k] != self.before[k]}


def call(argv: list[str], folder: Path) -> Outcome:
    """``thetabudget argv`` in process with ``folder`` as the place its files are (absolute paths in argv)."""
    before = snapshot(folder)
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = cli.main([str(a) for a in argv])  # an exception escaping main fails the test: a traceback
    return Outcome([str(a) for a in argv], code, out.getvalue(), err.getvalue(), before, snapshot(folder),
                   list(cli.last_warnings))


def check_promise(o: Outcome, *, inputs: tuple[str, ...] = ()) -> None:
    """Assert the README's promise for one call (``inputs``: names, relative to the folder, that it reads)."""
    what = f"{o.argv}: exit {o.code}, stderr {o.err!r}"
    assert o.code in (0, 1, 2), what
    assert "Traceback" not in o.err and "internal error" not in o.err, what
    assert not [k for k in o.after if k.endswith((".tmp", ".old")) and "/." in "/" + k], what  # no temporary file
    for name in inputs:  # an input is never written, even with --force
        if name in o.before:
            assert o.after.get(name) == o.before[name], f"{what}: input {name} changed"
    if o.code == 2:
        lines = o.err.splitlines()
        assert len(lines) == 1 and lines[0].startswith("thetabudget"), what
        assert o.after == o.before, f"{what}: files changed on a refusal"
    if "--force" not in o.argv:  # nothing replaced without --force
        assert not o.changed, f"{what}: replaced {sorted(o.changed)}"
    kinds = _written_as(o.argv)
    for name in o.new_files:
        check_inert(Path(name), o.after[name][0], what, kinds)


_OPTION_KIND = {"--xlsx": "xlsx", "--csv": "csv", "--out": "csv", "--md": "md", "--rig-out": "toml", "--html": "html"}


def _written_as(argv: list[str]) -> dict[str, str]:
    """The format each output option writes, by the file's name (a user may name a CSV ``x.md``)."""
    return {Path(v).name: _OPTION_KIND[a] for a, v in zip(argv, argv[1:], strict=False) if a in _OPTION_KIND}


def check_inert(name: Path, data: bytes, what: str = "", kinds: dict[str, str] | None = None) -> None:
    """A written file holds no formula built from input text (xlsx, CSV) and no control character (text)."""
    kind = (kinds or {}).get(name.name) or name.suffix.lstrip(".")
    if data.startswith(b"PK\x03\x04"):
        kind = "xlsx"
    elif data.startswith(b"\x89PNG"):
        return
    if kind == "xlsx":
        check_workbook(data, what)
    elif kind == "csv":
        text = data.decode("utf-8-sig")
        for row in csv.reader(io.StringIO(text, newline="")):
            for cell in row:
                assert not is_risky(cell) or _number(cell), f"{what}: CSV cell {cell!r}"
    elif kind in ("md", "toml", "html"):
        text = data.decode("utf-8")
        assert not re.search("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]", text), f"{what}: control character in {name}"


def _number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True


def check_workbook(data: bytes, what: str = "") -> None:
    """The workbook opens, and every formula in it is one of the budget's own."""
    import openpyxl

    wb = openpyxl.load_workbook(io.BytesIO(data))  # a file a spreadsheet library refuses fails here
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type == "f":  # the budget's own: cell arithmetic, its functions, no text but ∞
                    assert re.search(r"\$?[A-Z]{1,3}\$?[0-9]+", str(cell.value)) or \
                        re.fullmatch(r"=(SQRT\([0-9]+\)|0)", str(cell.value)), f"{what}: {cell.value!r}"  # constants
                    names = set(re.findall(r"([A-Za-z_][A-Za-z0-9_.]*)\(", str(cell.value)))
                    assert names <= FORMULA_FUNCTIONS, f"{what}: {ws.title}!{cell.coordinate} = {cell.value!r}"
                    literals = set(re.findall(r'"[^"]*"', str(cell.value)))
                    assert literals <= {'"∞"'}, f"{what}: text in a formula {cell.value!r}"
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                for f in re.findall(r"<f>(.*?)</f>", z.read(name).decode("utf-8")):
                    assert "HYPERLINK" not in f and "CMD" not in f.upper(), f"{what}: {f}"
