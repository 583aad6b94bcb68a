"""Printing a workbook: landscape, one page wide with text no smaller than 8 pt, header rows repeated,
a footer with the input's SHA-256 and page numbers; and a request to recalculate on opening.

A spreadsheet that fits a sheet to the page width scales it down: a sheet wider than the page at
8/11 of its size would print smaller than 8 pt (11 pt is the default font). :func:`make_printable`
narrows the widest text columns (their cells wrap) until the sheet fits a US Letter page, the
narrower of A4 and Letter, at that scale; numbers keep the width their format needs.
"""

from __future__ import annotations

import math

from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.page import PageMargins

__all__ = ["MIN_PRINT_PT", "PRINTABLE_PX", "make_printable", "print_scale", "sheet_width_px", "recalc_on_open"]

MIN_PRINT_PT = 8.0
"""The smallest printed text (issue 12: an auditor reads the printout)."""
BASE_PT = 11.0
"""The workbook's default font size (openpyxl's Calibri 11)."""
MARGIN_IN = 0.3
"""Left and right margins, inches."""
PRINTABLE_PX = round((11.0 - 2 * MARGIN_IN) * 96)
"""Printable width of a US Letter page in landscape (11 in less the margins) at 96 px per inch; A4 is wider."""
MIN_TEXT_WIDTH = 12
"""A text column is not narrowed below this many characters."""


def column_px(width: float) -> int:
    """Pixels of a column ``width`` characters wide (Calibri 11: 7 px a digit plus 5 px of padding; ECMA-376
    18.3.1.13, the column width formula)."""
    return int(math.floor(width * 7 + 5))


def _columns_px(ws, n: int) -> int:
    total = 0
    for col in range(1, n + 1):
        dim = ws.column_dimensions[get_column_letter(col)]
        if not dim.hidden:
            total += column_px(dim.width or 8.43)
    return total


def sheet_width_px(ws) -> int:
    """The printed width of the used columns and the charts, in pixels at 100 % (a chart's width is in cm)."""
    total = _columns_px(ws, ws.max_column)
    for ch in getattr(ws, "_charts", ()):
        start = getattr(getattr(ch.anchor, "_from", None), "col", None)
        if start is None:  # an anchor given as a cell reference, e.g. "M3"
            from openpyxl.utils.cell import column_index_from_string, coordinate_from_string

            start = column_index_from_string(coordinate_from_string(ch.anchor)[0]) - 1
        total = max(total, _columns_px(ws, start) + round(ch.width / 2.54 * 96))
    return total


def print_scale(ws) -> float:
    """The scale a spreadsheet prints the sheet at when fitting it one page wide (at most 1)."""
    return min(1.0, PRINTABLE_PX / max(1, sheet_width_px(ws)))


def _text_columns(ws) -> dict[int, float]:
    """Columns whose cells are mostly text, with their widths."""
    counts: dict[int, list[int]] = {}
    for row in ws.iter_rows(min_row=2):
        for cell in row:
            if cell.value is not None:
                c = counts.setdefault(cell.column, [0, 0])
                c[0 if cell.data_type == "s" else 1] += 1
    return {col: ws.column_dimensions[get_column_letter(col)].width or 8.43
            for col, (n_text, n_other) in counts.items() if n_text > n_other}


def _narrow(ws) -> None:
    """Narrow the widest text columns (proportionally above :data:`MIN_TEXT_WIDTH`) until the sheet fits."""
    limit = PRINTABLE_PX * BASE_PT / MIN_PRINT_PT
    wide = {c: w for c, w in _text_columns(ws).items() if w > MIN_TEXT_WIDTH}
    for _ in range(20):
        excess = sheet_width_px(ws) - limit
        room = sum(ws.column_dimensions[get_column_letter(c)].width - MIN_TEXT_WIDTH for c in wide)
        if excess <= 0 or room <= 0:
            break
        cut = min(1.0, (excess / 7 + 1) / room)
        for col in wide:
            dim = ws.column_dimensions[get_column_letter(col)]
            dim.width = max(MIN_TEXT_WIDTH, math.floor(dim.width - cut * (dim.width - MIN_TEXT_WIDTH)))
    for col in wide:
        for row in ws.iter_rows(min_col=col, max_col=col):
            for cell in row:
                if cell.data_type == "s" and cell.value is not None and not (cell.alignment and
                                                                             cell.alignment.wrap_text):
                    a = cell.alignment
                    cell.alignment = Alignment(horizontal=a.horizontal, vertical="top", wrap_text=True)


def make_printable(ws, *, sha256: str, title_rows: str | None, tool: str, title_cols: str | None = None) -> None:
    """Page setup of one sheet (call before :func:`budget.report.workbook_cells.fit_row_heights`).

    A sheet that still cannot fit one page wide at 8 pt (a table of many number columns) prints at full
    size over several pages across instead, with ``title_cols`` (e.g. ``"A:C"``) repeated on each.
    """
    _narrow(ws)
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    if print_scale(ws) * BASE_PT >= MIN_PRINT_PT or not title_cols:
        ws.sheet_properties.pageSetUpPr.fitToPage = True
        ws.page_setup.fitToWidth = 1
        ws.page_setup.fitToHeight = 0
    else:
        ws.sheet_properties.pageSetUpPr.fitToPage = False
        ws.page_setup.scale = 100
        ws.page_setup.pageOrder = "overThenDown"
        ws.print_title_cols = title_cols
    ws.page_margins = PageMargins(left=MARGIN_IN, right=MARGIN_IN, top=0.6, bottom=0.6, header=0.25, footer=0.25)
    if title_rows:
        ws.print_title_rows = title_rows
    # & starts a code in a header or footer (&P page, &N pages); the texts here hold no user text
    ws.oddFooter.left.text = f"input SHA-256 {sha256 or 'none recorded'}"
    ws.oddFooter.left.size = 8
    ws.oddFooter.center.text = "page &P of &N"
    ws.oddFooter.center.size = 8
    ws.oddFooter.right.text = f"{tool} · &A"
    ws.oddFooter.right.size = 8


def recalc_on_open(wb) -> None:
    """Ask the spreadsheet to recalculate every formula when the file is opened (openpyxl writes no cached values)."""
    from openpyxl.workbook.properties import CalcProperties

    wb.calculation = CalcProperties(fullCalcOnLoad=True)
