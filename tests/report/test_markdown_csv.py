"""Markdown tables carry the JSON record's numbers; the CSV carries the engine's numbers unrounded.

The Markdown prints six significant digits, so its numbers match the JSON's to a relative
5e-6 at worst (half a unit in the sixth digit); the comparison uses 1e-5.
"""

from __future__ import annotations

import csv
import io
import math
import re

import pytest

from budget.report.csvout import CSV_COLUMNS, render_csv
from budget.report.jsonout import run_to_dict
from budget.report.markdown import md_text, render_markdown

REL = 1e-5
RUNS = ["gauge", "sweep", "moving", "type_a", "correlated"]


def _cell(text: str):
    text = text.strip()
    if text == "—":
        return None
    if text == "∞":
        return math.inf
    m = re.fullmatch(r"\[(\S+), (\S+)\]", text)
    if m:
        return float(m[1]), float(m[2])
    try:
        return float(text)
    except ValueError:
        return text


def _row(line: str) -> list[str]:
    return [c.strip() for c in re.split(r"(?<!\\)\|", line.strip())[1:-1]]


def parse_markdown(md: str) -> dict[str, dict]:
    """Per section title: its tables (list of rows of cells) and its text."""
    sections: dict[str, dict] = {}
    current = None
    for line in md.splitlines():
        if line.startswith("## "):
            current = sections.setdefault(line[3:], {"tables": [], "text": ""})
            table = None
            continue
        if current is None:
            continue
        current["text"] += line + "\n"
        if line.startswith("|"):
            if table is None:
                table = []
                current["tables"].append(table)
            if not re.fullmatch(r"\|[-:|]+\|", line.strip()):
                table.append(_row(line))
        else:
            table = None
    return sections


def same(md_value, json_value, abs_tol: float = 1e-300) -> bool:
    if json_value is None:  # JSON null: infinite ν, or not applicable
        return md_value in (math.inf, None)
    if isinstance(json_value, list):
        return len(json_value) == 2 and all(same(a, b) for a, b in zip(md_value, json_value, strict=True))
    return math.isclose(md_value, json_value, rel_tol=REL, abs_tol=abs_tol)


def check_output(section: dict, record: dict, s: str) -> None:
    components, results = section["tables"]
    comp = {r[0]: r for r in components[1:]}
    assert set(comp) == {c["name"] for c in record["components"]}
    for c in record["components"]:
        row = comp[c["name"]]
        assert row[1] == c["type"]
        assert same(_cell(row[5]), c[f"u{s}"]), c["name"]
        assert same(_cell(row[6]), c["percent"]), c["name"]
        assert same(_cell(row[7]), c["dof"]), c["name"]
        assert same(_cell(row[8]), c[f"monte_carlo_u{s}"]), c["name"]
    res = {r[0].split(" [")[0]: (_cell(r[1]), _cell(r[2])) for r in results[1:]}
    lin, mc = record["linear"], record["monte_carlo"]
    # an estimate zero to rounding (below 1e-9 u) prints as 0 (issue 12)
    assert same(res["estimate"][0], lin[f"estimate{s}"], 1e-9 * lin[f"u{s}"])
    assert same(res["estimate"][1], mc[f"estimate{s}"], 1e-9 * mc[f"u{s}"])
    assert same(res["standard uncertainty"][0], lin[f"u{s}"]) and same(res["standard uncertainty"][1], mc[f"u{s}"])
    assert same(res["u with second-order terms"][0], lin[f"u_second_order{s}"])
    assert same(res["ν_eff"][0], lin["nu_eff"])
    assert same(res["k"][0], lin["k"])
    assert same(res["U"][0], lin[f"U{s}"])
    pct = next(k for k in res if k.endswith("% coverage interval") and "shortest" not in k)
    assert same(res[pct][1], mc[f"interval{s}"])
    assert same(res[pct.replace("coverage", "shortest coverage")][1], mc[f"shortest{s}"])
    assert res["trials"][1] == mc["trials"]
    assert record["statement"] in section["text"]


@pytest.mark.parametrize("name", RUNS)
def test_markdown_numbers_equal_the_json(request, name):
    result = request.getfixturevalue(name)
    doc = run_to_dict(result)
    sections = parse_markdown(render_markdown(result))
    for ob, record in zip(result.angles, doc["angles"], strict=True):
        check_output(sections[ob.label], record, "_deg")
        assert md_text(ob.validation.verdict()) in sections[ob.label]["text"]  # "<=" is escaped
    if result.gain is not None:
        gain = doc["gain"]
        check_output(sections[result.gain.label], gain, "")
        inter = sections[result.gain_summary.intercept.label]["tables"][1]
        res = {r[0].split(" [")[0]: (_cell(r[1]), _cell(r[2])) for r in inter[1:]}
        assert same(res["estimate"][0], gain["intercept"]["estimate_deg"], 1e-9 * gain["intercept"]["u_deg"])
        assert same(res["standard uncertainty"][0], gain["intercept"]["u_deg"])
        assert same(res["standard uncertainty"][1], gain["intercept"]["monte_carlo_u_deg"])
        sweep = {r[0]: _cell(r[1]) for r in sections["Sweep: gain and intercept"]["tables"][0][1:]}
        assert same(sweep["correlation of gain and intercept, linear"], gain["correlation_slope_intercept"])
        assert same(sweep["correlation of gain and intercept, Monte Carlo"],
                    gain["correlation_slope_intercept_monte_carlo"])
        assert same(sweep["non-linearity from measurement errors, mean [% of span]"],
                    gain["nonlinearity_percent_span"])
        assert same(sweep["non-linearity, 95th percentile [% of span]"], gain["nonlinearity_percent_span_p95"])
        assert sweep["degrees of freedom of the fit"] == gain["dof"]


def test_markdown_header_has_the_provenance(sweep):
    md = render_markdown(sweep)
    for want in (sweep.input_sha256, sweep.input_path, f"Seed: {sweep.seed}", "JCGM 100:2008", "JCGM 101:2008",
                 sweep.tool_version):
        assert want in md


def _num(text: str):
    return None if text == "" else float(text)


@pytest.mark.parametrize("name", RUNS)
def test_csv_rows_are_the_engine_numbers_unrounded(request, name):
    result = request.getfixturevalue(name)
    rows = list(csv.DictReader(io.StringIO(render_csv(result))))
    assert tuple(rows[0]) == CSV_COLUMNS
    assert len(rows) == sum(len(ob.components) for ob in result.outputs)
    it = iter(rows)
    for ob in result.outputs:
        for c in ob.components:
            r = next(it)
            assert (r["output"], r["component"], r["type"]) == (ob.name, c.name, c.evaluation)
            for key, value in (("contribution", c.contribution), ("percent", c.percent), ("dof", c.dof),
                               ("monte_carlo_u", c.mc_u), ("u_input", c.u_input), ("sensitivity", c.sensitivity),
                               ("u_c", ob.linear.u), ("nu_eff", ob.linear.nu_eff), ("k", ob.linear.k),
                               ("U", ob.linear.U), ("estimate", ob.linear.estimate)):
                assert _num(r[key]) == value, (ob.name, c.name, key)  # exactly: repr round-trips
            assert int(r["n_inputs"]) == len(c.inputs) == len(r["inputs"].split())
            assert r["result_method"] == ob.method


def test_csv_rows_carry_the_result_method_mc_interval_and_statement_numbers(sweep):
    """The CSV said the result is the Monte Carlo one but carried only the linear U (issue 12): each row now
    carries the result's interval, the Monte Carlo intervals and the numbers of the rounded statement."""
    import csv as _csv
    import io as _io

    from budget.report.csvout import render_csv

    rows = list(_csv.DictReader(_io.StringIO(render_csv(sweep))))
    by_output = {ob.name: ob for ob in sweep.outputs}
    for row in rows:
        ob = by_output[row["output"]]
        mc = ob.monte_carlo
        assert (float(row["mc_low"]), float(row["mc_high"])) == mc.interval
        assert (float(row["mc_shortest_low"]), float(row["mc_shortest_high"])) == mc.shortest
        assert (float(row["result_low"]), float(row["result_high"])) == ob.result_interval
        assert row["result_method"] == ob.method and row["statement"] == ob.result_statement
        stated = [row[f"stated_{k}"] for k in ("estimate", "u", "U", "low", "high") if row[f"stated_{k}"]]
        assert stated and all(v in row["statement"] for v in stated)
        if ob.method != "linear":
            assert (row["result_low"], row["result_high"]) == (row["mc_low"], row["mc_high"])
