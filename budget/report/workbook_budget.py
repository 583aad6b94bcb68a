"""The workbook's live arithmetic: the Quantities, Detail and Budget sheets.

Each editable number is in one cell: an input quantity's value, divisor and ν_i on
**Quantities** (one row per input quantity, shared by every output), its sensitivity c_i
for one output on **Detail** (one row per output × input quantity). **Budget** has one
block per output with one row per component (a group of input quantities); a component's
contribution is ``=ABS(c)*u`` for a single input, ``=SQRT(SUMSQ(Detail!L…))`` for a group.

Formula conventions (written so Excel 2010+, LibreOffice and the ``formulas`` package
evaluate them alike):

* u(x_i) = value / divisor; a divisor of √2, √3 or √6 is written ``=SQRT(n)``.
* |c_i|·u(x_i) = ``ABS(c)*u``; u_c = ``SQRT(SUMSQ(contributions))`` (JCGM 100 eq. 10,
  uncorrelated inputs).
* ν: an infinite ν is the text "∞" (:data:`~budget.report.workbook_cells.INF_TEXT`); a helper
  column holds (|c_i|u)⁴/ν_i, 0 when ν_i is not a number, and
  ν_eff = u_c⁴ / Σ(|c_i|u)⁴/ν_i (Welch–Satterthwaite, JCGM 100 eq. G.2b), "∞" when the sum is
  0, truncated with ``INT`` when ≥ 1 (JCGM 100 G.4.1 note 1), as the engine does. A joint quantity
  (a located point's two axes from the same frames, a sweep's per-point discrepancy) is one term:
  its first Detail row holds (Σ(|c_i|u)²)²/ν and its other rows 0 (Willink 2007, as the engine).
* k = ``_xlfn.T.INV.2T(1-p, ν_eff)`` (two-tailed t quantile, Excel 2010+ and LibreOffice; the
  ``_xlfn.`` prefix is how Excel itself stores that function in a file) or, when ν_eff is "∞",
  ``_xlfn.NORM.S.INV((1+p)/2)``; U = k·u_c.
* Where the engine's number cannot be reproduced by these formulas — correlated inputs (the
  lens residual correlation), whose u_c includes the covariance terms of JCGM 100 eq. 13 — the
  cell holds the engine's value, shaded, with a note saying why.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from openpyxl.worksheet.hyperlink import Hyperlink

from budget.propagation import JointComponent
from budget.report.workbook_cells import (
    BOLD,
    ENGINE_FILL,
    FMT,
    INF_TEXT,
    NOTE,
    dof_cell,
    formula,
    header_row,
    number,
    set_widths,
    text,
    title,
)
from budget.results import OutputBudget, RunResult

__all__ = ["BudgetBlock", "write_formula_sheets", "CLOSING", "BUDGET_COLUMNS", "DETAIL_COLUMNS"]

BUDGET_COLUMNS = [
    "component", "Type", "distribution", "value or half-width", "unit", "divisor", "u(x_i)",
    "sensitivity c_i", "unit of c_i", "|c_i|·u(x_i)", "ν_i", "share of u_c²", "(|c_i|·u(x_i))⁴/ν_i",
    "input quantities", "source / note",
]
DETAIL_COLUMNS = [
    "output", "component", "input quantity", "Type", "distribution", "value or half-width", "unit",
    "divisor", "u(x_i)", "sensitivity c_i", "unit of c_i", "|c_i|·u(x_i)", "ν_i",
    "(|c_i|·u(x_i))⁴/ν_i", "share of u_c²", "source",
]
QUANTITY_COLUMNS = [
    "input quantity", "component", "Type", "distribution", "value or half-width", "unit", "divisor",
    "u(x_i)", "ν_i", "source",
]
CLOSING = ("u_c", "ν_eff", "p", "k", "U")
"""Labels (column A of Budget) of each block's closing rows, whose result is in column J."""

_EXPLAIN = {
    "u_c": "combined standard uncertainty: root sum of squares of the contributions (JCGM 100 eq. 10)",
    "ν_eff": "effective degrees of freedom, Welch–Satterthwaite (JCGM 100 eq. G.2b), truncated (G.4.1)",
    "p": "coverage probability",
    "k": "coverage factor t_p(ν_eff) (JCGM 100 G.3.4); the normal quantile when ν_eff = ∞",
    "U": "expanded uncertainty U = k·u_c (JCGM 100 6.2.1)",
}
_CORRELATED = ("engine value: these inputs are correlated (lens residual correlation), so u_c includes "
               "the covariance terms of JCGM 100 eq. 13, which a root sum of squares would miss")
_REL = 1e-9


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= _REL * max(abs(a), abs(b), 1e-300)


def _c_unit(out_unit: str, in_unit: str) -> str:
    if not in_unit:
        return out_unit
    return f"{out_unit} per {in_unit}" if "/" in out_unit else f"{out_unit}/{in_unit}"


def _divisor(ws, row: int, col: int, d: float):
    for n in (2, 3, 6):
        if abs(d - math.sqrt(n)) <= 1e-15 * d:
            return formula(ws, row, col, f"=SQRT({n})", FMT["divisor"])
    return number(ws, row, col, d, FMT["divisor"])


@dataclass
class BudgetBlock:
    """Where one output's block sits on the Budget sheet."""

    output: OutputBudget
    title_row: int
    comp_rows: dict[str, int] = field(default_factory=dict)
    closing_rows: dict[str, int] = field(default_factory=dict)

    def address(self, what: str, sheet: str = "") -> str:
        """Absolute address of a closing value, e.g. ``Budget!$J$12``."""
        prefix = f"{sheet}!" if sheet else ""
        return f"{prefix}$J${self.closing_rows[what]}"


def _plan(result: RunResult) -> list[BudgetBlock]:
    blocks, r = [], 2
    for ob in result.outputs:
        b = BudgetBlock(ob, r)
        r += 1
        for g in ob.linear.groups:
            b.comp_rows[g.name] = r
            r += 1
        for what in (*CLOSING, "second order", "monte carlo"):
            b.closing_rows[what] = r
            r += 1
        blocks.append(b)
        r += 1
    return blocks


def _quantities(ws, result: RunResult) -> dict[str, int]:
    header_row(ws, 1, QUANTITY_COLUMNS)
    rows: dict[str, int] = {}
    order = sorted(result.inputs, key=lambda n: _group_rank(result, result.inputs[n].group or n))
    for r, name in enumerate(order, start=2):
        q = result.inputs[name]
        value, divisor = q.distribution.quoted
        text(ws, r, 1, name)
        text(ws, r, 2, q.group or name)
        text(ws, r, 3, q.evaluation or "B")
        text(ws, r, 4, q.distribution.describe())
        number(ws, r, 5, value, FMT["value"])
        text(ws, r, 6, q.unit)
        _divisor(ws, r, 7, divisor)
        formula(ws, r, 8, f"=E{r}/G{r}", FMT["u"])
        dof_cell(ws, r, 9, q.distribution.dof)
        text(ws, r, 10, q.source)
        rows[name] = r
    ws.freeze_panes = "B2"
    ws.auto_filter.ref = f"A1:J{max(2, len(order) + 1)}"
    set_widths(ws, {5: 13, 7: 9, 8: 13, 9: 7})
    return rows


def _group_rank(result: RunResult, group: str) -> int:
    names = [g.name for g in result.outputs[0].linear.groups]
    return names.index(group) if group in names else len(names)


def _detail(ws, result: RunResult, blocks: list[BudgetBlock], qrow: dict[str, int]):
    header_row(ws, 1, DETAIL_COLUMNS)
    ranges: dict[tuple[str, str], tuple[int, int]] = {}
    r = 2
    for b in blocks:
        ob, lin = b.output, b.output.linear
        rows = {x.name: x for x in lin.rows}
        uc = b.address("u_c", "Budget")
        for g in lin.groups:
            first = r
            partners = _joint_rows(result, g.inputs, first)
            for name in g.inputs:
                x, qr = rows[name], qrow[name]
                text(ws, r, 1, ob.name)
                text(ws, r, 2, g.name)
                text(ws, r, 3, name)
                text(ws, r, 4, x.evaluation)
                text(ws, r, 5, x.distribution)
                formula(ws, r, 6, f"=Quantities!$E${qr}", FMT["value"])
                text(ws, r, 7, x.unit)
                formula(ws, r, 8, f"=Quantities!$G${qr}", FMT["divisor"])
                formula(ws, r, 9, f"=F{r}/H{r}", FMT["u"])
                number(ws, r, 10, x.sensitivity, FMT["u"])
                text(ws, r, 11, _c_unit(ob.unit, x.unit))
                formula(ws, r, 12, f"=ABS(J{r})*I{r}", FMT["u"])
                formula(ws, r, 13, f"=Quantities!$I${qr}", FMT["dof"])
                ws4, note = _ws_term(r, partners.get(name))
                formula(ws, r, 14, ws4, "0.00E+00")
                if _close(x.percent / 100.0, x.contribution**2 / lin.u**2 if lin.u > 0 else 0.0):
                    formula(ws, r, 15, f"=IF({uc}>0,L{r}^2/{uc}^2,0)", FMT["share"])
                else:
                    number(ws, r, 15, x.percent / 100.0, FMT["share"]).fill = ENGINE_FILL
                text(ws, r, 16, f"{note} {x.source}" if note else x.source)
                r += 1
            ranges[(ob.name, g.name)] = (first, r - 1)
    ws.freeze_panes = "D2"
    ws.auto_filter.ref = f"A1:P{max(2, r - 1)}"
    set_widths(ws, {6: 13, 8: 9, 9: 13, 10: 13, 12: 13, 13: 7, 14: 11, 15: 10})
    return ranges


def _joint_rows(result: RunResult, names: tuple[str, ...], first: int) -> dict[str, list[int] | int]:
    """Members of one joint quantity among a component's inputs: the first → the rows of all of them,
    every other one → the first's row. Only adjacent, uncorrelated members (the rig's principal axes)."""
    rows = {n: first + i for i, n in enumerate(names)}
    by_parent: dict[int, list[str]] = {}
    for n in names:
        d = result.inputs[n].distribution
        if isinstance(d, JointComponent):
            by_parent.setdefault(id(d.joint), []).append(n)
    out: dict[str, list[int] | int] = {}
    for members in by_parent.values():
        if len(members) < 2:
            continue
        scale = members and result.inputs[members[0]].distribution.joint.scale_matrix
        if np.count_nonzero(scale - np.diag(np.diag(scale))):
            continue  # correlated components: u_c is the engine's anyway
        rr = [rows[n] for n in members]
        out[members[0]] = rr
        for n in members[1:]:
            out[n] = rr[0]
    return out


def _ws_term(r: int, partners: list[int] | int | None) -> tuple[str, str]:
    """Detail's (|c_i|·u)⁴/ν_i cell; a joint quantity's term is taken once, on its first row.

    A vector quantity estimated from one set of observations (a point's two axes) enters
    Welch–Satterthwaite once, with its combined contribution and ν (Willink 2007, as the engine).
    """
    if partners is None:
        return f"=IF(ISNUMBER(M{r}),L{r}^4/M{r},0)", ""
    if isinstance(partners, int):
        return "=0", f"[counted in row {partners}'s Welch–Satterthwaite term: one joint quantity]"
    cells = ",".join(f"L{k}" for k in partners)
    return f"=IF(ISNUMBER(M{r}),SUMSQ({cells})^2/M{r},0)", \
        f"[Welch–Satterthwaite term of the joint quantity of rows {partners[0]}–{partners[-1]}]"


def _component_row(ws, b: BudgetBlock, g, rows, qrow, ranges) -> None:
    ob, lin = b.output, b.output.linear
    r = b.comp_rows[g.name]
    uc = b.address("u_c")
    first, last = ranges[(ob.name, g.name)]
    text(ws, r, 1, g.name)
    text(ws, r, 2, g.evaluation)
    line = next(c for c in ob.components if c.name == g.name)
    text(ws, r, 3, line.distribution)
    exact = _close(g.contribution**2, sum(rows[n].contribution ** 2 for n in g.inputs))
    if len(g.inputs) == 1:
        x, qr = rows[g.inputs[0]], qrow[g.inputs[0]]
        formula(ws, r, 4, f"=Quantities!$E${qr}", FMT["value"])
        text(ws, r, 5, x.unit)
        formula(ws, r, 6, f"=Quantities!$G${qr}", FMT["divisor"])
        formula(ws, r, 7, f"=D{r}/F{r}", FMT["u"])
        formula(ws, r, 8, f"=Detail!$J${first}", FMT["u"])
        text(ws, r, 9, _c_unit(ob.unit, x.unit))
        formula(ws, r, 10, f"=ABS(H{r})*G{r}", FMT["u"])
        formula(ws, r, 11, f"=Quantities!$I${qr}", FMT["dof"])
        formula(ws, r, 13, f"=IF(ISNUMBER(K{r}),J{r}^4/K{r},0)", "0.00E+00")
        where = f"Detail row {first}"
    else:
        if exact:
            formula(ws, r, 10, f"=SQRT(SUMSQ(Detail!$L${first}:$L${last}))", FMT["u"])
        else:
            number(ws, r, 10, g.contribution, FMT["u"]).fill = ENGINE_FILL
        formula(ws, r, 11, f'=IF(OR(J{r}=0,M{r}=0),"{INF_TEXT}",IF(J{r}^4/M{r}>=1,INT(J{r}^4/M{r}),J{r}^4/M{r}))',
                FMT["dof"])
        formula(ws, r, 13, f"=SUM(Detail!$N${first}:$N${last})", "0.00E+00")
        where = f"Detail rows {first}–{last} ({len(g.inputs)} inputs)"
    if exact and _close(g.percent / 100.0, g.contribution**2 / lin.u**2 if lin.u > 0 else 0.0):
        formula(ws, r, 12, f"=IF({uc}>0,J{r}^2/{uc}^2,0)", FMT["share"])
    else:
        number(ws, r, 12, g.percent / 100.0, FMT["share"]).fill = ENGINE_FILL
    link = text(ws, r, 14, where)
    link.hyperlink = Hyperlink(ref=link.coordinate, location=f"Detail!A{first}", display=where)
    link.style = "Hyperlink"
    note = "; ".join(g.sources)
    if not exact:
        note = f"{_CORRELATED}. {note}"
    text(ws, r, 15, note)


def _closing_rows(ws, b: BudgetBlock) -> None:
    ob, lin = b.output, b.output.linear
    rows = {x.name: x for x in lin.rows}
    first, last = min(b.comp_rows.values()), max(b.comp_rows.values())
    cr = b.closing_rows
    for what in CLOSING:
        text(ws, cr[what], 1, what, BOLD)
        text(ws, cr[what], 3, _EXPLAIN[what], NOTE)
    r = cr["u_c"]
    rss = math.sqrt(sum(x.contribution**2 for x in rows.values()))
    if _close(lin.u, rss):
        formula(ws, r, 10, f"=SQRT(SUMSQ(J{first}:J{last}))", FMT["u"])
    else:
        number(ws, r, 10, lin.u, FMT["u"]).fill = ENGINE_FILL
        text(ws, r, 15, _CORRELATED + ".", NOTE)
    formula(ws, r, 12, f"=SUM(L{first}:L{last})", FMT["share"])
    formula(ws, r, 13, f"=SUM(M{first}:M{last})", "0.00E+00")
    uc, den = f"J{r}", f"M{r}"
    formula(ws, cr["ν_eff"], 10,
            f'=IF(OR({uc}=0,{den}=0),"{INF_TEXT}",IF({uc}^4/{den}>=1,INT({uc}^4/{den}),{uc}^4/{den}))',
            FMT["dof"])
    number(ws, cr["p"], 10, lin.p, FMT["p"])
    nu, p = f"J{cr['ν_eff']}", f"J{cr['p']}"
    if 0 < lin.nu_eff < 1:  # t with fewer than one degree of freedom: no spreadsheet function has it
        number(ws, cr["k"], 10, lin.k, FMT["k"]).fill = ENGINE_FILL
        text(ws, cr["k"], 15, "engine value: ν_eff < 1, which T.INV.2T does not accept", NOTE)
    else:
        formula(ws, cr["k"], 10,
                f"=IF(ISNUMBER({nu}),_xlfn.T.INV.2T(1-{p},{nu}),_xlfn.NORM.S.INV((1+{p})/2))", FMT["k"])
    formula(ws, cr["U"], 10, f"=J{cr['k']}*J{cr['u_c']}", FMT["u"])
    text(ws, cr["U"], 11, ob.unit)
    text(ws, cr["u_c"], 11, ob.unit)
    r2, rm = cr["second order"], cr["monte carlo"]
    text(ws, r2, 1, "u_c, 2nd order")
    text(ws, r2, 3, "with the second-order terms of JCGM 100 eq. 14 (engine value; not computed for "
                    "correlated inputs)", NOTE)
    number(ws, r2, 10, ob.u_second_order, FMT["u"])
    text(ws, rm, 1, "u(y), Monte Carlo")
    text(ws, rm, 3, f"standard deviation of the {ob.monte_carlo.trials} Monte Carlo values (JCGM 101 7.6; "
                    "engine value)", NOTE)
    number(ws, rm, 10, ob.monte_carlo.u, FMT["u"])


def _budget(ws, blocks: list[BudgetBlock], qrow, ranges) -> None:
    header_row(ws, 1, BUDGET_COLUMNS)
    for b in blocks:
        ob = b.output
        title(ws, b.title_row, f"{ob.label}: estimate {ob.linear.estimate:.6g} {ob.unit}; contributions, "
                               f"u_c and U in {ob.unit}", len(BUDGET_COLUMNS))
        rows = {x.name: x for x in ob.linear.rows}
        for g in ob.linear.groups:
            _component_row(ws, b, g, rows, qrow, ranges)
        _closing_rows(ws, b)
    ws.freeze_panes = "B2"
    set_widths(ws, {1: 22, 3: 22, 4: 13, 5: 6, 6: 9, 7: 13, 8: 13, 10: 13, 11: 7, 12: 10, 13: 11, 14: 31})


def write_formula_sheets(wb, result: RunResult) -> list[BudgetBlock]:
    """Add Budget, Detail and Quantities to ``wb``; return where each output's results are."""
    blocks = _plan(result)
    budget = wb.create_sheet("Budget")
    detail = wb.create_sheet("Detail")
    quantities = wb.create_sheet("Quantities")
    qrow = _quantities(quantities, result)
    ranges = _detail(detail, result, blocks, qrow)
    _budget(budget, blocks, qrow, ranges)
    return blocks
