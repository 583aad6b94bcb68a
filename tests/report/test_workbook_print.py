"""The budget workbook prints legibly and shows its numbers without a spreadsheet (issue 12).

Page setup as ECMA-376 (Office Open XML) part 1 stores it: landscape, fitToWidth 1 / fitToHeight 0,
print titles, footer codes &P and &N (18.3.1.46 headerFooter); a spreadsheet fitting a sheet to the
page width scales it by page width / sheet width, so text prints at 11 pt × that scale (common practice).
"""

from __future__ import annotations

import math

import openpyxl
import pandas as pd
import pytest

from budget.report.workbook import SHEETS, build_workbook, save_workbook
from budget.report.workbook_print import MIN_PRINT_PT, print_scale


@pytest.fixture(scope="module", params=["gauge", "sweep", "moving"])
def book(request, tmp_path_factory):
    result = request.getfixturevalue(request.param)
    wb = build_workbook(result)
    path = tmp_path_factory.mktemp("print") / "budget.xlsx"
    save_workbook(wb, path)
    return result, wb, path


def test_every_sheet_prints_one_page_wide_at_8_pt_or_more(book):
    result, wb, path = book
    for ws in wb.worksheets:  # built in memory: the charts' widths are known
        fonts = [c.font.sz for row in ws.iter_rows() for c in row if c.value is not None and c.font.sz]
        smallest = min([11.0, *fonts])
        assert smallest * print_scale(ws) >= MIN_PRINT_PT, (ws.title, smallest, print_scale(ws))
    saved = openpyxl.load_workbook(path)
    for ws in saved.worksheets:
        ps = ws.page_setup
        assert ps.orientation == "landscape", ws.title
        assert ws.sheet_properties.pageSetUpPr.fitToPage and ps.fitToWidth == 1 and ps.fitToHeight == 0
        assert ws.print_title_rows, ws.title  # header rows repeated on every page
        footer = (ws.oddFooter.left.text or "") + (ws.oddFooter.center.text or "")
        assert result.input_sha256 in footer and "&P" in footer and "&N" in footer, ws.title
        assert (ws.oddFooter.left.size or 11) >= MIN_PRINT_PT


def test_workbook_asks_to_be_recalculated_on_open(book):
    _, _, path = book
    assert openpyxl.load_workbook(path).calculation.fullCalcOnLoad is True


def test_results_sheet_holds_values_pandas_reads(book):
    """openpyxl writes formulas without cached values, so a viewer shows blanks for them; the Results
    sheet holds plain values, read back here by pandas.read_excel."""
    result, _, path = book
    assert SHEETS[1] == "Results"
    df = pd.read_excel(path, sheet_name="Results")
    assert list(df["output"]) == [ob.name for ob in result.outputs]
    for ob, (_, row) in zip(result.outputs, df.iterrows(), strict=True):
        assert row["result method"] == ob.method
        assert math.isclose(row["estimate"], ob.result_estimate, rel_tol=1e-12, abs_tol=1e-15)
        assert math.isclose(row["interval low"], ob.result_interval[0], rel_tol=1e-12, abs_tol=1e-15)
        assert math.isclose(row["interval high"], ob.result_interval[1], rel_tol=1e-12, abs_tol=1e-15)
        assert math.isclose(row["MC shortest low"], ob.monte_carlo.shortest[0], rel_tol=1e-12, abs_tol=1e-15)
        assert row["result statement"] == ob.result_statement
    ws = openpyxl.load_workbook(path)["Results"]
    assert not [c.coordinate for row in ws.iter_rows() for c in row if c.data_type == "f"]
