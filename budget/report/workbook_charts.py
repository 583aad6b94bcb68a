"""The workbook's Monte Carlo sheet: results, histogram with a native bar chart, Pareto chart.

One block per output: the Monte Carlo estimate, u, both coverage intervals (JCGM 101 7.7
probabilistically symmetric, 7.8 shortest), trials and seed beside the linear interval y ± U
(linked to the Budget sheet); the histogram of the output values with the bins inside the
symmetric interval shown in their own colour; and a Pareto chart of the contributions (bars)
with the cumulative share of u_c² (line), both linked to the Budget sheet.
"""

from __future__ import annotations

from openpyxl.chart import BarChart, LineChart, Reference

from budget.report.binning import histogram
from budget.report.workbook_budget import BudgetBlock
from budget.report.workbook_cells import BOLD, FMT, NOTE, formula, number, set_widths, text, title
from budget.results import RunResult

__all__ = ["write_monte_carlo_sheet"]

_HIST_COL, _PARETO_COL, _CHART_COL = 1, 8, "L"
_CHART_ROWS = 18
CHART_CM = (10.5, 8.5)
"""Width and height of each chart: the table and one chart beside it fit a page width at 8 pt or more."""


def _results(ws, r: int, b: BudgetBlock, seed: object) -> int:
    ob, mc = b.output, b.output.monte_carlo
    u = ob.unit
    pct = f"{100 * mc.p:g} %"
    rows: list[tuple[str, object, str]] = [
        ("estimate y (mean of the values)", mc.estimate, FMT["estimate"]),
        ("standard uncertainty u(y)", mc.u, FMT["u"]),
        ("coverage probability p", mc.p, FMT["p"]),
        (f"{pct} probabilistically symmetric interval, low (JCGM 101 7.7)", mc.interval[0], FMT["estimate"]),
        (f"{pct} probabilistically symmetric interval, high", mc.interval[1], FMT["estimate"]),
        (f"{pct} shortest interval, low (JCGM 101 7.8)", mc.shortest[0], FMT["estimate"]),
        (f"{pct} shortest interval, high", mc.shortest[1], FMT["estimate"]),
        ("trials M", mc.trials, FMT["count"]),
    ]
    for label, value, fmt in rows:
        text(ws, r, 1, label)
        number(ws, r, 4, value, fmt)  # type: ignore[arg-type]
        text(ws, r, 5, "" if label.startswith(("coverage", "trials")) else u)
        r += 1
    text(ws, r, 1, "seed of the random generator")
    text(ws, r, 4, str(seed))
    r += 1
    text(ws, r, 1, "adaptive procedure (JCGM 101 7.9)")
    text(ws, r, 4, ("yes, converged" if mc.converged else "yes, NOT converged") if mc.adaptive else "no")
    r += 1
    text(ws, r, 1, "linear method: estimate y")
    number(ws, r, 4, ob.linear.estimate, FMT["estimate"])
    text(ws, r, 5, u)
    y = f"D{r}"
    r += 1
    for sign, what in (("-", "low"), ("+", "high")):
        text(ws, r, 1, f"linear method: y {sign} U, {what} (U from the Budget sheet)")
        formula(ws, r, 4, f"={y}{sign}{b.address('U', 'Budget')}", FMT["estimate"])
        text(ws, r, 5, u)
        r += 1
    text(ws, r, 1, ob.validation.verdict(), NOTE)
    return r + 2


def _histogram(ws, r: int, b: BudgetBlock) -> tuple[int, int, int]:
    """Write the bin table at row ``r``; return (first data row, last data row, next free row)."""
    ob = b.output
    lin = ob.linear
    h = histogram(ob.monte_carlo, extra=(lin.estimate - lin.U, lin.estimate + lin.U))
    heads = [f"bin low [{ob.unit}]", f"bin high [{ob.unit}]", f"bin centre [{ob.unit}]", "count",
             "inside sym. interval", "outside"]
    for j, name in enumerate(heads, start=_HIST_COL):
        text(ws, r, j, name, BOLD)
    first = r + 1
    for i, (c, n_in) in enumerate(zip(h.counts, h.inside, strict=True)):
        row = first + i
        number(ws, row, 1, h.edges[i], FMT["estimate"])
        number(ws, row, 2, h.edges[i + 1], FMT["estimate"])
        formula(ws, row, 3, f"=(A{row}+B{row})/2", FMT["estimate"])
        number(ws, row, 4, int(c), FMT["count"])
        number(ws, row, 5, int(n_in), FMT["count"])
        formula(ws, row, 6, f"=D{row}-E{row}", FMT["count"])
    last = first + len(h.counts) - 1
    text(ws, last + 1, 1, "values below the first bin")
    number(ws, last + 1, 4, h.below, FMT["count"])
    text(ws, last + 2, 1, "values above the last bin")
    number(ws, last + 2, 4, h.above, FMT["count"])
    text(ws, last + 3, 1, "total (equals the trials M)")
    formula(ws, last + 3, 4, f"=SUM(D{first}:D{last + 2})", FMT["count"])
    return first, last, last + 5


def _hist_chart(ws, b: BudgetBlock, first: int, last: int, anchor: str) -> None:
    ob = b.output
    ch = BarChart()
    ch.type, ch.grouping, ch.overlap, ch.gapWidth = "col", "stacked", 100, 0
    ch.title = f"{ob.label}: Monte Carlo values"
    ch.y_axis.title = "count"
    ch.x_axis.title = f"{ob.label} [{ob.unit}]"
    data = Reference(ws, min_col=5, max_col=6, min_row=first - 1, max_row=last)
    ch.add_data(data, titles_from_data=True)
    ch.set_categories(Reference(ws, min_col=3, min_row=first, max_row=last))
    ch.x_axis.number_format = "0.0000"
    _show_axes(ch)
    ch.width, ch.height = CHART_CM
    ws.add_chart(ch, anchor)


def _pareto(ws, r: int, b: BudgetBlock) -> tuple[int, int]:
    ob = b.output
    col = _PARETO_COL
    heads = ["component (Pareto order)", f"|c_i|·u(x_i) [{ob.unit}]", "share of u_c²", "cumulative share"]
    for j, name in enumerate(heads):
        text(ws, r, col + j, name, BOLD)
    order = sorted(ob.linear.groups, key=lambda g: -g.percent)
    first = r + 1
    for i, g in enumerate(order):
        row = first + i
        br = b.comp_rows[g.name]
        text(ws, row, col, g.name)
        formula(ws, row, col + 1, f"=Budget!$J${br}", FMT["u"])
        formula(ws, row, col + 2, f"=Budget!$L${br}", FMT["share"])
        prev = f"+K{row - 1}" if i else ""
        formula(ws, row, col + 3, f"=J{row}{prev}", FMT["share"])
    return first, first + len(order) - 1


def _pareto_chart(ws, b: BudgetBlock, first: int, last: int, anchor: str) -> None:
    ob = b.output
    bars = BarChart()
    bars.title = f"{ob.label}: contributions (Pareto)"
    bars.y_axis.title = f"|c_i|·u(x_i) [{ob.unit}]"
    bars.add_data(Reference(ws, min_col=_PARETO_COL + 1, min_row=first - 1, max_row=last), titles_from_data=True)
    bars.set_categories(Reference(ws, min_col=_PARETO_COL, min_row=first, max_row=last))
    line = LineChart()
    line.add_data(Reference(ws, min_col=_PARETO_COL + 3, min_row=first - 1, max_row=last), titles_from_data=True)
    line.y_axis.axId = 200
    line.y_axis.title = "cumulative share of u_c²"
    line.y_axis.number_format = "0%"
    line.y_axis.scaling.min, line.y_axis.scaling.max = 0, 1
    line.y_axis.crosses = "max"
    _show_axes(bars)
    _show_axes(line)
    bars += line
    bars.width, bars.height = CHART_CM
    ws.add_chart(bars, anchor)


def _show_axes(ch) -> None:
    # openpyxl 3.1 leaves <c:delete> unset, which some spreadsheet versions read as "hidden".
    ch.x_axis.delete = False
    ch.y_axis.delete = False


def write_monte_carlo_sheet(wb, result: RunResult, blocks: list[BudgetBlock]) -> None:
    """Add the Monte Carlo sheet."""
    ws = wb.create_sheet("Monte Carlo")
    text(ws, 1, 1, "Monte Carlo (JCGM 101:2008): results, histograms and Pareto charts per output", BOLD)
    r = 3
    for b in blocks:
        title(ws, r, f"{b.output.label} [{b.output.unit}]", 11)
        start = r
        r = _results(ws, r + 1, b, result.seed)
        first, last, r = _histogram(ws, r, b)
        p_first, p_last = _pareto(ws, start + 1, b)
        _hist_chart(ws, b, first, last, f"{_CHART_COL}{start}")
        _pareto_chart(ws, b, p_first, p_last, f"{_CHART_COL}{start + _CHART_ROWS}")
        r = max(r, start + 2 * _CHART_ROWS + 2)
    ws.freeze_panes = "A2"
    set_widths(ws, {1: 14, 2: 12, 3: 12, 4: 14, 5: 14, 6: 9, 7: 3, 8: 15, 9: 12, 10: 10, 11: 10})
