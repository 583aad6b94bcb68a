"""The budget workbook an auditor checks: live formulas, charts, the rig as read.

Sheets, in order:

* **Summary**: every output's rounded result, the result method, p, k, ν_eff, U (linked to
  Budget), the Monte Carlo result and the JCGM 101 clause 8 verdict in words, warnings, and
  the provenance (tool version, seed, input file and its SHA-256, date and time, standards).
* **Budget**: one block per output, one row per component, closing rows u_c, ν_eff, p, k, U
  (see :mod:`budget.report.workbook_budget` for the formula conventions).
* **Detail**: every input quantity for every output, with its own formulas; Budget sums it.
* **Quantities**: each input quantity once: value, divisor, u, ν, source. Edit here.
* **Monte Carlo**: intervals, trials, seed, histogram and Pareto charts per output.
* **Inputs**: the rig description as read, section by section, with each source note.

The file is a plain .xlsx (no macros). Nothing here computes an uncertainty: the numbers
are the engine's, and the formulas restate its arithmetic for the auditor.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook

from budget.report.safe_write import clean_text
from budget.report.workbook_budget import write_formula_sheets
from budget.report.workbook_cells import fit_row_heights, print_setup
from budget.report.workbook_charts import write_monte_carlo_sheet
from budget.report.workbook_sheets import write_inputs_sheet, write_summary_sheet
from budget.results import RunResult

__all__ = ["build_workbook", "save_workbook", "SHEETS"]

SHEETS = ("Summary", "Budget", "Detail", "Quantities", "Monte Carlo", "Inputs")


def build_workbook(result: RunResult) -> Workbook:
    """The whole workbook in memory."""
    wb = Workbook()
    summary = wb.active
    summary.title = "Summary"
    blocks = write_formula_sheets(wb, result)
    write_monte_carlo_sheet(wb, result, blocks)
    write_inputs_sheet(wb.create_sheet("Inputs"), result)
    write_summary_sheet(summary, result, blocks)
    for ws in wb.worksheets:
        fit_row_heights(ws)
        print_setup(ws, None if ws.title == "Summary" else "1:1")
    wb.properties.title = clean_text(f"Uncertainty budget: {result.title}", 255)  # no control characters
    wb.properties.creator = f"thetabudget {result.tool_version}"
    return wb


def save_workbook(wb: Workbook, path: str | Path) -> None:
    """Save ``wb`` to ``path`` (the step :func:`budget.report.safe_write.atomic_write` wraps)."""
    wb.save(str(path))
