"""The workbook's live formulas, recomputed by the ``formulas`` package, against the engine.

Every u_c, ν_eff, k and U on the Budget sheet (and the Summary cells linked to them), every
component's contribution and share, must equal the engine's numbers to a relative 1e-9:
the formulas restate the engine's arithmetic (root sum of squares, Welch–Satterthwaite with
truncation, t quantile), so only floating-point rounding may differ. The function spellings
are ``_xlfn.T.INV.2T`` and ``_xlfn.NORM.S.INV``, which Excel 2010+, LibreOffice and
``formulas`` all evaluate.
"""

from __future__ import annotations

import math
import re

import formulas
import openpyxl
import pytest

from budget.report.workbook import build_workbook, save_workbook
from budget.report.workbook_budget import CLOSING

REL = 1e-9
_KEY = re.compile(r"^'\[(?P<book>[^\]]+)\](?P<sheet>[^']+)'!(?P<cell>[A-Z]+\d+)$")


class Recalculated:
    """A saved workbook, its openpyxl view and every cell as ``formulas`` computes it.

    ``formulas`` rounds every number it reads from a file to 15 decimal places
    (``formulas/excel/__init__.py``, ``compile_cell``), so an input of 1.1e-7 would keep
    only 9 significant digits; Excel and LibreOffice keep the full double. The numbers the
    file holds are therefore fed back as inputs, exactly as openpyxl reads them.
    """

    def __init__(self, result, path):
        self.result = result
        save_workbook(build_workbook(result), path)
        self.book = openpyxl.load_workbook(path)
        self.model = formulas.ExcelModel().loads(str(path)).finish()
        self.keys: dict[tuple[str, str], str] = {}
        self.exact = {}
        for ws in self.book.worksheets:
            for row in ws.iter_rows():
                for cell in row:
                    key = f"'[{path.name}]{ws.title.upper()}'!{cell.coordinate}"
                    if cell.data_type == "n" and isinstance(cell.value, float) and key in self.model.cells:
                        self.exact[key] = cell.value
        assert self.exact
        self.values = self._values(self.model.calculate(inputs=self.exact))

    def _values(self, solution) -> dict[tuple[str, str], object]:
        out = {}
        for key, ranges in solution.items():
            m = _KEY.match(key)
            if m is None:
                continue
            where = (m["sheet"].upper(), m["cell"])
            self.keys[where] = key
            out[where] = ranges.value[0][0] if hasattr(ranges, "value") else ranges
        return out

    def value(self, sheet: str, cell: str):
        return self.values[(sheet.upper(), cell)]

    def recalc(self, changes: dict[tuple[str, str], float]) -> dict[tuple[str, str], object]:
        """Recompute after an auditor's edits ``{(sheet, cell): value}``."""
        inputs = dict(self.exact)
        inputs.update({self.keys[(s.upper(), c)]: v for (s, c), v in changes.items()})
        return self._values(self.model.calculate(inputs=inputs))


def budget_rows(book, result) -> list[dict]:
    """Per output, in order: component name -> Budget row, and closing label -> row."""
    ws = book["Budget"]
    labels = [ob.label for ob in result.outputs]
    blocks: list[dict] = []
    for row in range(2, ws.max_row + 1):
        a = ws.cell(row=row, column=1).value
        if a is None:
            continue
        if len(blocks) < len(labels) and a.startswith(f"{labels[len(blocks)]}:"):
            blocks.append({"title": row, "components": {}, "closing": {}})
        elif a in CLOSING:
            blocks[-1]["closing"][a] = row
        elif not blocks[-1]["closing"]:
            blocks[-1]["components"][a] = row
    assert len(blocks) == len(result.outputs)
    assert all(set(b["closing"]) == set(CLOSING) for b in blocks)
    return blocks


def close(a: float, b: float, rel: float = REL, abs_: float = 0.0) -> bool:
    return math.isclose(float(a), float(b), rel_tol=rel, abs_tol=abs_)


def nu_matches(cell, nu: float) -> bool:
    """ν_eff as the engine reports it: ∞ is the text '∞' in the workbook."""
    if math.isinf(nu):
        return cell == "∞"
    return not isinstance(cell, str) and close(cell, nu)


@pytest.fixture(scope="module", params=["gauge", "sweep", "moving", "type_a", "correlated"])
def recalculated(request, tmp_path_factory):
    result = request.getfixturevalue(request.param)
    return request.param, Recalculated(result, tmp_path_factory.mktemp("xl") / f"{request.param}.xlsx")


def test_closing_rows_equal_the_engine(recalculated):
    name, xl = recalculated
    for ob, block in zip(xl.result.outputs, budget_rows(xl.book, xl.result), strict=True):
        lin = ob.linear
        got = {what: xl.value("Budget", f"J{row}") for what, row in block["closing"].items()}
        assert close(got["u_c"], lin.u), (name, ob.name, got["u_c"], lin.u)
        assert nu_matches(got["ν_eff"], lin.nu_eff), (name, ob.name, got["ν_eff"], lin.nu_eff)
        assert close(got["p"], lin.p)
        assert close(got["k"], lin.k), (name, ob.name, got["k"], lin.k)
        assert close(got["U"], lin.U), (name, ob.name, got["U"], lin.U)


def test_summary_links_follow_the_budget(recalculated):
    name, xl = recalculated
    ws = xl.book["Summary"]
    rows: dict[str, int] = {}
    for r in range(1, ws.max_row + 1):  # the results table comes before the warnings
        rows.setdefault(ws.cell(row=r, column=1).value, r)
    heads = None
    for r in range(1, ws.max_row + 1):
        if ws.cell(row=r, column=1).value == "output":
            heads = {ws.cell(row=r, column=c).value: c for c in range(1, ws.max_column + 1)}
    assert heads is not None
    col = {k: openpyxl.utils.get_column_letter(heads[k]) for k in ("u_c", "ν_eff", "k", "U")}
    for ob in xl.result.outputs:
        r = rows[ob.label]
        assert close(xl.value("Summary", f"{col['u_c']}{r}"), ob.linear.u)
        assert nu_matches(xl.value("Summary", f"{col['ν_eff']}{r}"), ob.linear.nu_eff)
        assert close(xl.value("Summary", f"{col['k']}{r}"), ob.linear.k)
        assert close(xl.value("Summary", f"{col['U']}{r}"), ob.linear.U)


def test_components_equal_the_engine(recalculated):
    name, xl = recalculated
    for ob, block in zip(xl.result.outputs, budget_rows(xl.book, xl.result), strict=True):
        groups = {g.name: g for g in ob.linear.groups}
        assert set(block["components"]) == set(groups)
        for comp, row in block["components"].items():
            g = groups[comp]
            assert close(xl.value("Budget", f"J{row}"), g.contribution, abs_=1e-300), (name, ob.name, comp)
            assert close(xl.value("Budget", f"L{row}"), g.percent / 100, abs_=1e-15), (name, ob.name, comp)
            assert nu_matches(xl.value("Budget", f"K{row}"), g.dof)


def test_no_formula_evaluates_to_an_error(recalculated):
    name, xl = recalculated
    errors = {k: v for k, v in xl.values.items() if type(v).__name__ == "XlError"}
    assert not errors, (name, list(errors.items())[:5])


def test_every_input_quantity_is_listed_once_with_its_standard_uncertainty(recalculated):
    name, xl = recalculated
    ws = xl.book["Quantities"]
    names = [ws.cell(row=r, column=1).value for r in range(2, ws.max_row + 1)]
    assert sorted(names) == sorted(xl.result.inputs)
    for r, n in enumerate(names, start=2):
        assert close(xl.value("Quantities", f"H{r}"), xl.result.inputs[n].distribution.u)


def test_formulas_are_live_unless_inputs_are_correlated(recalculated):
    name, xl = recalculated
    ws = xl.book["Budget"]
    for ob, block in zip(xl.result.outputs, budget_rows(xl.book, xl.result), strict=True):
        uc = ws.cell(row=block["closing"]["u_c"], column=10)
        for what in ("ν_eff", "k", "U"):
            assert ws.cell(row=block["closing"][what], column=10).data_type == "f"
        for g in ob.linear.groups:
            cell = ws.cell(row=block["components"][g.name], column=10)
            if name == "correlated" and g.name == "lens distortion":
                assert cell.data_type == "n"
            elif len(g.inputs) == 1:  # |c|·u with c and u on the same row
                assert cell.value == f"=ABS(H{cell.row})*G{cell.row}"
            else:
                assert cell.value.startswith("=SQRT(SUMSQ(Detail!$L$")
        if name == "correlated":
            assert uc.data_type == "n"
            assert "correlated" in ws.cell(row=block["closing"]["u_c"], column=15).value
        else:
            assert uc.data_type == "f" and uc.value.startswith("=SQRT(SUMSQ(")


def test_k_uses_the_t_distribution_spelled_for_excel_libreoffice_and_formulas(recalculated):
    _, xl = recalculated
    ws = xl.book["Budget"]
    block = budget_rows(xl.book, xl.result)[0]
    k = ws.cell(row=block["closing"]["k"], column=10).value
    assert "_xlfn.T.INV.2T(" in k and "_xlfn.NORM.S.INV(" in k


def test_an_auditor_edit_moves_the_total(recalculated):
    """Doubling the tilt bound on Quantities doubles 'camera skew' and moves u_c and U accordingly."""
    name, xl = recalculated
    if name not in ("gauge", "type_a"):
        pytest.skip("one rig of each kind of ν is enough")
    ws = xl.book["Quantities"]
    rows = {ws.cell(row=r, column=1).value: r for r in range(2, ws.max_row + 1)}
    edits = {("Quantities", f"E{rows[n]}"): 2 * xl.result.inputs[n].distribution.quoted[0]
             for n in ("tilt_x_deg", "tilt_y_deg")}
    after = xl.recalc(edits)
    for ob, block in zip(xl.result.outputs, budget_rows(xl.book, xl.result), strict=True):
        skew = next(g for g in ob.linear.groups if g.name == "camera skew").contribution
        row = block["components"]["camera skew"]
        assert close(after[("BUDGET", f"J{row}")], 2 * skew)
        uc_new = math.sqrt(ob.linear.u**2 + 3 * skew**2)
        cr = block["closing"]
        assert close(after[("BUDGET", f"J{cr['u_c']}")], uc_new)
        k_new = after[("BUDGET", f"J{cr['k']}")]
        assert close(after[("BUDGET", f"J{cr['U']}")], k_new * uc_new)
        if math.isinf(ob.linear.nu_eff):
            assert after[("BUDGET", f"J{cr['ν_eff']}")] == "∞"
        else:  # a larger u_c with the same Type A terms: more effective degrees of freedom
            assert after[("BUDGET", f"J{cr['ν_eff']}")] > ob.linear.nu_eff
