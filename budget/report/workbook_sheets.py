"""The workbook's Summary and Inputs sheets."""

from __future__ import annotations

import datetime as _dt

from budget.report.workbook_budget import BudgetBlock
from budget.report.workbook_cells import (
    BOLD,
    FMT,
    NOTE,
    TITLE,
    WRAP,
    formula,
    header_row,
    number,
    set_widths,
    text,
    title,
)
from budget.report.workbook_data import lack_of_fit_rows, write_data_rows, write_reference_rows
from budget.results import RunResult

__all__ = ["write_summary_sheet", "write_inputs_sheet", "write_results_sheet", "RESULTS_COLUMNS", "STANDARDS",
           "SUMMARY_COLUMNS"]

STANDARDS = ("JCGM 100:2008 (GUM): law of propagation of uncertainty, Welch–Satterthwaite, coverage factor; "
             "JCGM 101:2008 (GUM Supplement 1): Monte Carlo propagation of distributions and, in its "
             "clause 8, the validation of the linear method")
SUMMARY_COLUMNS = [
    "output", "result (JCGM 100 7.2.6 rounding)", "result method", "estimate y", "unit", "u_c", "ν_eff", "k",
    "U", "Monte Carlo u(y)", "symmetric interval low", "symmetric interval high", "trials",
    "clause 8 verdict (JCGM 101)",
]
"""The Summary's result columns; the shortest intervals and both methods' statements are on Results."""
RESULTS_COLUMNS = [
    ("output", "output"), ("unit", "unit"), ("method", "result method"), ("estimate", "estimate"),
    ("u", "u"), ("low", "interval low"), ("high", "interval high"), ("U", "linear U"), ("k", "k"),
    ("nu_eff", "ν_eff"), ("mc_low", "MC symmetric low"), ("mc_high", "MC symmetric high"),
    ("shortest_low", "MC shortest low"), ("shortest_high", "MC shortest high"), ("trials", "trials"),
    ("statement", "result statement"), ("linear_statement", "linear statement (JCGM 100)"),
    ("mc_statement", "Monte Carlo statement (JCGM 101)"),
]
"""(field, header) of the values-only Results sheet: the result's estimate, u and interval by its method."""
_HOW_TO_READ = (
    "Budget has one block per output, one row per component. Every input quantity's value, divisor and ν_i "
    "is on Quantities, each sensitivity c_i on Detail: change one and u(x_i), the contributions, u_c, ν_eff, k "
    "and U follow (live formulas). An infinite ν is the text '∞' (it adds nothing to the Welch–Satterthwaite "
    "sum). Shaded cells hold the engine's value where a formula cannot reproduce it (correlated inputs); "
    "their note says why. The rounded statements are the tool's and do not follow an edit."
)


def write_summary_sheet(ws, result: RunResult, blocks: list[BudgetBlock]) -> None:
    """Fill the Summary sheet (the first sheet): results first, then provenance, sweep, warnings."""
    text(ws, 1, 1, f"Uncertainty budget: {result.title}", TITLE)
    header_row(ws, 3, SUMMARY_COLUMNS)
    r = 3
    for b in blocks:
        r += 1
        _result_row(ws, r, b)
    r += 2
    title(ws, r, "Provenance", 2)
    prov = [
        ("tool", f"thetabudget {result.tool_version}"),
        ("input file", result.input_path),
        ("input file SHA-256", result.input_sha256),
        *((f"data file {f.path}: SHA-256", f.sha256) for f in (result.data.files if result.data else ())
          if f.kind == "data"),
        ("seed of the random generator", str(result.seed)),
        ("date and time of the run (UTC)", result.created),
        ("workbook written (UTC)", _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")),
        ("standards followed", STANDARDS),
        ("how to read this workbook", _HOW_TO_READ),
    ]
    for label, value in prov:
        r += 1
        text(ws, r, 1, label, BOLD)
        text(ws, r, 2, value).alignment = WRAP
    r += 1
    text(ws, r, 1, "coverage probability p", BOLD)
    number(ws, r, 2, result.p, FMT["p"])
    r += 2
    r = _sweep_rows(ws, r, result)
    r = write_data_rows(ws, r, result)
    r = write_reference_rows(ws, r, result)
    r = _targets(ws, r, result)
    r = _assumptions(ws, r, result)
    r = _components(ws, r, result)
    _warnings(ws, r, result)
    ws.freeze_panes = "B4"
    set_widths(ws, {1: 26, 2: 34, 3: 12, 4: 12, 5: 6, 6: 11, 7: 7, 8: 6, 9: 11, 10: 11, 11: 12, 12: 12,
                    13: 9, 14: 40})


def _result_row(ws, r: int, b: BudgetBlock) -> None:
    ob, mc = b.output, b.output.monte_carlo
    text(ws, r, 1, ob.label)
    text(ws, r, 2, ob.statement if ob.method == "linear" else ob.mc_statement).alignment = WRAP
    text(ws, r, 3, ob.method)
    number(ws, r, 4, ob.linear.estimate, FMT["estimate"])
    text(ws, r, 5, ob.unit)
    formula(ws, r, 6, f"={b.address('u_c', 'Budget')}", FMT["u"])
    formula(ws, r, 7, f"={b.address('ν_eff', 'Budget')}", FMT["dof"])
    formula(ws, r, 8, f"={b.address('k', 'Budget')}", FMT["k"])
    formula(ws, r, 9, f"={b.address('U', 'Budget')}", FMT["u"])
    number(ws, r, 10, mc.u, FMT["u"])
    for j, v in enumerate(mc.interval, start=11):
        number(ws, r, j, v, FMT["estimate"])
    number(ws, r, 13, mc.trials, FMT["count"])
    text(ws, r, 14, ob.validation.verdict()).alignment = WRAP


def _sweep_rows(ws, r: int, result: RunResult) -> int:
    s = result.gain_summary
    if s is None:
        return r
    title(ws, r, "Sweep: gain and intercept", 2)
    rows = [
        ("set points [V]", ", ".join(f"{v:g}" for v in s.set_points_v), None),
        ("correlation of gain and intercept, linear", s.correlation_linear, "0.0000"),
        ("correlation of gain and intercept, Monte Carlo", s.correlation_mc, "0.0000"),
        ("non-linearity from measurement errors, mean [% of span]", s.nonlinearity_mean_pct, "0.0000"),
        ("non-linearity, 95th percentile [% of span]", s.nonlinearity_p95_pct, "0.0000"),
        ("degrees of freedom of the fit", s.dof, FMT["int"]),
        *lack_of_fit_rows(result),
    ]
    for label, value, fmt in rows:
        r += 1
        text(ws, r, 1, label)
        if isinstance(value, str):
            text(ws, r, 2, value).alignment = WRAP
        else:
            number(ws, r, 2, value, fmt)
    return r + 2


def _targets(ws, r: int, result: RunResult) -> int:
    """Goal verdicts, conformity decisions and the range claim, one row each; returns the next free row."""
    from budget.report.targets import target_rows

    rows = target_rows(result)
    if not rows:
        return r
    title(ws, r, "Targets, decisions and the claim for the range", 2)
    for i, (label, what) in enumerate(rows, start=1):
        text(ws, r + i, 1, label)
        text(ws, r + i, 2, what).alignment = WRAP
    return r + len(rows) + 2


def _assumptions(ws, r: int, result: RunResult) -> int:
    """Values the tool supplied, one row each (field, value, reason); returns the next free row."""
    if not result.assumptions:
        return r
    title(ws, r, "Assumptions (values the tool supplied because the input file left them out)", 2)
    for i, a in enumerate(result.assumptions, start=1):
        text(ws, r + i, 1, f"{a.field} = {a.value!r}")
        text(ws, r + i, 2, a.reason).alignment = WRAP
    return r + len(result.assumptions) + 2


def _components(ws, r: int, result: RunResult) -> int:
    """What each component of the budgets is, one row each; returns the next free row."""
    described = result.component_descriptions()
    title(ws, r, "What the components are", 2)
    for i, (name, what) in enumerate(described.items(), start=1):
        text(ws, r + i, 1, name)
        text(ws, r + i, 2, what).alignment = WRAP
    return r + len(described) + 2


def _warnings(ws, r: int, result: RunResult) -> None:
    title(ws, r, "Warnings and notes", 2)
    lines = [(ob.label, w) for ob in result.outputs for w in ob.warnings]
    lines += [("rig", w) for w in result.warnings]
    lines += [("locator", n) for n in result.locator_notes if n not in result.warnings]
    if not lines:
        text(ws, r + 1, 1, "none", NOTE)
    for i, (where, w) in enumerate(lines, start=1):
        text(ws, r + i, 1, where)
        text(ws, r + i, 2, w).alignment = WRAP


def _scalar(ws, r: int, c: int, value: object) -> None:
    if isinstance(value, bool):
        text(ws, r, c, "true" if value else "false")
    elif isinstance(value, int | float):
        number(ws, r, c, value)
    else:
        text(ws, r, c, str(value))


def _section(ws, r: int, name: str, table: dict) -> int:
    source = table.get("source")
    title(ws, r, f"[{name}]", 2)
    if isinstance(source, str):
        text(ws, r, 2, f"source: {source}", BOLD)
    r += 1
    subtables: list[tuple[str, dict]] = []
    for key, value in table.items():
        if isinstance(value, dict):
            subtables.append((f"{name}.{key}", value))
            continue
        if isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            subtables += [(f"{name}.{key}[{i + 1}]", v) for i, v in enumerate(value)]
            continue
        text(ws, r, 1, key)
        items = value if isinstance(value, list) else [value]
        for j, v in enumerate(items, start=2):
            _scalar(ws, r, j, v if not isinstance(v, list | dict) else repr(v))
        r += 1
    for sub, t in subtables:
        r = _section(ws, r, sub, t)
    return r


def write_inputs_sheet(ws, result: RunResult) -> None:
    """The rig description as read from the file, section by section, with each source note."""
    header_row(ws, 1, ["key", "value (as read from the rig file)"])
    raw = result.rig_raw or {}
    r = 2
    top = {k: v for k, v in raw.items() if not isinstance(v, dict)}
    if top:
        r = _section(ws, r, "top level", top)
    for key, value in raw.items():
        if isinstance(value, dict):
            r = _section(ws, r, key, value)
    if r == 2:
        text(ws, r, 1, "no rig description was recorded", NOTE)
    ws.freeze_panes = "B2"
    set_widths(ws, {1: 26, 2: 40})


def write_results_sheet(ws, result: RunResult) -> None:
    """The results as values only (numbers and text, no formulas): readable by any viewer or pandas."""
    from budget.dataframes import summary_rows

    header_row(ws, 1, [h for _, h in RESULTS_COLUMNS])
    for r, (row, ob) in enumerate(zip(summary_rows(result), result.outputs, strict=True), start=2):
        row = {**row, "shortest_low": ob.monte_carlo.shortest[0], "shortest_high": ob.monte_carlo.shortest[1],
               "linear_statement": ob.statement, "mc_statement": ob.mc_statement}
        for j, (key, _) in enumerate(RESULTS_COLUMNS, start=1):
            v = row[key]
            if isinstance(v, str):
                cell = text(ws, r, j, v)
                if key.endswith("statement"):
                    cell.alignment = WRAP
            else:
                number(ws, r, j, v, FMT["count"] if key == "trials" else None)
    ws.freeze_panes = "B2"
    set_widths(ws, {1: 10, 2: 5, 3: 11, **{j: 11 for j in range(4, 15)}, 9: 6, 10: 6, 15: 7, 16: 30, 17: 30,
                    18: 30})
