"""Text from the user stays text: formula-like titles and source notes in the workbook and the CSV.

The usual advice against CSV and formula injection (CWE-1236, OWASP): a cell that starts with
=, +, - or @ must not be run by a spreadsheet.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile

import openpyxl
import pytest

from budget.report.csvout import CSV_COLUMNS, render_csv
from budget.report.markdown import md_text, render_markdown
from budget.report.safe_write import csv_text, is_risky, set_text
from budget.report.workbook import build_workbook, save_workbook

ALLOWED_FUNCTIONS = {"SQRT", "SUMSQ", "ABS", "IF", "ISNUMBER", "OR", "INT", "SUM", "_xlfn.T.INV.2T",
                     "_xlfn.NORM.S.INV"}


@pytest.fixture(scope="module")
def book(type_a, tmp_path_factory):
    path = tmp_path_factory.mktemp("inject") / "inject.xlsx"
    save_workbook(build_workbook(type_a), path)
    return path, openpyxl.load_workbook(path)


def test_the_rig_really_carries_the_payloads(type_a, injections):
    assert type_a.title == injections["title"]
    sources = {s for ob in type_a.outputs for c in ob.components for s in c.sources}
    for section in ("lens", "geometry", "target"):  # component source notes
        assert any(s.startswith(injections[section]) for s in sources), section
    for section in ("lens", "geometry", "target", "locator"):  # the rig as read (Inputs sheet)
        assert type_a.rig_raw[section]["source"] == injections[section]


def test_user_text_is_a_string_cell_in_every_sheet(book, injections):
    _, wb = book
    payloads = tuple(injections.values())
    seen = set()
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and any(p in cell.value for p in payloads):
                    assert cell.data_type == "s", (ws.title, cell.coordinate, cell.value)
                    if is_risky(cell.value):
                        assert cell.quotePrefix, (ws.title, cell.coordinate)
                    seen.update(p for p in payloads if cell.value.startswith(p))
    assert seen == set(payloads)  # every payload reached a cell of its own, at its start


def test_every_formula_is_ours(book):
    """Formula cells use only the budget's functions and never carry the user's text."""
    path, wb = book
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type != "f":
                    continue
                names = set(re.findall(r"([A-Za-z_][A-Za-z0-9_.]*)\(", cell.value))
                assert names <= ALLOWED_FUNCTIONS, (ws.title, cell.coordinate, cell.value)
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                formulas = re.findall(r"<f>(.*?)</f>", z.read(name).decode("utf-8"))
                assert not any("HYPERLINK" in f or "SUM(1" in f for f in formulas), name


def test_csv_text_fields_are_inert_and_numbers_stay_numbers(type_a, injections):
    rows = list(csv.DictReader(io.StringIO(render_csv(type_a))))
    assert rows and tuple(rows[0]) == CSV_COLUMNS
    lens = [r for r in rows if r["component"] == "lens distortion"]
    assert lens and all(r["sources"].startswith("'" + injections["lens"]) for r in lens)
    numeric = ("contribution", "percent", "dof", "u_c", "nu_eff", "k", "U", "estimate")
    for r in rows:
        for key, value in r.items():
            if key in numeric:
                float(value)  # a number, not a quoted text
                continue
            assert not value.startswith(("=", "+", "-", "@", "\t", "\r")), (key, value)


def test_markdown_keeps_user_text_from_breaking_tables():
    assert md_text("a|b<script>") == "a\\|b&lt;script&gt;"
    assert "\n" not in md_text("one\ntwo")


def test_markdown_title_is_plain_text(type_a, injections):
    md = render_markdown(type_a)
    assert md.splitlines()[0] == f"# Uncertainty budget: {injections['title']}"


@pytest.mark.parametrize("payload", ["=1+2", "+A1", "-A1", "@SUM(A1)", "\tx", "\rx"])
def test_csv_text_quotes_formula_starts(payload):
    assert csv_text(payload) == "'" + payload
    assert csv_text("plain " + payload) == "plain " + payload


def test_set_text_forces_a_string_cell():
    ws = openpyxl.Workbook().active
    cell = set_text(ws["A1"], "=SUM(A2:A3)")
    assert cell.data_type == "s" and cell.quotePrefix and cell.value == "=SUM(A2:A3)"
    cell = set_text(ws["A2"], "bell\x07here")
    assert cell.value == "bell\ufffdhere"
