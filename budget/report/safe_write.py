"""Writing report files without harming the user's files.

Three rules hold for every file the reports write:

* an existing file is replaced only with ``force`` (the error names the file and ``--force``);
* the new content goes to a temporary file in the destination's folder and is moved into place
  with :func:`os.replace`, so a failure part-way leaves any earlier file byte for byte;
* text that came from the user (titles, component names, source notes, TOML strings) stays inert
  text in a spreadsheet or a CSV, never a formula (CWE-1236, CSV/formula injection).
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Callable, Iterable
from pathlib import Path

from budget.errors import BudgetInputError

__all__ = ["FORMULA_TRIGGERS", "check_targets", "atomic_write", "csv_text", "set_text", "is_risky"]

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
"""Leading characters that make a spreadsheet treat a cell as a formula (OWASP CSV injection)."""

MAX_CELL_CHARS = 32_767
"""Excel's limit on the text of one cell."""


def is_risky(text: str) -> bool:
    """Whether a spreadsheet would read ``text`` as a formula."""
    return text.startswith(FORMULA_TRIGGERS)


def csv_text(text: str) -> str:
    """A user's text for a CSV cell: prefixed with a single quote when it starts like a formula.

    Notes
    -----
    The usual advice against CSV injection (CWE-1236; OWASP): a cell that starts with
    ``=``, ``+``, ``-``, ``@``, tab or carriage return gets a leading ``'`` so that a
    spreadsheet shows it as text. Numbers are never passed through this function.
    """
    return "'" + text if is_risky(text) else text


def _clean(text: str) -> str:
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    text = ILLEGAL_CHARACTERS_RE.sub("\ufffd", text)
    return text if len(text) <= MAX_CELL_CHARS else text[: MAX_CELL_CHARS - 1] + "…"


def set_text(cell, text: str):
    """Put ``text`` in an openpyxl cell as a string that can never become a formula.

    The cell's data type is forced to string (openpyxl would otherwise store a value
    starting with ``=`` as a formula), and a value that starts like a formula also gets
    the quote-prefix style, so it stays text when someone edits it in Excel or LibreOffice.
    Control characters that the file format cannot hold become U+FFFD.
    """
    text = _clean(str(text))
    cell.value = text
    cell.data_type = "s"
    if is_risky(text):
        cell.quotePrefix = True
    return cell


def check_targets(paths: Iterable[Path], force: bool) -> None:
    """Refuse before anything is written: an existing file without ``force``, or a missing folder.

    Raises
    ------
    BudgetInputError
        Naming the first offending path.
    """
    for p in paths:
        if p.is_dir():
            raise BudgetInputError(f"The output path '{p}' is a folder; give a file name.")
        if p.exists() and not force:
            raise BudgetInputError(f"The output file '{p}' exists; pass --force to replace it.")
        if not p.parent.is_dir():
            raise BudgetInputError(f"The folder '{p.parent}' of the output file '{p}' does not exist.")


def _reserve_temp(dest: Path) -> Path:
    """Create an empty, uniquely named file beside ``dest`` (mode 0o666 less the umask)."""
    for _ in range(100):
        tmp = dest.with_name(f".{dest.name}.{secrets.token_hex(4)}.tmp")
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            continue
        os.close(fd)
        return tmp
    raise BudgetInputError(f"No temporary file could be made beside '{dest}'.")  # pragma: no cover


def _fsync(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def atomic_write(dest: Path, write: Callable[[Path], None], *, force: bool) -> Path:
    """Write a file through a temporary file in the same folder, then move it into place.

    Parameters
    ----------
    dest : Path
        The file to write.
    write : callable
        ``write(tmp_path)`` writes the whole content to ``tmp_path``.
    force : bool
        Replace an existing ``dest``; without it an existing file is an error.

    Returns
    -------
    Path
        ``dest``.

    Notes
    -----
    Without ``force`` the file is moved into place with a hard link, which fails if a
    file of that name appeared meanwhile, so nothing is ever replaced; where the file
    system has no hard links the existence check is repeated just before the move.
    On any failure the temporary file is removed and ``dest`` is untouched.
    """
    dest = Path(dest)
    check_targets([dest], force)
    tmp = _reserve_temp(dest)
    try:
        write(tmp)
        _fsync(tmp)
        if force:
            os.replace(tmp, dest)
        else:
            _move_no_replace(tmp, dest)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return dest


def _move_no_replace(tmp: Path, dest: Path) -> None:
    try:
        os.link(tmp, dest)
    except FileExistsError:
        raise BudgetInputError(f"The output file '{dest}' exists; pass --force to replace it.") from None
    except OSError:  # no hard links on this file system
        if dest.exists():
            raise BudgetInputError(f"The output file '{dest}' exists; pass --force to replace it.") from None
        os.replace(tmp, dest)
        return
    tmp.unlink()
