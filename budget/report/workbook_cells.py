"""Cell-level helpers shared by the workbook's sheets: text, numbers, formulas, formats, widths.

Every string goes through :func:`text`, which stores it as inert text (see
:mod:`budget.report.safe_write`); only :func:`formula` writes a formula, and its text
is built here from cell addresses, never from the user's words.
"""

from __future__ import annotations

import math
import numbers

from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter

from budget.report.safe_write import set_text

__all__ = ["INF_TEXT", "FMT", "text", "number", "formula", "header_row", "title", "set_widths", "dof_cell",
           "fit_row_heights"]

INF_TEXT = "∞"
"""How an infinite number of degrees of freedom is written in a cell.

It is text, so ``ISNUMBER`` is FALSE for it: the Welch–Satterthwaite sums add 0 for such an
input (JCGM 100 G.2b, where the term c⁴u⁴/ν vanishes as ν → ∞), and the coverage factor falls
back to the normal quantile. An auditor who types a number in its place gets a finite ν.
"""

FMT = {
    "u": "0.0000E+00",  # uncertainties, contributions, sensitivities: any magnitude
    "value": "0.0000E+00",
    "divisor": "0.0000",
    "estimate": "0.000000",
    "dof": "0",
    "k": "0.000",
    "p": "0.00##",
    "share": "0.00%",
    "count": "#,##0",
    "int": "0",
}

BOLD = Font(bold=True)
TITLE = Font(bold=True, size=13)
NOTE = Font(italic=True, color="555555")
HEAD_FILL = PatternFill("solid", fgColor="DDE6F0")
BLOCK_FILL = PatternFill("solid", fgColor="EEF2E6")
ENGINE_FILL = PatternFill("solid", fgColor="FCE9D9")
"""Cells that hold the engine's value where a formula could not reproduce it (correlated inputs)."""
WRAP = Alignment(wrap_text=True, vertical="top")


def text(ws, row: int, col: int, value: str, font: Font | None = None):
    """Inert text in a cell (never a formula, whatever it starts with)."""
    cell = set_text(ws.cell(row=row, column=col), value)
    if font is not None:
        cell.font = font
    return cell


def number(ws, row: int, col: int, value: float | int | None, fmt: str | None = None):
    """A number (an infinite one as :data:`INF_TEXT`, None as an empty cell)."""
    cell = ws.cell(row=row, column=col)
    if value is None:
        return cell
    v = int(value) if isinstance(value, numbers.Integral) else float(value)
    if isinstance(v, float) and not math.isfinite(v):
        set_text(cell, INF_TEXT if v > 0 else "-" + INF_TEXT)
        cell.alignment = Alignment(horizontal="right")
        return cell
    cell.value = v
    if fmt:
        cell.number_format = fmt
    return cell


def dof_cell(ws, row: int, col: int, nu: float):
    """Degrees of freedom: a number, or :data:`INF_TEXT` when infinite."""
    return number(ws, row, col, nu, FMT["dof"] if math.isfinite(nu) and float(nu).is_integer() else "0.0")


def formula(ws, row: int, col: int, expr: str, fmt: str | None = None):
    """A live formula; ``expr`` starts with ``=`` and is built from addresses only."""
    if not expr.startswith("="):
        raise ValueError(f"a formula must start with '=': {expr!r}")
    cell = ws.cell(row=row, column=col, value=expr)
    if fmt == FMT["dof"]:  # a ν formula may give the text "∞": keep it right-aligned like a number
        cell.alignment = Alignment(horizontal="right")
    if fmt:
        cell.number_format = fmt
    return cell


def header_row(ws, row: int, names: list[str]) -> None:
    """Bold, shaded column headers."""
    for j, name in enumerate(names, start=1):
        cell = text(ws, row, j, name, BOLD)
        cell.fill = HEAD_FILL
        cell.alignment = Alignment(wrap_text=True, vertical="center")


def title(ws, row: int, value: str, width: int = 1) -> None:
    """A block title across ``width`` columns."""
    text(ws, row, 1, value, BOLD)
    for j in range(1, width + 1):
        ws.cell(row=row, column=j).fill = BLOCK_FILL


def set_widths(ws, widths: dict[int, float] | None = None, lo: float = 8, hi: float = 60) -> None:
    """Column widths: given ones, else fitted to the longest text in the column.

    Numbers and formulas count as 12 characters (their formats show at most that).
    """
    widths = dict(widths or {})
    fitted: dict[int, float] = {}
    for row in ws.iter_rows():
        for cell in row:
            if cell.value is None or cell.column in widths:
                continue
            if cell.data_type == "s":
                n = max((len(part) for part in str(cell.value).split("\n")), default=0)
            else:
                n = 12
            fitted[cell.column] = max(fitted.get(cell.column, 0), n)
    for col, n in fitted.items():
        widths.setdefault(col, min(hi, max(lo, n + 2)))
    for col, w in widths.items():
        ws.column_dimensions[get_column_letter(col)].width = w


LINE_PT = 15.0
"""Height of one line of 11-point text, in points."""


def fit_row_heights(ws) -> None:
    """Give rows with wrapped text the height their lines need.

    Spreadsheets do not grow such rows by themselves when the file gives no height, and the
    wrapped lines would overlap the next row. One character per unit of column width is
    assumed, which errs towards a little spare room.
    """
    for row in ws.iter_rows():
        lines = 0
        for cell in row:
            if cell.data_type != "s" or not cell.value or not (cell.alignment and cell.alignment.wrap_text):
                continue
            width = ws.column_dimensions[get_column_letter(cell.column)].width or 8.43
            per_line = max(1, int(width) - 1)
            lines = max(lines, sum(max(1, math.ceil(len(part) / per_line)) for part in str(cell.value).split("\n")))
        if lines > 1:
            r = row[0].row
            current = ws.row_dimensions[r].height or LINE_PT
            ws.row_dimensions[r].height = min(409.0, max(current, LINE_PT * lines))
            for cell in row:  # the row's other cells line up with the first line of the wrapped text
                if cell.value is not None:
                    a = cell.alignment
                    cell.alignment = Alignment(horizontal=a.horizontal, vertical="top", wrap_text=a.wrap_text)
