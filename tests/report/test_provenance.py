"""The seed and the input file's SHA-256 are in every report file (the README: the seed is recorded
in every output), so a figure or a table found on its own can be traced to its run."""

from __future__ import annotations

import csv
import io

from PIL import Image

from budget.report.csvout import render_csv
from budget.report.files import write_reports


def test_every_csv_row_carries_seed_p_and_input_hash(gauge):
    rows = list(csv.DictReader(io.StringIO(render_csv(gauge))))
    assert rows
    for r in rows:
        assert r["seed"] == str(gauge.seed)
        assert r["input_sha256"] == gauge.input_sha256
        assert float(r["p"]) == gauge.p


def test_every_png_carries_seed_and_input_hash(gauge, tmp_path):
    for path in write_reports(gauge, plots=tmp_path / "plots"):
        with Image.open(path) as im:
            text = " ".join(str(v) for v in im.info.values())
        assert f"seed {gauge.seed}" in text and gauge.input_sha256 in text, path
