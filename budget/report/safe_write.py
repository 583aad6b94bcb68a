"""Writing output files without harming the user's files: the one writer every command uses.

The rules that hold for every file the tool writes:

* every output path is checked before any work (:func:`check_targets`): an existing file is
  replaced only with ``force``; a missing folder, a folder where a file is wanted, a dangling
  symbolic link, two outputs on one path, a read-only folder and an output that is one of the
  run's inputs are refused, whatever ``force`` says, in one line naming the path;
* the new content goes to a temporary file in the destination's folder (mode 0o666 less the
  user's umask) and is moved into place with a hard link (never replacing) or, with ``force``,
  :func:`os.replace`, so a failure part-way leaves any earlier file byte for byte;
* files written together (:class:`FileSet`) are all moved into place or none is: each is written
  to its temporary file first, and only when all are complete are they moved; on any error or
  signal the temporary files are removed;
* a file that cannot be written (a full disk, a read-only folder) is one line, not a traceback;
* text that came from the user (titles, component names, source notes, TOML strings) stays inert
  text in a spreadsheet or a CSV, never a formula (CWE-1236, CSV/formula injection), and control
  characters that a file format cannot hold never reach it.
"""

from __future__ import annotations

import csv
import os
import re
import secrets
from collections.abc import Callable, Iterable
from pathlib import Path

from budget.errors import BudgetInputError

__all__ = ["FORMULA_TRIGGERS", "FileSet", "atomic_write", "check_targets", "clean_text", "csv_text", "csv_writer",
           "is_risky", "set_text", "remove_pending"]

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r", "\n", "\uff1d", "\uff0b", "\uff0d", "\uff20")
"""Leading characters that make a spreadsheet treat a cell as a formula (OWASP CSV injection), with
their full-width forms, which some spreadsheets read as the ASCII ones."""

MAX_CELL_CHARS = 32_767
"""Excel's limit on the text of one cell."""

CONTROL_CHARACTERS = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
"""Control characters other than tab, line feed and carriage return: XML 1.0 (and so xlsx) cannot hold
most of them, and in a text file or on a terminal they are commands, not text."""

_PENDING: set[Path] = set()
"""Temporary files that exist right now (removed by :func:`remove_pending` on a signal)."""
_TEMP_EXTRA = len(".") + len(".0123abcd.tmp")
"""Bytes a temporary file's name adds to its destination's: a leading dot, a token of 8 hex digits, .tmp."""


def is_risky(text: str) -> bool:
    """Whether a spreadsheet would read ``text`` as a formula."""
    return text.startswith(FORMULA_TRIGGERS)


def clean_text(text: object, limit: int | None = None) -> str:
    """``text`` without control characters (each becomes U+FFFD) and at most ``limit`` characters."""
    text = CONTROL_CHARACTERS.sub("\ufffd", str(text))
    return text if limit is None or len(text) <= limit else text[: limit - 1] + "…"


def csv_text(text: str) -> str:
    """A user's text for a CSV cell: prefixed with a single quote when it starts like a formula.

    Notes
    -----
    The usual advice against CSV injection (CWE-1236; OWASP): a cell that starts with
    ``=``, ``+``, ``-``, ``@``, tab or carriage return gets a leading ``'`` so that a
    spreadsheet shows it as text. Numbers are never passed through this function. Write the
    cells with :func:`csv_writer`, which quotes a cell holding a line break, so a carriage
    return inside a note cannot end the row and start a cell of its own.
    """
    text = clean_text(text)
    return "'" + text if is_risky(text) else text


def csv_writer(fh):
    """A :func:`csv.writer` whose rows end in CR LF (RFC 4180), so every cell with a CR or an LF is quoted.

    Notes
    -----
    Python's writer quotes a cell holding a character of the line terminator; with ``"\\n"`` alone a
    bare carriage return would be written unquoted and a spreadsheet would break the row there.
    """
    return csv.writer(fh, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)


def set_text(cell, text: str):
    """Put ``text`` in an openpyxl cell as a string that can never become a formula.

    The cell's data type is forced to string (openpyxl would otherwise store a value
    starting with ``=`` as a formula), and a value that starts like a formula also gets
    the quote-prefix style, so it stays text when someone edits it in Excel or LibreOffice.
    Control characters that the file format cannot hold become U+FFFD.
    """
    text = clean_text(text, MAX_CELL_CHARS)
    cell.value = text
    cell.data_type = "s"
    if is_risky(text):
        cell.quotePrefix = True
    return cell


def _refuse(p: Path, what: str) -> BudgetInputError:
    return BudgetInputError(f"The output path '{p}' {what}.")


def _identity(p: Path) -> str:
    return os.path.normcase(os.path.realpath(p))


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_targets(paths: Iterable[Path], force: bool, *, inputs: Iterable[Path] = ()) -> None:
    """Refuse, before anything is written or computed, every output path that cannot be written safely.

    Parameters
    ----------
    paths : iterable of Path
        The files the command will write.
    force : bool
        Whether an existing file may be replaced.
    inputs : iterable of Path
        The files the command reads (input file, data files, images, camera lists): never written,
        even with ``force``.

    Raises
    ------
    BudgetInputError
        Naming the first offending path: an existing file without ``force``, a folder, a device or
        pipe, a dangling symbolic link, a missing or read-only folder, a name too long, two outputs
        on one path, or an output that is an input.
    """
    ins = [Path(p) for p in inputs]
    in_keys = {_identity(p) for p in ins if "\x00" not in str(p)}
    seen: set[str] = set()
    for p in map(Path, paths):
        if "\x00" in str(p):
            raise BudgetInputError(f"The output path {str(p)!r} holds a NUL character; give a file name.")
        if p.is_symlink() and not p.exists():
            raise _refuse(p, "is a symbolic link to a missing file; remove it or give another name")
        if p.is_dir():
            raise _refuse(p, "is a folder; give a file name")
        if p.exists() and not p.is_file():  # a device, a pipe, a socket: never replaced, even with --force
            raise _refuse(p, "is not a regular file (a device, pipe or socket); give a file name")
        parent = p.parent
        if not parent.exists():
            raise BudgetInputError(f"The folder '{parent}' of the output file '{p}' does not exist.")
        if not parent.is_dir():
            raise BudgetInputError(f"The folder '{parent}' of the output file '{p}' is not a folder.")
        key = _identity(p)
        if key in seen:
            raise _refuse(p, "is given for two outputs (the same file); give each output its own file")
        seen.add(key)
        if key in in_keys or any(_same_file(p, q) for q in ins):
            raise _refuse(p, "is an input of this command; it is never written, even with --force")
        if p.exists() and not force:
            raise BudgetInputError(f"The output file '{p}' exists; pass --force to replace it.")
        if not os.access(parent, os.W_OK):
            raise BudgetInputError(f"The folder '{parent}' of the output file '{p}' is read-only.")
        _check_name_length(p)


def _check_name_length(p: Path) -> None:
    try:
        limit = os.pathconf(p.parent, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):  # pragma: no cover - no pathconf on this system
        limit = 255
    if len(os.fsencode(p.name)) + _TEMP_EXTRA > limit:
        raise _refuse(p, f"has a file name too long for this folder (at most {limit - _TEMP_EXTRA} bytes)")


def _unwritable(p: Path, exc: OSError) -> BudgetInputError:
    why = exc.strerror or str(exc) or type(exc).__name__
    return BudgetInputError(f"The output file '{p}' could not be written ({why}); no file was written or replaced.")


class FileSet:
    """Output files written together: all are moved into place, or none is.

    Use as a context manager: :meth:`add` writes each file to a temporary file beside its
    destination at once; :meth:`commit` moves them all into place. Leaving the block without a
    commit (an error, a signal turned into an exception) removes every temporary file and any
    folder :meth:`make_folder` made.

    Parameters
    ----------
    force : bool
        Replace existing files; without it an existing file is an error (checked again at the move).
    """

    def __init__(self, force: bool) -> None:
        self.force = force
        self._temps: list[tuple[Path, Path]] = []
        self._folders: list[Path] = []
        self._done = False

    def __enter__(self) -> FileSet:
        return self

    def __exit__(self, *exc) -> None:
        if not self._done:
            self.discard()

    def make_folder(self, folder: Path) -> None:
        """Make ``folder`` (its parent must exist); it is removed again if nothing is committed."""
        folder = Path(folder)
        if folder.is_dir():
            return
        try:
            folder.mkdir()
        except FileExistsError:
            raise _refuse(folder, "exists and is not a folder") from None
        except OSError as exc:
            raise BudgetInputError(f"The folder '{folder}' could not be made ({exc.strerror}).") from None
        self._folders.append(folder)

    def add(self, dest: Path, write: Callable[[Path], None]) -> None:
        """Write one file's whole content to a temporary file beside ``dest`` (``write(tmp_path)``)."""
        dest = Path(dest)
        tmp = None
        try:
            tmp = _reserve_temp(dest)
            self._temps.append((tmp, dest))
            write(tmp)
            _fsync(tmp)
        except OSError as exc:
            raise _unwritable(dest, exc) from None

    def commit(self) -> list[Path]:
        """Move every file into place, in the order added; on failure none stays moved."""
        moved: list[tuple[Path, Path | None]] = []
        dest = Path()
        try:
            for tmp, dest in self._temps:
                backup = _backup(dest) if self.force else None
                try:
                    if self.force:
                        os.replace(tmp, dest)
                    else:
                        _move_no_replace(tmp, dest)
                except BaseException:
                    if backup is not None:
                        _remove(backup)
                    raise
                moved.append((dest, backup))
                _PENDING.discard(tmp)
        except BaseException as exc:
            for done, backup in reversed(moved):
                _undo(done, backup)
            self.discard()
            if isinstance(exc, OSError):
                raise _unwritable(dest, exc) from None
            raise
        for _, backup in moved:
            if backup is not None:
                _remove(backup)
        self._done = True
        return [dest for _, dest in self._temps]

    def discard(self) -> None:
        """Remove every temporary file and every folder made (if it is empty)."""
        for tmp, _ in self._temps:
            _remove(tmp)
        for folder in reversed(self._folders):
            try:
                folder.rmdir()
            except OSError:
                pass
        self._done = True


def _remove(p: Path) -> None:
    try:
        p.unlink(missing_ok=True)
    except OSError:
        pass
    _PENDING.discard(p)


def remove_pending() -> None:
    """Remove every temporary file this process has not yet moved into place (the signal path)."""
    for p in list(_PENDING):
        _remove(p)


def _reserve_temp(dest: Path, kind: str = "tmp") -> Path:
    """Create an empty, uniquely named file beside ``dest`` (mode 0o666 less the umask)."""
    for _ in range(100):
        tmp = dest.with_name(f".{dest.name}.{secrets.token_hex(4)}.{kind}")
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            continue
        _PENDING.add(tmp)
        os.close(fd)
        return tmp
    raise BudgetInputError(f"No temporary file could be made beside '{dest}'.")  # pragma: no cover


def _backup(dest: Path) -> Path | None:
    """A hard link to the file ``dest`` replaces, so that a failed commit can put it back."""
    if not dest.is_file() or dest.is_symlink():
        return None
    for _ in range(100):
        bak = dest.with_name(f".{dest.name}.{secrets.token_hex(4)}.old")
        try:
            os.link(dest, bak)
        except FileExistsError:
            continue
        except OSError:  # no hard links here: the old file cannot be kept
            return None
        _PENDING.add(bak)
        return bak
    return None  # pragma: no cover


def _undo(dest: Path, backup: Path | None) -> None:
    try:
        if backup is not None:
            os.replace(backup, dest)
            _PENDING.discard(backup)
        elif not dest.is_symlink():
            dest.unlink(missing_ok=True)
    except OSError:  # pragma: no cover - best effort on a failing disk
        pass


def _fsync(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def atomic_write(dest: Path, write: Callable[[Path], None], *, force: bool, inputs: Iterable[Path] = ()) -> Path:
    """Write one file through a temporary file in the same folder, then move it into place.

    Parameters
    ----------
    dest : Path
        The file to write.
    write : callable
        ``write(tmp_path)`` writes the whole content to ``tmp_path``.
    force : bool
        Replace an existing ``dest``; without it an existing file is an error.
    inputs : iterable of Path
        Files the command reads; ``dest`` may not be one of them.

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
    check_targets([dest], force, inputs=inputs)
    with FileSet(force) as files:
        files.add(dest, write)
        files.commit()
    return dest


def _move_no_replace(tmp: Path, dest: Path) -> None:
    try:
        os.link(tmp, dest)
    except FileExistsError:
        raise BudgetInputError(f"The output file '{dest}' exists; pass --force to replace it.") from None
    except OSError:  # no hard links on this file system
        if os.path.lexists(dest):
            raise BudgetInputError(f"The output file '{dest}' exists; pass --force to replace it.") from None
        os.replace(tmp, dest)
        return
    tmp.unlink()
