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
