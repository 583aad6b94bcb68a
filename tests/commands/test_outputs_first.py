"""Every output path of every sub-command is refused before any work and before anything is printed:
a missing folder, a folder where a file is wanted, two outputs on one path, a dangling symbolic link,
a read-only folder, and an output that is one of the command's inputs (even with --force). With one
good and one bad path nothing is written. The README's promise; each case is one line, exit 2.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

import budget.report.safe_write as safe_write
from tests.promise import call, check_promise
from tests.workspace import frames_args, make_workspace

RUN = ["--trials", "2000", "--seed", "1", "--quiet"]


@pytest.fixture()
def ws(tmp_path) -> dict[str, Path]:
    return make_workspace(tmp_path)


def _cases(ws: dict[str, Path], d: Path) -> dict[str, tuple[list, str]]:
    """Sub-command and a bad output → (argv, what the one line must say)."""
    rig, bench, ch = str(ws["rig"]), str(ws["bench"]), str(ws["choose"])
    (d / "folder.xlsx").mkdir()
    (d / "dangling.md").symlink_to(d / "nowhere.md")
    os.mkfifo(d / "fifo")
    missing = d / "no" / "such" / "file"
    return {
        "run missing folder": (["run", rig, *RUN, "--md", d / "ok.md", "--csv", f"{missing}.csv"], "does not exist"),
        "run folder as file": (["run", rig, *RUN, "--xlsx", d / "folder.xlsx"], "is a folder"),
        "run two on one path": (["run", rig, *RUN, "--md", d / "x.txt", "--csv", d / "x.txt"], "two outputs"),
        "run dangling link": (["run", rig, *RUN, "--md", d / "dangling.md"], "symbolic link"),
        "run onto the rig file": (["run", rig, *RUN, "--md", rig, "--force"], "is an input"),
        "run onto its data file": (["run", rig, *RUN, "--csv", ws["data"], "--force"], "is an input"),
        "run onto an image": (["run", rig, *RUN, "--md", ws["image"], "--force"], "is an input"),
        "run plots is a file": (["run", rig, *RUN, "--plots", ws["data"]], "not a folder"),
        "run name too long": (["run", rig, *RUN, "--md", d / ("a" * 250 + ".md")], "too long"),
        "run onto a device (--force)": (["run", rig, *RUN, "--md", "/dev/null", "--force"], "not a regular file"),
        "run onto a pipe (--force)": (["run", rig, *RUN, "--csv", d / "fifo", "--force"], "not a regular file"),
        "run plots in missing folder": (["run", rig, *RUN, "--plots", missing], "does not exist"),
        "choose missing folder": (["choose", ch, "--xlsx", f"{missing}.xlsx"], "does not exist"),
        "choose folder as file (--force)": (["choose", ch, "--xlsx", d / "folder.xlsx", "--force"], "is a folder"),
        "choose two on one path": (["choose", ch, "--xlsx", d / "c.x", "--rig-out", d / "c.x"], "two outputs"),
        "choose onto its cameras file": (["choose", ch, "--rig-out", ws["cameras"], "--force"], "is an input"),
        "choose onto the choose file": (["choose", ch, "--xlsx", ch, "--force"], "is an input"),
        "choose dangling link": (["choose", ch, "--rig-out", d / "dangling.md"], "symbolic link"),
        "choose plots is a file": (["choose", ch, "--plots", ws["cameras"]], "not a folder"),
        "frames missing folder": (["frames", "--out", f"{missing}.csv", *frames_args(ws)], "does not exist"),
        "frames folder as file (--force)": (["frames", "--out", d / "folder.xlsx", "--force", *frames_args(ws)],
                                            "is a folder"),
        "frames onto a frame": (["frames", "--out", ws["frames_Z"][0], "--force", *frames_args(ws)], "is an input"),
        "frames dangling link": (["frames", "--out", d / "dangling.md", *frames_args(ws)], "symbolic link"),
        "render into a file": (["render", bench, ws["data"], "--frames", "4"], "not a folder"),
        "render into a missing folder's child": (["render", bench, missing, "--frames", "4"], "does not exist"),
        "render dangling link": (["render", bench, d / "dangling.md", "--frames", "4"], "symbolic link"),
        "new onto a dangling link": (["new", "gauge", d / "dangling.md"], "symbolic link"),
        "new onto a folder": (["new", "gauge", d / "folder.xlsx"], "is a folder"),
        "new in a missing folder": (["new", "choose", f"{missing}.toml"], "does not exist"),
        "new onto a file": (["new", "bench", rig], "exists"),
    }


CASES = ["run missing folder", "run folder as file", "run two on one path", "run dangling link",
         "run onto the rig file", "run onto its data file", "run onto an image", "run plots is a file",
         "run plots in missing folder", "run name too long", "run onto a device (--force)", "run onto a pipe (--force)",
         "choose missing folder", "choose folder as file (--force)",
         "choose two on one path", "choose onto its cameras file", "choose onto the choose file",
         "choose dangling link", "choose plots is a file", "frames missing folder", "frames folder as file (--force)",
         "frames onto a frame", "frames dangling link", "render into a file", "render into a missing folder's child",
         "render dangling link", "new onto a dangling link", "new onto a folder", "new in a missing folder",
         "new onto a file"]


@pytest.mark.parametrize("case", CASES)
def test_a_bad_output_is_refused_first_in_one_line(ws, tmp_path, case, monkeypatch):
    argv, says = _cases(ws, tmp_path)[case]

    def no_work(*a, **k):  # the refusal must come before any computation
        raise AssertionError("work started before the output paths were checked")

    import budget.choice.rank as rank
    import budget.imaging.frame_sets as frame_sets
    import budget.rig.budget as rig_budget
    import budget.rig.scene as scene

    monkeypatch.setattr(rig_budget, "run_budget", no_work)
    monkeypatch.setattr(rank, "choose", no_work)
    monkeypatch.setattr(frame_sets, "locate_positions", no_work)
    monkeypatch.setattr(scene, "render_frames", no_work)
    o = call(argv, tmp_path)
    check_promise(o, inputs=("rig.toml", "positions.csv", "cameras.csv", "choose.toml", "frames/Z_01.png"))
    assert o.code == 2 and o.out == "", o.err
    assert says in o.err, o.err


def test_the_command_table_is_covered():
    """Every sub-command that writes a file has cases here (the others write only to stdout)."""
    from budget.cli import _MODULES

    writers = {"run", "choose", "frames", "render", "new"}
    assert writers <= set(_MODULES)
    assert {c.split()[0] for c in CASES} == writers


def test_a_read_only_folder_is_refused_before_any_work(ws, tmp_path, monkeypatch):
    """As root a mode-0555 folder is still writable, so the check is made to see one (the write-time
    failure of a read-only folder is in tests/report/test_faults.py)."""
    ro = tmp_path / "ro"
    ro.mkdir()
    real = os.access
    monkeypatch.setattr(safe_write.os, "access", lambda p, mode: False if Path(p) == ro else real(p, mode))
    for argv in (["run", ws["rig"], *RUN, "--md", ro / "b.md"], ["choose", ws["choose"], "--xlsx", ro / "c.xlsx"],
                 ["frames", "--out", ro / "f.csv", *frames_args(ws)], ["new", "gauge", ro / "g.toml"],
                 ["render", ws["bench"], ro / "shots", "--frames", "4"]):
        o = call(argv, tmp_path)
        check_promise(o)
        assert o.code == 2 and "read-only" in o.err and o.out == "", (argv, o.err)


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into a mode-0555 folder")
def test_a_really_read_only_folder_is_refused(ws, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        o = call(["new", "gauge", ro / "g.toml"], tmp_path)
    finally:
        ro.chmod(0o755)
    assert o.code == 2 and "read-only" in o.err


def test_one_good_and_one_bad_output_write_nothing(ws, tmp_path):
    o = call(["run", ws["rig"], *RUN, "--md", tmp_path / "good.md", "--xlsx", tmp_path / "nope" / "b.xlsx"], tmp_path)
    check_promise(o)
    assert o.code == 2 and not (tmp_path / "good.md").exists()
    (tmp_path / "folder").mkdir()
    o = call(["choose", ws["choose"], "--rig-out", tmp_path / "top.toml", "--xlsx", tmp_path / "folder"], tmp_path)
    check_promise(o)
    assert o.code == 2 and not (tmp_path / "top.toml").exists()


def test_force_still_never_writes_an_input_through_a_link(ws, tmp_path):
    """An output given as a symbolic link to the rig file is the rig file."""
    link = tmp_path / "link.md"
    link.symlink_to(ws["rig"])
    o = call(["run", ws["rig"], *RUN, "--md", link, "--force"], tmp_path)
    check_promise(o, inputs=("rig.toml",))
    assert o.code == 2 and "is an input" in o.err
