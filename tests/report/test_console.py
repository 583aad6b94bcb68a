"""The console report keeps the user's text as written and whole."""

from __future__ import annotations

import dataclasses

from budget.report.console import render_run

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
    text = render_run(_with_text(gauge, f"Title {MARKUP}", f"note {MARKUP}"))
    assert f"Title {MARKUP}" in text
    assert "[bold]rig[/bold]" in text.split("\n", 3)[3]


def test_every_source_note_is_printed_whole(gauge):
    """Every number can be traced: a long source note is wrapped in its cell, never cut short
    with an ellipsis [the README: every component carries its source note into every report]."""
    note = "calibration certificate 2024-117 of the reference dial, table 3, row 12; checked by the rig owner"
    text = render_run(_with_text(gauge, gauge.title, note))
    assert "…" not in text.split("\n", 2)[2]  # the header shortens the SHA-256 on purpose
    flat = " ".join(line.strip(" │┃|") for line in text.splitlines())
    for word in note.split():
        assert word in flat, word
