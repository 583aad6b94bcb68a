"""Faults while writing: a full disk, a read-only folder, a signal. The promise holds through each: one
line on stderr, no partial or 0-byte file, no temporary file left, an earlier file kept byte for byte,
files written together all or none, and new files with the user's umask.
"""

from __future__ import annotations

import os
import resource
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

import budget.report.safe_write as safe_write
from budget.errors import BudgetInputError
from budget.report.safe_write import FileSet
from tests.paths import ROOT
from tests.promise import call, check_promise, snapshot
from tests.workspace import frames_args, make_workspace

RUN = ["--trials", "2000", "--seed", "1", "--quiet"]


@pytest.fixture()
def ws(tmp_path) -> dict[str, Path]:
    return make_workspace(tmp_path)


def _leftovers(folder: Path) -> list[str]:
    return [p.name for p in folder.rglob(".*") if p.name.endswith((".tmp", ".old"))]


# ------------------------------------------------------------------ all or none
def test_files_written_together_are_all_or_none(tmp_path):
    def broken(tmp: Path) -> None:
        tmp.write_text("half")
        raise OSError(28, "No space left on device")

    with pytest.raises(BudgetInputError, match=r"b\.md' could not be written \(No space left on device\)"):
        with FileSet(force=False) as files:
            files.add(tmp_path / "a.md", lambda tmp: tmp.write_text("whole"))
            files.add(tmp_path / "b.md", broken)
            files.commit()
    assert list(tmp_path.iterdir()) == []


def test_a_failed_move_puts_every_replaced_file_back(tmp_path, monkeypatch):
    for name in ("a.md", "b.md"):
        (tmp_path / name).write_text(f"old {name}")
    real, calls = os.replace, []

    def second_fails(src, dst):
        calls.append(dst)
        if len(calls) == 2:
            raise OSError(5, "Input/output error")
        real(src, dst)

    monkeypatch.setattr(safe_write.os, "replace", second_fails)
    with pytest.raises(BudgetInputError, match="could not be written"):
        with FileSet(force=True) as files:
            files.add(tmp_path / "a.md", lambda tmp: tmp.write_text("new a"))
            files.add(tmp_path / "b.md", lambda tmp: tmp.write_text("new b"))
            files.commit()
    monkeypatch.undo()
    assert {p.name: p.read_text() for p in tmp_path.iterdir()} == {"a.md": "old a.md", "b.md": "old b.md"}


# ------------------------------------------------------------------ a full disk (a file-size limit)
def _limited(argv: list[str], cwd: Path, limit: int) -> subprocess.CompletedProcess:
    """``python -m budget argv`` with writes beyond ``limit`` bytes failing as on a full disk (EFBIG)."""
    def cap() -> None:
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, resource.RLIM_INFINITY))

    env = {**os.environ, "PYTHONDONTWRITEBYTECODE": "1", "PYTHONPATH": str(ROOT)}
    return subprocess.run([sys.executable, "-m", "budget", *map(str, argv)], cwd=cwd, capture_output=True, text=True,
                          preexec_fn=cap, env=env, timeout=300)


@pytest.mark.parametrize("kind", ["gauge", "choose"])
def test_new_on_a_full_disk_leaves_no_file_and_the_next_new_works(tmp_path, kind):
    p = _limited(["new", kind, "rig.toml"], tmp_path, limit=200)
    assert p.returncode == 2 and p.stderr.count("\n") == 1 and "could not be written" in p.stderr, p.stderr
    assert "Traceback" not in p.stderr and p.stdout == ""
    assert list(tmp_path.iterdir()) == []  # no 0-byte starter, no temporary file, no half cameras.csv
    assert _limited(["new", kind, "rig.toml"], tmp_path, limit=10**8).returncode == 0


def test_reports_on_a_full_disk_leave_nothing(ws, tmp_path):
    before = snapshot(tmp_path)
    p = _limited(["run", ws["rig"], *RUN, "--md", "b.md", "--xlsx", "b.xlsx", "--csv", "b.csv"], tmp_path,
                 limit=4000)
    assert p.returncode == 2 and p.stderr.count("\n") == 1 and "could not be written" in p.stderr, p.stderr
    assert p.stdout == ""  # nothing printed before the files were in place
    assert snapshot(tmp_path) == before and not _leftovers(tmp_path)


@pytest.mark.parametrize("argv", [["choose", "choose.toml", "--xlsx", "c.xlsx", "--plots", "plots"],
                                  ["frames", "--out", "f.csv", "FRAMES"]], ids=["choose", "frames"])
def test_other_writers_on_a_full_disk(ws, tmp_path, argv):
    argv = [a for x in argv for a in (frames_args(ws) if x == "FRAMES" else [x])]
    before = snapshot(tmp_path)
    p = _limited(argv, tmp_path, limit=300)
    assert p.returncode == 2 and p.stderr.count("\n") == 1 and "could not be written" in p.stderr, p.stderr
    assert snapshot(tmp_path) == before and not _leftovers(tmp_path) and not (tmp_path / "plots").exists()


# ------------------------------------------------------------------ a read-only folder at write time
def test_a_folder_that_turns_read_only_is_one_line(ws, tmp_path, monkeypatch):
    real = os.open

    def denied(path, flags, mode=0o777, **kw):
        if str(path).endswith(".tmp"):
            raise PermissionError(13, "Permission denied", str(path))
        return real(path, flags, mode, **kw)

    monkeypatch.setattr(safe_write.os, "open", denied)
    for argv in (["new", "gauge", tmp_path / "g.toml"], ["run", ws["rig"], *RUN, "--md", tmp_path / "b.md"],
                 ["choose", ws["choose"], "--rig-out", tmp_path / "top.toml"]):
        o = call(argv, tmp_path)
        check_promise(o)
        assert o.code == 2 and "Permission denied" in o.err, o.err


# ------------------------------------------------------------------ signals
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT, signal.SIGHUP])
def test_a_signal_while_writing_removes_the_temporary_files(ws, tmp_path, monkeypatch, sig):
    import budget.report.markdown as markdown

    if signal.getsignal(sig) is signal.SIG_IGN:  # the tool keeps a signal its caller ignores, as it should
        pytest.skip(f"{sig.name} is ignored in this test process (a shell without job control starts background "
                    "jobs so); nothing to catch")

    real = markdown.render_markdown

    def interrupted(result):
        os.kill(os.getpid(), sig)  # the signal arrives while the reports are being written
        time.sleep(0.5)
        return real(result)

    monkeypatch.setattr(markdown, "render_markdown", interrupted)
    before = snapshot(tmp_path)
    o = call(["run", ws["rig"], *RUN, "--csv", tmp_path / "b.csv", "--md", tmp_path / "b.md"], tmp_path)
    assert o.code == 128 + sig and o.err.count("\n") == 1 and "unfinished files were removed" in o.err, o.err
    assert snapshot(tmp_path) == before and not _leftovers(tmp_path)
    assert signal.getsignal(signal.SIGTERM) is not None  # the handlers were put back


def test_sigterm_to_a_real_process_leaves_no_temporary_file(tmp_path):
    """A separate process, killed by SIGTERM while its writer holds a temporary file."""
    code = ("import time; from pathlib import Path; from budget.cli import _signals_raise\n"
            "from budget.report.safe_write import atomic_write\n"
            "def slow(tmp):\n    tmp.write_text('part'); print('writing', flush=True); time.sleep(30)\n"
            "with _signals_raise():\n    atomic_write(Path('out.md'), slow, force=False)\n")
    p = subprocess.Popen([sys.executable, "-c", code], cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         text=True, env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert p.stdout.readline().strip() == "writing"
    assert _leftovers(tmp_path)  # the temporary file exists now...
    p.send_signal(signal.SIGTERM)
    p.wait(timeout=30)
    assert list(tmp_path.iterdir()) == []  # ...and is gone, with no out.md


# ------------------------------------------------------------------ modes
@pytest.mark.parametrize("mask", [0o022, 0o027])
def test_every_command_writes_with_the_users_umask(ws, tmp_path, mask):
    out = tmp_path / "out"
    out.mkdir()
    old = os.umask(mask)
    try:
        for argv in (["new", "choose", out / "c.toml"],
                     ["run", ws["rig"], *RUN, "--md", out / "b.md", "--csv", out / "b.csv", "--xlsx", out / "b.xlsx",
                      "--plots", out / "plots"],
                     ["choose", ws["choose"], "--xlsx", out / "c.xlsx", "--rig-out", out / "top.toml",
                      "--plots", out / "cplots"],
                     ["frames", "--out", out / "f.csv", *frames_args(ws)]):
            assert call(argv, tmp_path).code == 0, argv
    finally:
        os.umask(old)
    files = [p for p in out.rglob("*") if p.is_file()]
    assert len(files) >= 12
    assert {oct(p.stat().st_mode & 0o777) for p in files} == {oct(0o666 & ~mask)}
    assert {oct(p.stat().st_mode & 0o777) for p in out.rglob("*") if p.is_dir()} == {oct(0o777 & ~mask)}
