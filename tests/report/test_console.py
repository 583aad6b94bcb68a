"""The console report keeps the user's text as written and whole."""

from __future__ import annotations

import dataclasses
import re

import pytest

from budget.report.console import fmt_near, render_run

MARKUP = "[/] [bold]rig[/bold] [link=http://example.invalid]x[/link]"
"""Square brackets a user may type in a title or a note; the terminal library reads them as style tags."""


def _with_text(result, title: str, source: str):
    ob = result.angles[0]
    comps = (dataclasses.replace(ob.components[0], sources=(source,)), *ob.components[1:])
    first = dataclasses.replace(ob, components=comps)
    return dataclasses.replace(result, title=title, angles=(first, *result.angles[1:]))


def test_square_brackets_are_text_not_style_tags(gauge):
    """A title or a source note with '[/]' raised a markup error (a traceback), and '[bold]'
    disappeared from the printed text [common practice: user text is printed verbatim]."""
    text = render_run(_with_text(gauge, f"Title {MARKUP}", f"note {MARKUP}"), width=170, detail=True)
    assert f"Title {MARKUP}" in text
    assert "[bold]rig[/bold]" in text.split("\n", 3)[3]


def test_every_source_note_is_printed_whole(gauge):
    """Every number can be traced: a long source note is wrapped in its cell, never cut short
    with an ellipsis [the README: every component carries its source note into every report]."""
    note = "calibration certificate 2024-117 of the reference dial, table 3, row 12; checked by the rig owner"
    text = render_run(_with_text(gauge, gauge.title, note), detail=True)
    assert "…" not in text.split("\n", 2)[2]  # the header shortens the SHA-256 on purpose
    flat = " ".join(line.strip(" │┃|") for line in text.splitlines())
    for word in note.split():
        assert word in flat, word


@pytest.mark.parametrize("width", [100, 160])
@pytest.mark.parametrize("rig", ["gauge", "sweep", "moving"])
def test_report_fits_the_terminal_and_keeps_every_word(rig, width, request):
    """Summary first, then (with detail) each budget: no line wider than the terminal, no word of a
    source note cut or broken across lines, every number of the summary whole [common practice]."""
    result = request.getfixturevalue(rig)
    text = render_run(result, width=width, detail=True)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width
    assert text.index("Summary") < text.index(": budget (")
    words = set(text.split())
    for ob in result.outputs:
        for c in ob.components:
            for word in "; ".join(c.sources).split():
                assert word in words, (word, c.name)
        assert fmt_near(ob.result_estimate, ob.result_u) in words


@pytest.mark.parametrize("width", [100, 160])
def test_summary_without_detail_has_one_row_per_output(sweep, width):
    text = render_run(sweep, width=width)
    assert ": budget (" not in text and "--detail" in text
    for ob in sweep.outputs:
        assert ob.label.split(" (")[0] in text
        lo, hi = ob.result_interval
        if ob.method != "linear":
            assert f"[{fmt_near(lo, ob.result_u)}, {fmt_near(hi, ob.result_u)}]" in text


def test_shorthand_and_effective_sensitivity_explained_once(moving):
    text = render_run(moving, width=160, detail=True)
    assert text.count("×N after a distribution") == 1
    if re.search(r"\d\*", text):
        assert text.count("* effective sensitivity: contribution / u(x)") == 1


def test_zero_to_rounding_prints_as_zero_and_seed_is_short(sweep):
    assert fmt_near(-1.42109e-14, 0.015) == "0"
    assert fmt_near(-8.5e-5, 0.015) == "-0.0001"
    assert fmt_near(29.99964, 0.016) == "29.9996"
    text = render_run(sweep, width=160, detail=True)
    assert "e-14" not in text and "e-15" not in text


@pytest.mark.parametrize("width", [100, 160])
def test_measured_data_table_fits(gauge, width):
    """The measured-data table (evaluation mode) fits too; its file names are wrapped whole."""
    from budget.results import DataFile, MeasuredDataSummary, MeasuredPoint

    pts = tuple(MeasuredPoint(label=lab, n=8, n_eff=7.3, dof=7.0, mean_x_px=1023.4567, mean_y_px=-512.1234,
                              sd_x_px=0.0123, sd_y_px=0.0145, r_xy=-0.12, lag1=0.05, autocorrelated=True,
                              drift_px=0.0012, drift_p=0.4, drifting=True, scatter_ratio=1.07,
                              images=("shots/P1_000.png", "shots/P1_007.png")) for lab in ("Z", "P1", "P2"))
    data = MeasuredDataSummary(files=(DataFile("shots/data.csv", "ab" * 32, "data"),), points=pts,
                               scatter_check="scatter as expected", scatter_ratio=1.0, scatter_dof=10.0,
                               scatter_interval=(0.5, 1.5), angle_tolerance_deg=1.0)
    text = render_run(dataclasses.replace(gauge, data=data), width=width, detail=True)
    assert max(len(line) for line in text.splitlines()) <= width
    words = text.split()
    assert "shots/P1_000.png" in words and "shots/P1_007.png" in words and "1023.4567" in words
