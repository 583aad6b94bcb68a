"""The budget workbook an auditor checks: live formulas, charts, the rig as read.

Sheets, in order:

* **Summary**: every output's rounded result, the result method, p, k, ν_eff, U (linked to
  Budget), the Monte Carlo result and the JCGM 101 clause 8 verdict in words, warnings, and
  the provenance (tool version, seed, input file and its SHA-256, date and time, standards).
* **Results**: the same results as values only (no formulas), one row per output, so that any viewer
  or ``pandas.read_excel(path, sheet_name="Results")`` shows the numbers.
* **Budget**: one block per output, one row per component, closing rows u_c, ν_eff, p, k, U
  (see :mod:`budget.report.workbook_budget` for the formula conventions).
* **Detail**: every input quantity for every output, with its own formulas; Budget sums it.
* **Quantities**: each input quantity once: value, divisor, u, ν, source. Edit here.
* **Monte Carlo**: intervals, trials, seed, histogram and Pareto charts per output.
* **Inputs**: the rig description as read, section by section, with each source note.

Every sheet prints landscape, one page wide, text at 8 pt or more, header rows repeated, with the input's
SHA-256 and page numbers in the footer (:mod:`budget.report.workbook_print`); the file asks to be recalculated
when opened. The file is a plain .xlsx (no macros). Nothing here computes an uncertainty: the numbers
are the engine's, and the formulas restate its arithmetic for the auditor.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook

from budget.report.safe_write import clean_text
from budget.report.workbook_budget import write_formula_sheets
from budget.report.workbook_cells import fit_row_heights
from budget.report.workbook_charts import write_monte_carlo_sheet
from budget.report.workbook_print import make_printable, recalc_on_open
from budget.report.workbook_sheets import write_inputs_sheet, write_results_sheet, write_summary_sheet
from budget.results import RunResult

__all__ = ["build_workbook", "save_workbook", "SHEETS"]

SHEETS = ("Summary", "Results", "Budget", "Detail", "Quantities", "Monte Carlo", "Inputs")


def build_workbook(result: RunResult) -> Workbook:
    """The whole workbook in memory."""
    wb = Workbook()
    summary = wb.active
    summary.title = "Summary"
    blocks = write_formula_sheets(wb, result)
    write_monte_carlo_sheet(wb, result, blocks)
    write_inputs_sheet(wb.create_sheet("Inputs"), result)
    write_summary_sheet(summary, result, blocks)
    write_results_sheet(wb.create_sheet("Results", 1), result)
    tool = f"thetabudget {result.tool_version}"
    for ws in wb.worksheets:
        make_printable(ws, sha256=result.input_sha256, title_rows="3:3" if ws.title == "Summary" else "1:1", tool=tool)
        fit_row_heights(ws)
    recalc_on_open(wb)
    wb.properties.title = clean_text(f"Uncertainty budget: {result.title}", 255)  # no control characters
    wb.properties.creator = f"thetabudget {result.tool_version}"
    return wb


def save_workbook(wb: Workbook, path: str | Path) -> None:
    """Save ``wb`` to ``path`` (the step :func:`budget.report.safe_write.atomic_write` wraps)."""
    wb.save(str(path))
