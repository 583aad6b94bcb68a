"""The user's files are safe: no replacing without force, no half-written file, refusals before writing."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

import budget.report.safe_write as safe_write
import budget.report.workbook as workbook
from budget.errors import BudgetInputError
from budget.report.files import write_reports
from budget.report.safe_write import atomic_write


def _snapshot(folder: Path) -> dict[str, tuple[bytes, int, int]]:
    """Every file under ``folder``: bytes, inode and modification time."""
    return {str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_ino, p.stat().st_mtime_ns)
            for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture()
def written(gauge, tmp_path):
    paths = {"xlsx": tmp_path / "b.xlsx", "md": tmp_path / "b.md", "csv": tmp_path / "b.csv"}
    out = write_reports(gauge, **paths)
    assert out == list(paths.values())
    return paths


def test_existing_files_are_not_replaced_without_force(gauge, written, tmp_path):
    before = _snapshot(tmp_path)
    for key, path in written.items():
        with pytest.raises(BudgetInputError, match="--force") as err:
            write_reports(gauge, **{key: path})
        assert str(path) in str(err.value)
    assert _snapshot(tmp_path) == before


def test_force_replaces(gauge, written, tmp_path):
    before = _snapshot(tmp_path)
    write_reports(gauge, **written, force=True)
    after = _snapshot(tmp_path)
    assert set(after) == set(before)
    assert all(after[k][1] != before[k][1] for k in after)  # new files moved into place
    assert not list(tmp_path.glob(".*.tmp"))


def test_an_interrupted_workbook_save_leaves_the_old_file(gauge, written, tmp_path, monkeypatch):
    old = written["xlsx"].read_bytes()

    def broken_save(wb, path):
        Path(path).write_bytes(b"PK\x03\x04 half a workbook")  # the temporary file is written...
        raise RuntimeError("disk full")  # ...and then the save fails

    monkeypatch.setattr(workbook, "save_workbook", broken_save)
    with pytest.raises(RuntimeError, match="disk full"):
        write_reports(gauge, xlsx=written["xlsx"], force=True)
    assert written["xlsx"].read_bytes() == old
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.csv", "b.md", "b.xlsx"]


def test_a_failed_move_leaves_the_old_file(gauge, written, tmp_path, monkeypatch):
    before = _snapshot(tmp_path)

    def broken_replace(src, dst):
        assert Path(src).stat().st_size > 0  # the whole new file was written first
        raise OSError("no space left on device")

    monkeypatch.setattr(safe_write.os, "replace", broken_replace)
    with pytest.raises(BudgetInputError, match="could not be written.*no space"):
        write_reports(gauge, md=written["md"], force=True)
    assert _snapshot(tmp_path) == before


def test_nothing_is_written_when_one_target_is_refused(gauge, written, tmp_path):
    new_md = tmp_path / "new.md"
    with pytest.raises(BudgetInputError, match="b.csv"):
        write_reports(gauge, md=new_md, csv=written["csv"])
    assert not new_md.exists()


def test_an_existing_plot_is_refused_before_anything_is_written(gauge, tmp_path):
    plots = tmp_path / "plots"
    plots.mkdir()
    (plots / "P1_pareto.png").write_bytes(b"mine")
    md = tmp_path / "new.md"
    with pytest.raises(BudgetInputError, match="P1_pareto.png.*--force"):
        write_reports(gauge, md=md, plots=plots)
    assert not md.exists()
    assert sorted(p.name for p in plots.iterdir()) == ["P1_pareto.png"]
    assert (plots / "P1_pareto.png").read_bytes() == b"mine"


def test_a_plots_path_that_is_a_file_is_refused(gauge, tmp_path):
    f = tmp_path / "plots"
    f.write_text("not a folder")
    with pytest.raises(BudgetInputError, match="not a folder"):
        write_reports(gauge, plots=f)


def test_a_missing_folder_is_refused(gauge, tmp_path):
    with pytest.raises(BudgetInputError, match="does not exist"):
        write_reports(gauge, md=tmp_path / "no" / "such" / "b.md")


def test_two_outputs_cannot_share_a_file(gauge, tmp_path):
    with pytest.raises(BudgetInputError, match="same file"):
        write_reports(gauge, md=tmp_path / "b.txt", csv=tmp_path / "b.txt")
    assert not (tmp_path / "b.txt").exists()


def test_a_file_that_appears_meanwhile_is_not_replaced(tmp_path):
    dest = tmp_path / "race.md"

    def write(tmp: Path) -> None:
        tmp.write_text("new")
        dest.write_text("someone else's")  # appears while we write

    with pytest.raises(BudgetInputError, match="--force"):
        atomic_write(dest, write, force=False)
    assert dest.read_text() == "someone else's"
    assert [p.name for p in tmp_path.iterdir()] == ["race.md"]


def test_new_files_get_the_usual_permissions(tmp_path):
    mask = os.umask(0o022)
    try:
        path = atomic_write(tmp_path / "p.md", lambda t: t.write_text("x"), force=False)
    finally:
        os.umask(mask)
    assert path.stat().st_mode & 0o777 == 0o644
