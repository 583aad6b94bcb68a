"""Text from the input stays inert in every output format (CWE-1236 formula injection; OWASP advice on CSV
injection; CommonMark for Markdown): workbook cells and document properties of both workbooks (budget and
``choose --xlsx``), CSV cells holding line breaks, Markdown, PNG text chunks and the ``--rig-out`` TOML.
Control characters are refused in input text (one line naming the field) and, should one reach a writer,
never written.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import re
import tomllib
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from PIL import Image

from budget.report.markdown import md_code, md_text
from budget.report.safe_write import csv_text, is_risky
from budget.report.workbook import build_workbook, save_workbook
from tests.paths import TEMPLATES
from tests.promise import call, check_promise, check_workbook

FORMULAS = ["=1+2", '=HYPERLINK("http://example.invalid","x")', "+SUM(1,2)", "-2+3", "@SUM(1)", "\uff1d1+2"]


def _choose_with(tmp_path: Path, title: str, names: list[str], toml_title: str | None = None) -> Path:
    """The choose starter with ``title`` (or the TOML text ``toml_title``) and camera ``names``."""
    text = (TEMPLATES / "choose_cameras.toml").read_text(encoding="utf-8")
    value = toml_title if toml_title is not None else json.dumps(title, ensure_ascii=False)
    text = re.sub(r"^title = .*$", lambda m: f"title = {value}", text, count=1, flags=re.M)
    (tmp_path / "choose.toml").write_text(text, encoding="utf-8")
    rows = (TEMPLATES / "cameras.csv").read_text(encoding="utf-8").splitlines()
    body = [r for r in rows if r and not r.startswith("#")]
    out = [body[0]]
    for i, row in enumerate(body[1:]):
        name = names[i % len(names)] + (f" {i}" if i >= len(names) else "")
        out.append('"' + name.replace('"', '""') + '"' + row[row.index(","):])
    (tmp_path / "cameras.csv").write_text("\n".join(out) + "\n", encoding="utf-8")
    return tmp_path / "choose.toml"


@pytest.mark.parametrize("payload", FORMULAS)
def test_choose_workbook_keeps_titles_and_camera_names_as_text(tmp_path, payload):
    ch = _choose_with(tmp_path, payload, [payload, "@cam", "-cam"])
    o = call(["choose", ch, "--xlsx", tmp_path / "c.xlsx"], tmp_path)
    check_promise(o, inputs=("choose.toml", "cameras.csv"))
    assert o.code == 0, o.err
    data = (tmp_path / "c.xlsx").read_bytes()
    check_workbook(data)
    wb = openpyxl.load_workbook(io.BytesIO(data))
    seen = 0
    for row in wb.active.iter_rows():
        for cell in row:
            assert cell.data_type != "f", (cell.coordinate, cell.value)
            if isinstance(cell.value, str) and is_risky(cell.value):
                assert cell.data_type == "s" and cell.quotePrefix, (cell.coordinate, cell.value)
                seen += 1
    assert seen >= 2 and wb.active["A1"].value == payload


def test_a_line_break_inside_a_source_note_stays_inside_its_csv_cell(tmp_path):
    note = 'lens datasheet\r=HYPERLINK("http://example.invalid")\nsecond line'
    text = (TEMPLATES / "gauge_static.toml").read_text(encoding="utf-8")
    block = re.search(r"^\[lens\]\n(.*?)(?=^\[)", text, flags=re.M | re.S).group(0)
    new = re.sub(r"^source = .*$", lambda m: "source = " + json.dumps(note), block, count=1, flags=re.M)
    rig = tmp_path / "rig.toml"
    rig.write_text(text.replace(block, new), encoding="utf-8")
    assert tomllib.loads(rig.read_text(encoding="utf-8"))["lens"]["source"] == note
    o = call(["run", rig, "--trials", "2000", "--seed", "1", "--quiet", "--csv", tmp_path / "b.csv",
              "--md", tmp_path / "b.md", "--xlsx", tmp_path / "b.xlsx"], tmp_path)
    check_promise(o, inputs=("rig.toml",))
    assert o.code == 0, o.err
    raw = (tmp_path / "b.csv").read_bytes().decode("utf-8-sig")
    rows = list(csv.reader(io.StringIO(raw, newline="")))
    assert {len(r) for r in rows} == {len(rows[0])}  # no row broken by the note's CR or LF
    cells = [c for r in rows for c in r if "HYPERLINK" in c]
    assert cells and all(c.startswith("lens datasheet\r=HYPERLINK") for c in cells)
    assert not re.search(r"(^|\r\n|,)=HYPERLINK", raw.replace('"lens datasheet\r=', '"'))
    md = (tmp_path / "b.md").read_text(encoding="utf-8")
    assert "lens datasheet =HYPERLINK" in md and "\r" not in md


@pytest.mark.parametrize("where", ["title", "lens.source"])
@pytest.mark.parametrize("char", ["\x1b", "\x07", "\x00", "\x7f", "\x0c"])
def test_control_characters_in_rig_text_are_refused_in_one_line(tmp_path, where, char):
    text = (TEMPLATES / "gauge_static.toml").read_text(encoding="utf-8")
    escaped = f"\\u{ord(char):04x}"
    if where == "title":
        text = re.sub(r"^title = .*$", lambda m: f'title = "demo {escaped}[31m red"', text, count=1, flags=re.M)
    else:
        block = re.search(r"^\[lens\]\n(.*?)(?=^\[)", text, flags=re.M | re.S).group(0)
        text = text.replace(block, re.sub(r"^source = .*$", lambda m: f'source = "sheet{escaped}"', block,
                                          count=1, flags=re.M))
    (tmp_path / "rig.toml").write_text(text, encoding="utf-8")
    for argv in (["check", tmp_path / "rig.toml"],
                 ["run", tmp_path / "rig.toml", "--trials", "2000", "--xlsx", tmp_path / "b.xlsx"]):
        o = call(argv, tmp_path)
        check_promise(o)
        assert o.code == 2 and f"'{where}'" in o.err and "control characters" in o.err, o.err


def test_control_characters_in_a_camera_name_or_choose_title_are_refused(tmp_path):
    o = call(["choose", _choose_with(tmp_path, "ok", ["cam\x1b[2J"]), "--xlsx", tmp_path / "c.xlsx"], tmp_path)
    check_promise(o)
    assert o.code == 2 and "'name'" in o.err and "control characters" in o.err, o.err
    (tmp_path / "choose.toml").unlink()
    o = call(["choose", _choose_with(tmp_path, "", ["cam"], toml_title='"bell\\u0007"')], tmp_path)
    assert o.code == 2 and "'title'" in o.err, o.err


def test_a_writer_never_writes_a_control_character(gauge, tmp_path):
    """Defence in depth: a title with control characters that reached the writer (not through a file)."""
    result = dataclasses.replace(gauge, title="bell\x07 esc\x1b nul\x00 =1+2")
    path = tmp_path / "b.xlsx"
    save_workbook(build_workbook(result), path)
    wb = openpyxl.load_workbook(path)  # a spreadsheet library opens it
    assert wb.properties.title == "Uncertainty budget: bell\ufffd esc\ufffd nul\ufffd =1+2"
    check_workbook(path.read_bytes())
    assert csv_text("\x1b=x") == "\ufffd=x" and csv_text("=x\x00") == "'=x\ufffd"


def test_choose_writers_clean_control_characters(tmp_path):
    from budget.choice.rank import choose
    from budget.inputs.choose_file import load_choose
    from budget.report.choice import write_choice_plot, write_choice_xlsx

    ch = choose(load_choose(TEMPLATES / "choose_cameras.toml"))
    ch = dataclasses.replace(ch, spec=dataclasses.replace(ch.spec, title="t\x1bx $\\notacommand$ =1"))
    write_choice_xlsx(ch, tmp_path / "c.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "c.xlsx")
    assert wb.active["A1"].value == "t\ufffdx $\\notacommand$ =1" and wb.active["A1"].data_type == "s"
    write_choice_plot(ch, tmp_path / "c.png")  # the title is drawn as text, not parsed as mathtext
    assert Image.open(tmp_path / "c.png").size[0] > 0


def test_png_text_chunks_hold_no_control_characters(tmp_path):
    rig = tmp_path / "rig\x1bname.toml"
    rig.write_text((TEMPLATES / "gauge_static.toml").read_text(encoding="utf-8"), encoding="utf-8")
    o = call(["run", rig, "--trials", "2000", "--seed", "1", "--quiet", "--plots", tmp_path / "plots"], tmp_path)
    assert o.code == 0, o.err
    pngs = sorted((tmp_path / "plots").glob("*.png"))
    assert pngs
    for png in pngs:
        info = Image.open(png).text
        assert "Source" in info and "rig\ufffdname.toml" in info["Source"]
        assert not any(re.search("[\x00-\x08\x0b-\x1f\x7f]", v) for v in info.values())


def test_markdown_text_has_no_links_html_or_structure():
    assert md_text("[click](javascript:alert(1))") == "[click\\](javascript:alert(1))"
    assert md_text("![x](http://t.invalid/p.png)") == "\\![x\\](http://t.invalid/p.png)"
    assert md_text("<img src=x onerror=alert(1)>") == "&lt;img src=x onerror=alert(1)&gt;"
    assert md_text("# heading") == "\\# heading" and md_text("- item") == "\\- item"
    assert md_text("1. item") == "1\\. item" and md_text("0.1.0") == "0.1.0"
    assert md_text("a | b\nc\x1b") == "a \\| b c\ufffd"
    assert md_code("a`b") == "``a`b``" and md_code("`x") == "`` `x ``"


def test_rig_out_is_valid_toml_whatever_the_path(tmp_path):
    ch = _choose_with(tmp_path, "=1+2", ["=cam"])
    weird = tmp_path / "we\x1bird.toml"
    weird.write_text(ch.read_text(encoding="utf-8"), encoding="utf-8")
    o = call(["choose", weird, "--rig-out", tmp_path / "top.toml"], tmp_path)
    assert o.code == 0, o.err
    doc = tomllib.loads((tmp_path / "top.toml").read_text(encoding="utf-8"))
    assert doc["camera"]["pixels_x"] > 0
    o = call(["run", tmp_path / "top.toml", "--trials", "2000", "--seed", "1", "--quiet"], tmp_path)
    assert o.code == 0, o.err


def test_numbers_are_not_quoted(gauge):
    from budget.report.csvout import render_csv

    rows = list(csv.DictReader(io.StringIO(render_csv(gauge), newline="")))
    assert all(np.isfinite(float(r["U"])) for r in rows)
    assert render_csv(gauge).count("\r\n") == len(rows) + 1  # RFC 4180 rows
