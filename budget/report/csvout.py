"""The budget rows as CSV: one row per output × component, numbers unrounded.

Numbers are written with Python's shortest round-trip representation (``repr``), so
reading them back gives the engine's floats exactly; an infinite ν is ``inf`` and a
missing value an empty cell. Every row carries the run's p, seed and input SHA-256, so a row
copied elsewhere can still be traced to its run. Text from the user is made inert for spreadsheets
(:func:`budget.report.safe_write.csv_text`). In evaluation mode ``data_sha256`` names each data file
with its SHA-256 (the data file in turn records every frame's image and SHA-256). The file is UTF-8 with a
byte-order mark,
which spreadsheets need to show °, ν and √ correctly.
"""

from __future__ import annotations

import csv
import io

from budget.report.safe_write import csv_text
from budget.results import RunResult

__all__ = ["render_csv", "CSV_COLUMNS", "ENCODING"]

ENCODING = "utf-8-sig"
CSV_COLUMNS = (
    "output", "output_label", "output_unit", "component", "type", "distribution", "u_input", "input_unit",
    "sensitivity", "contribution", "percent", "dof", "monte_carlo_u", "n_inputs", "inputs", "sources",
    "estimate", "u_c", "nu_eff", "k", "U", "result_method", "p", "seed", "input_sha256", "data_sha256",
)


def _n(x: float | int | None) -> str:
    if x is None:
        return ""
    return repr(int(x)) if isinstance(x, int) and not isinstance(x, bool) else repr(float(x))


def render_csv(result: RunResult) -> str:
    """The CSV text (write it with :data:`ENCODING`)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    data = "; ".join(f"{f.path} {f.sha256}" for f in (result.data.files if result.data is not None else ())
                     if f.kind == "data")
    for ob in result.outputs:
        lin = ob.linear
        for c in ob.components:
            w.writerow([
                csv_text(ob.name), csv_text(ob.label), csv_text(ob.unit), csv_text(c.name), csv_text(c.evaluation),
                csv_text(c.distribution), _n(c.u_input), csv_text(c.unit), _n(c.sensitivity), _n(c.contribution),
                _n(c.percent), _n(c.dof), _n(c.mc_u), _n(len(c.inputs)), csv_text(" ".join(c.inputs)),
                csv_text("; ".join(c.sources)), _n(lin.estimate), _n(lin.u), _n(lin.nu_eff), _n(lin.k), _n(lin.U),
                csv_text(ob.method), _n(result.p), csv_text(str(result.seed)), result.input_sha256, csv_text(data),
            ])
    return buf.getvalue()
