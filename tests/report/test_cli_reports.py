"""``thetabudget run ... --xlsx --md --csv --plots [--force]`` in process."""

from __future__ import annotations

from pathlib import Path

import openpyxl

from budget.cli import main
from tests.paths import TEMPLATES

TEMPLATE = TEMPLATES / "gauge_static.toml"
RUN = ["--trials", "20000", "--seed", "1"]


def _snapshot(folder: Path) -> dict[str, tuple[bytes, int, int]]:
    return {str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_ino, p.stat().st_mtime_ns)
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_run_writes_the_reports_and_refuses_to_overwrite(tmp_path, capsys):
    out = {"--xlsx": tmp_path / "b.xlsx", "--md": tmp_path / "b.md", "--csv": tmp_path / "b.csv",
           "--plots": tmp_path / "plots"}
    argv = ["run", str(TEMPLATE), *RUN, *(x for k, v in out.items() for x in (k, str(v)))]
    assert main(argv) == 0
    stdout = capsys.readouterr().out
    for key in ("--xlsx", "--md", "--csv"):
        assert out[key].is_file() and f"wrote {out[key]}" in stdout
    pngs = sorted(out["--plots"].glob("*.png"))
    assert len(pngs) == 9
    assert openpyxl.load_workbook(out["--xlsx"]).sheetnames[0] == "Summary"
    assert "# Uncertainty budget:" in out["--md"].read_text(encoding="utf-8")

    before = _snapshot(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "--force" in err and str(out["--xlsx"]) in err and err.count("\n") == 1
    assert _snapshot(tmp_path) == before  # byte for byte, same files, not touched

    assert main([*argv, "--force"]) == 0
    after = _snapshot(tmp_path)
    assert set(after) == set(before)
    assert all(after[k][1] != before[k][1] for k in after)  # every file replaced


def test_an_existing_plot_alone_stops_the_run(tmp_path, capsys):
    plots = tmp_path / "plots"
    plots.mkdir()
    (plots / "P2_monte_carlo.png").write_bytes(b"keep me")
    md = tmp_path / "b.md"
    assert main(["run", str(TEMPLATE), *RUN, "--md", str(md), "--plots", str(plots)]) == 2
    err = capsys.readouterr().err
    assert "P2_monte_carlo.png" in err and "--force" in err
    assert not md.exists()
    assert [p.name for p in plots.iterdir()] == ["P2_monte_carlo.png"]
