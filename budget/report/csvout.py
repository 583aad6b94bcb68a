"""The budget rows as CSV: one row per output × component, numbers unrounded.

Numbers are written with Python's shortest round-trip representation (``repr``), so
reading them back gives the engine's floats exactly; an infinite ν is ``inf`` and a
missing value an empty cell. Every row carries the run's p, seed and input SHA-256, so a row
copied elsewhere can still be traced to its run. Text from the user is made inert for spreadsheets
(:func:`budget.report.safe_write.csv_text`), and a cell holding a line break is quoted (rows end in CR LF,
RFC 4180). In evaluation mode ``data_sha256`` names each data file
with its SHA-256 (the data file in turn records every frame's image and SHA-256). The file is UTF-8 with a
byte-order mark,
which spreadsheets need to show °, ν and √ correctly.

``estimate`` … ``U`` are the linear method's (JCGM 100); ``result_*`` are those of the method the result rests
on (``result_method``); ``mc_*`` the Monte Carlo ones (JCGM 101 7.7 symmetric and 7.8 shortest intervals); the
``stated_*`` columns are the numbers of the rounded statement (JCGM 100 7.2.6) as printed, decimal text.
"""

from __future__ import annotations

import io
from decimal import Decimal

from budget.errors import BudgetInputError
from budget.propagation.rounding import outward_interval, round_pair
from budget.report.safe_write import csv_text, csv_writer
from budget.results import RunResult

__all__ = ["render_csv", "CSV_COLUMNS", "ENCODING", "statement_numbers"]

ENCODING = "utf-8-sig"
CSV_COLUMNS = (
    "output", "output_label", "output_unit", "component", "type", "distribution", "u_input", "input_unit",
    "sensitivity", "contribution", "percent", "dof", "monte_carlo_u", "n_inputs", "inputs", "sources",
    "estimate", "u_c", "nu_eff", "k", "U", "result_method", "p", "seed", "input_sha256", "data_sha256",
    "result_estimate", "result_u", "result_low", "result_high", "mc_estimate", "mc_u", "mc_low", "mc_high",
    "mc_shortest_low", "mc_shortest_high", "mc_trials", "statement", "stated_estimate", "stated_u", "stated_U",
    "stated_low", "stated_high",
)
STATED = ("estimate", "u", "U", "low", "high")


def statement_numbers(ob) -> dict[str, str]:
    """The numbers of the result's rounded statement as decimal text (empty where the statement has none).

    The linear statement gives y and U (JCGM 100 7.2.4); the Monte Carlo one y, u and the interval
    (JCGM 101 7.6–7.8); both rounded as :mod:`budget.propagation.rounding` rounds them for the statement.
    """
    out = dict.fromkeys(STATED, "")
    try:
        if ob.method == "linear":
            out["estimate"], out["U"] = round_pair(ob.linear.estimate, ob.linear.U)
        else:
            mc = ob.monte_carlo
            out["estimate"], out["u"] = round_pair(mc.estimate, mc.u)
            places = max(0, -Decimal(out["u"]).as_tuple().exponent)
            out["low"], out["high"] = outward_interval(mc.interval, places)  # ends rounded outward
    except BudgetInputError:  # u or U = 0: the statement has no rounded numbers
        return dict.fromkeys(STATED, "")
    return out


def _n(x: float | int | None) -> str:
    if x is None:
        return ""
    return repr(int(x)) if isinstance(x, int) and not isinstance(x, bool) else repr(float(x))


def render_csv(result: RunResult) -> str:
    """The CSV text (write it with :data:`ENCODING`)."""
    buf = io.StringIO()
    w = csv_writer(buf)  # CR LF rows: a line break inside a cell is quoted
    w.writerow(CSV_COLUMNS)
    data = "; ".join(f"{f.path} {f.sha256}" for f in (result.data.files if result.data is not None else ())
                     if f.kind == "data")
    for ob in result.outputs:
        lin, mc = ob.linear, ob.monte_carlo
        stated = statement_numbers(ob)
        tail = [_n(ob.result_estimate), _n(ob.result_u), *map(_n, ob.result_interval), _n(mc.estimate), _n(mc.u),
                *map(_n, mc.interval), *map(_n, mc.shortest), _n(mc.trials), csv_text(ob.result_statement),
                *(stated[k] for k in STATED)]
        for c in ob.components:
            w.writerow([
                csv_text(ob.name), csv_text(ob.label), csv_text(ob.unit), csv_text(c.name), csv_text(c.evaluation),
                csv_text(c.distribution), _n(c.u_input), csv_text(c.unit), _n(c.sensitivity), _n(c.contribution),
                _n(c.percent), _n(c.dof), _n(c.mc_u), _n(len(c.inputs)), csv_text(" ".join(c.inputs)),
                csv_text("; ".join(c.sources)), _n(lin.estimate), _n(lin.u), _n(lin.nu_eff), _n(lin.k), _n(lin.U),
                csv_text(ob.method), _n(result.p), csv_text(str(result.seed)), result.input_sha256, csv_text(data),
                *tail,
            ])
    return buf.getvalue()
