"""The HTML report: one self-contained file, input text escaped, printed by a real browser to PDF.

The PDF check renders the file in headless Chromium (``--print-to-pdf``), once as written (the browser's
default paper, US Letter) and once with an A4 page rule added, then reads the text of each page with pypdf:
the page count stays within one page per output budget plus the front and back matter, each output's budget
(its heading and its result) sits on one page, and the printed text carries the reported numbers.
"""

from __future__ import annotations

import dataclasses
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from budget.report.csvout import STATED, statement_numbers
from budget.report.html import render_html

BROWSERS = ("chromium-headless-shell", "chromium", "chromium-browser", "google-chrome", "google-chrome-stable")
"""Browser programs tried in turn (Debian names first; .ci/run installs chromium-headless-shell)."""


def _browser() -> str | None:
    for name in BROWSERS:
        if path := shutil.which(name):
            return path
    for path in ("/usr/lib/chromium/headless_shell", "/usr/lib/chromium/chromium"):
        if Path(path).exists():
            return path
    return None


@pytest.fixture(scope="module")
def gauge_html(gauge):
    return render_html(gauge)


def test_one_self_contained_file_with_every_part(gauge, gauge_html):
    html = gauge_html
    assert not re.search(r"""(src|href)=["'](?!data:)""", html)  # nothing fetched: plots are data URIs
    assert html.count('src="data:image/png;base64,') == 2 * len(gauge.outputs) + 1
    for part in ("Summary", "Budgets", "Assumptions", "Validation of the linear method", "Signatures",
                 "prepared by", "checked by", "date", gauge.input_sha256, str(gauge.seed)):
        assert part in html, part
    for ob in gauge.outputs:
        assert ob.result_statement in html
        for c in ob.components:
            assert c.name in html


def test_input_text_is_escaped(gauge):
    title = '<script>alert("x")</script> & <b>rig</b>'
    ob = gauge.angles[0]
    comp = dataclasses.replace(ob.components[0], sources=('<img src=x onerror="alert(1)">',))
    first = dataclasses.replace(ob, components=(comp, *ob.components[1:]))
    html = render_html(dataclasses.replace(gauge, title=title, angles=(first, *gauge.angles[1:])), with_plots=False)
    assert "<script>" not in html and "<b>rig</b>" not in html and "<img src=x" not in html
    assert "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt; &amp; &lt;b&gt;rig&lt;/b&gt;" in html


def _print_pdf(browser: str, html: Path, pdf: Path) -> None:
    cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-pdf-header-footer",
           f"--print-to-pdf={pdf}", html.as_uri()]
    res = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert pdf.exists() and pdf.stat().st_size > 0, res.stderr[-2000:]


@pytest.mark.parametrize("paper", ["letter", "A4"])
def test_prints_in_a_browser_with_each_budget_on_one_page(gauge, gauge_html, tmp_path, paper):
    browser = _browser()
    if browser is None:
        pytest.skip("no Chromium found (.ci/run installs Debian's chromium-headless-shell; apt was unavailable here)")
    from pypdf import PdfReader

    html = gauge_html if paper == "letter" else gauge_html.replace("</style>", "@page { size: A4; }\n</style>", 1)
    src = tmp_path / "report.html"
    src.write_text(html, encoding="utf-8")
    pdf = tmp_path / "report.pdf"
    _print_pdf(browser, src, pdf)
    reader = PdfReader(pdf)
    width_mm = float(reader.pages[0].mediabox.width) / 72 * 25.4
    assert abs(width_mm - (215.9 if paper == "letter" else 210.0)) < 1.0
    pages = [p.extract_text() for p in reader.pages]
    n = len(gauge.outputs)
    assert 2 <= len(pages) <= n + 6, len(pages)  # + the summary, assumptions and notes (issue 10 adds rows)
    everything = "\n".join(pages)
    for ob in gauge.outputs:
        heading = f"{ob.label} (u"
        on = [i for i, t in enumerate(pages) if heading in t.replace("\n", " ")]
        assert on, heading
        assert "Result: " + ob.result_statement.split(" = ")[0] in pages[on[0]], (ob.label, "result on another page")
        stated = statement_numbers(ob)
        for key in STATED:
            if stated[key]:
                assert stated[key] in everything, (ob.name, key, stated[key])
    assert gauge.input_sha256 in everything.replace("\n", "")
    assert "prepared by" in everything and "checked by" in everything


def test_run_writes_the_html_report_with_the_users_umask(tmp_path, capsys):
    import os

    from budget.cli import main
    from tests.paths import TEMPLATES

    out = tmp_path / "report.html"
    old = os.umask(0o027)
    try:
        rc = main(["run", str(TEMPLATES / "gauge_static.toml"), "--quiet", "--seed", "1", "--trials", "2000",
                   "--html", str(out)])
    finally:
        os.umask(old)
    assert rc == 0 and f"wrote {out}" in capsys.readouterr().out
    assert out.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert out.stat().st_mode & 0o777 == 0o640
    assert main(["run", str(TEMPLATES / "gauge_static.toml"), "--quiet", "--html", str(out)]) == 2  # never replaced


def test_measured_data_files_and_their_sha256_are_listed(gauge):
    from budget.results import DataFile, MeasuredDataSummary

    files = (DataFile("shots/data.csv", "ab" * 32, "data"), DataFile("shots/P1_000.png", "cd" * 32, "image"))
    data = MeasuredDataSummary(files=files, points=(), scatter_check="the frames scatter as the model says",
                               scatter_ratio=1.0, scatter_dof=10.0, scatter_interval=(0.5, 1.5),
                               angle_tolerance_deg=1.0)
    html = render_html(dataclasses.replace(gauge, data=data, mode="evaluation"), with_plots=False)
    assert "Measured data and its provenance" in html and "the frames scatter as the model says" in html
    for f in files:
        assert f.path in html and f.sha256 in html
