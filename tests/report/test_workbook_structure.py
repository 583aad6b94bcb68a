"""The workbook opens with openpyxl and has its sheets, charts, frozen panes and formats; no macros."""

from __future__ import annotations

import math
import zipfile

import openpyxl
import pytest

from budget.report.workbook import SHEETS, build_workbook, save_workbook


@pytest.fixture(scope="module")
def saved(gauge, sweep, tmp_path_factory):
    folder = tmp_path_factory.mktemp("structure")
    out = {}
    for name, result in (("gauge", gauge), ("sweep", sweep)):
        path = folder / f"{name}.xlsx"
        save_workbook(build_workbook(result), path)
        out[name] = (result, path, openpyxl.load_workbook(path))
    return out


@pytest.mark.parametrize("name", ["gauge", "sweep"])
def test_sheets_in_order_with_frozen_panes(saved, name):
    _, _, book = saved[name]
    assert tuple(book.sheetnames) == SHEETS
    for ws in book.worksheets:
        assert ws.freeze_panes, ws.title
        for col in range(1, ws.max_column + 1):  # every used column has a fitted width
            dim = ws.column_dimensions[openpyxl.utils.get_column_letter(col)]
            assert dim.customWidth and 3 <= dim.width <= 80, (ws.title, col)


@pytest.mark.parametrize("name", ["gauge", "sweep"])
def test_monte_carlo_sheet_has_a_histogram_and_a_pareto_chart_per_output(saved, name):
    result, _, book = saved[name]
    charts = book["Monte Carlo"]._charts
    assert len(charts) == 2 * len(result.outputs)
    assert all(type(c).__name__ == "BarChart" for c in charts)
    titles = [c.title.tx.rich.p[0].r[0].t for c in charts if c.title is not None]
    for ob in result.outputs:
        assert f"{ob.label}: Monte Carlo values" in titles
        assert f"{ob.label}: contributions (Pareto)" in titles


@pytest.mark.parametrize("name", ["gauge", "sweep"])
def test_monte_carlo_sheet_lists_both_intervals_trials_and_seed(saved, name):
    result, _, book = saved[name]
    ws = book["Monte Carlo"]
    labels = [ws.cell(row=r, column=1).value for r in range(1, ws.max_row + 1)]
    values = [ws.cell(row=r, column=4).value for r in range(1, ws.max_row + 1)]
    numbers = [v for v in values if isinstance(v, float)]
    for ob in result.outputs:
        mc = ob.monte_carlo
        for want in (*mc.interval, *mc.shortest):  # openpyxl stores 16 significant digits
            assert any(math.isclose(v, want, rel_tol=1e-15) for v in numbers), want
    assert labels.count("trials M") == len(result.outputs)
    assert labels.count("seed of the random generator") == len(result.outputs)
    assert str(result.seed) in values


def test_histogram_counts_add_up_to_the_trials(saved):
    result, _, book = saved["gauge"]
    ws = book["Monte Carlo"]
    ob = result.outputs[0]
    start = next(r for r in range(1, ws.max_row + 1) if ws.cell(row=r, column=1).value == "bin low [°]")
    counts = []
    r = start + 1
    while isinstance(ws.cell(row=r, column=1).value, float):  # the bins
        counts.append(ws.cell(row=r, column=4).value)
        r += 1
    below, above = ws.cell(row=r, column=4).value, ws.cell(row=r + 1, column=4).value
    assert sum(counts) + below + above == ob.monte_carlo.trials


def test_no_macros(saved):
    for _, path, _ in saved.values():
        with zipfile.ZipFile(path) as z:
            names = z.namelist()
            assert not any("vbaProject" in n for n in names)
            assert b"macroEnabled" not in z.read("[Content_Types].xml")


def test_number_formats_suit_the_columns(saved):
    result, _, book = saved["gauge"]
    ws = book["Budget"]
    rows = {ws.cell(row=r, column=1).value: r for r in range(1, ws.max_row + 1)}
    uc = rows["u_c"]
    assert ws.cell(row=uc, column=10).number_format == "0.0000E+00"
    assert ws.cell(row=uc, column=12).number_format == "0.00%"
    assert ws.cell(row=rows["k"], column=10).number_format == "0.000"
    assert ws.cell(row=rows["ν_eff"], column=10).number_format == "0"
    q = book["Quantities"]
    assert q.cell(row=2, column=8).number_format == "0.0000E+00"
    assert q.cell(row=2, column=7).number_format == "0.0000"


def test_group_rows_link_to_their_detail_rows(saved):
    result, _, book = saved["gauge"]
    ws = book["Budget"]
    row = next(r for r in range(2, ws.max_row + 1) if ws.cell(row=r, column=1).value == "lens distortion")
    link = ws.cell(row=row, column=14)
    assert link.hyperlink is not None and link.hyperlink.location.startswith("Detail!A")
    formula = ws.cell(row=row, column=10).value
    first = int(link.hyperlink.location.removeprefix("Detail!A"))
    assert formula.startswith(f"=SQRT(SUMSQ(Detail!$L${first}:")
    detail = book["Detail"]
    assert detail.cell(row=first, column=2).value == "lens distortion"


def test_summary_has_statements_verdicts_and_provenance(saved):
    result, _, book = saved["sweep"]
    ws = book["Summary"]
    cells = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    text = "\n".join(cells)
    for ob in result.outputs:
        assert ob.validation.verdict() in cells
        assert (ob.statement if ob.method == "linear" else ob.mc_statement) in cells
        assert ob.method in cells
    for want in (result.input_sha256, result.input_path, result.created, result.tool_version,
                 "JCGM 100:2008", "JCGM 101:2008"):
        assert want in text
    assert str(result.seed) in cells
    for w in result.warnings:
        assert w in cells


def test_inputs_sheet_shows_the_rig_as_read_with_source_notes(saved):
    result, _, book = saved["gauge"]
    ws = book["Inputs"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    titles = {r[0]: r[1] for r in rows if isinstance(r[0], str) and r[0].startswith("[")}
    for section, table in result.rig_raw.items():
        if isinstance(table, dict):
            assert f"[{section}]" in titles
            if "source" in table:
                assert titles[f"[{section}]"] == f"source: {table['source']}"
    by_key = {r[0]: r[1:] for r in rows}
    assert by_key["pixels_x"][0] == 2448  # numbers stay numbers
    assert by_key["angles_deg"][:4] == [30, 90, 150, 210]
    assert by_key["remounted"][0] == "false"
