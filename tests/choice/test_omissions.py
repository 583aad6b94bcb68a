"""Every report of ``choose`` says which components of a rig budget its candidates' U leaves out.

The choice predicts the camera's part; the pointer's, the mount's, fixed-pattern noise and the source's
errors are not in it, so each candidate's U is optimistic by them (issue 10: no silent omission). The
rig that ``--rig-out`` writes lists them among its assumptions when run.
"""

from __future__ import annotations

import json

from openpyxl import load_workbook

from budget.choice.model import OMITTED
from budget.inputs.rig_file import load_rig
from tests.promise import call
from tests.workspace import make_workspace


def test_every_choose_report_names_the_omissions(tmp_path):
    ws = make_workspace(tmp_path)
    o = call(["choose", ws["choose"], "--xlsx", tmp_path / "c.xlsx", "--rig-out", tmp_path / "top.toml"], tmp_path)
    assert o.code == 0, o.err
    assert "Optimistic omissions" in o.out
    for component, _ in OMITTED:
        assert component in o.out
    j = call(["choose", ws["choose"], "--json"], tmp_path)
    doc = json.loads(j.out)
    assert [d["component"] for d in doc["omitted"]] == [c for c, _ in OMITTED]
    prov = load_workbook(tmp_path / "c.xlsx")["Provenance"]
    cells = {prov.cell(r, 1).value: prov.cell(r, 2).value for r in range(1, prov.max_row + 1)}
    assert all(c in cells["not modelled"] for c, _ in OMITTED)
    # the rig written for the top pick: run lists the pointer's and the mount's terms as omissions
    fields = {a.field for a in load_rig(tmp_path / "top.toml").assumptions}
    assert any(f.startswith("pointer") for f in fields) and any("mount" in f for f in fields), fields


def test_a_narrow_terminal_gets_a_table_that_fits_and_is_told_what_it_lacks(tmp_path, monkeypatch):
    from budget.report.choice import NARROW_DROPS

    ws = make_workspace(tmp_path)
    wide = call(["choose", ws["choose"]], tmp_path)  # not a terminal, no COLUMNS: the whole table
    assert "Columns left out" not in wide.out and "mm/px" in wide.out
    for width in (80, 100, 120):
        monkeypatch.setenv("COLUMNS", str(width))
        o = call(["choose", ws["choose"]], tmp_path)
        assert o.code == 0, o.err
        assert max(len(line) for line in o.out.splitlines()) <= width, width
        said = next(line for line in o.out.splitlines() if line.startswith("Columns left out"))
        assert f"({width})" in said and "mm/px" in said
        header = next(line for line in o.out.splitlines() if line.startswith(" #"))
        assert "camera" in header and "margin %" in header and "meets" in header
        assert "mm/px" not in header and NARROW_DROPS[0] == "mm/px"
        for row in wide.out.splitlines():  # every candidate row is still there, by its rank
            if row[:3].strip().isdigit():
                assert any(line.startswith(row[:4]) for line in o.out.splitlines())
