"""Markdown budget tables and statements, ready to paste into a test report.

Numbers are printed with six significant digits (:func:`num`) from the same fields the JSON
record (:func:`budget.report.jsonout.run_to_dict`) holds, so a reader can match them; ∞ stands
for infinite degrees of freedom (``null`` in the JSON) and — for "not applicable".
"""

from __future__ import annotations

import re

from budget.report.console import fmt
from budget.report.safe_write import clean_text
from budget.results import OutputBudget, RunResult

__all__ = ["render_markdown", "output_markdown", "num", "md_text", "md_code"]

STANDARDS = "JCGM 100:2008 (GUM) and JCGM 101:2008 (GUM Supplement 1, Monte Carlo)"
COMPONENT_HEADER = ("component", "Type", "distribution", "u(x_i)", "c_i", "contribution [{u}]",
                    "share of u_c² [%]", "ν_i", "Monte Carlo alone [{u}]", "source")


def num(x: float | int | None) -> str:
    """Six significant digits (the console's formatter at six digits); ∞ for an infinite value, — for None."""
    return fmt(x, 6)


ZERO_TO_ROUNDING = 1e-9
"""An estimate smaller than this fraction of its u is zero to rounding and printed as 0 (no ``-3.55e-14``)."""


def num_near(x: float, u: float) -> str:
    """:func:`num`, but 0 for a value that is zero to rounding next to its uncertainty ``u``."""
    return "0" if u > 0 and abs(x) < ZERO_TO_ROUNDING * u else num(x)


_MD_ESCAPES = str.maketrans({"\\": "\\\\", "|": "\\|", "`": "\\`", "<": "&lt;", ">": "&gt;", "\r": " ", "\n": " "})
_MD_LINKS = re.compile(r"\](?=[(\[:])|!(?=\[)")
"""A closing bracket that would make a link or a reference, and the mark of an image."""
_MD_START = re.compile(r"^(\d{1,9})([.)])(?=\s|$)|^([-+*#])(?=[\s#]|$)")
"""A list marker or a heading at the start of a line."""


def md_text(s: str) -> str:
    """A user's text for a table cell or a line, inert: no table breaks, no raw HTML, no links or images,
    no code spans, no list or heading of its own (CommonMark backslash escapes), no control characters."""
    text = _MD_LINKS.sub(lambda m: "\\" + m[0], clean_text(s).translate(_MD_ESCAPES))
    return _MD_START.sub(lambda m: f"{m[1]}\\{m[2]}" if m[1] else "\\" + m[3], text)


def md_code(s: str) -> str:
    """A user's text (a file name) as an inline code span that no character of it can close."""
    text = " ".join(clean_text(s).split("\n")).replace("\r", " ").replace("|", "\\|")
    fence = "`" * (max((len(r) for r in re.findall("`+", text)), default=0) + 1)
    pad = " " if text.startswith("`") or text.endswith("`") else ""
    return f"{fence}{pad}{text}{pad}{fence}"


def _row(cells) -> str:
    return "| " + " | ".join(cells) + " |"


def _interval(pair) -> str:
    return f"[{num(pair[0])}, {num(pair[1])}]"


def _components(ob: OutputBudget) -> list[str]:
    head = [h.format(u=ob.unit) for h in COMPONENT_HEADER]
    out = [_row(head), "|---|:-:|---|--:|--:|--:|--:|--:|--:|---|"]
    for c in sorted(ob.components, key=lambda c: -c.percent):
        u_in = f"{fmt(c.u_input)} {md_text(c.unit)}".strip() if c.u_input is not None else "various"
        out.append(_row([
            md_text(c.name), c.evaluation, md_text(c.distribution), u_in, fmt(c.sensitivity),
            num(c.contribution), num(c.percent), num(c.dof), num(c.mc_u), md_text("; ".join(c.sources)),
        ]))
    return out


def _results(ob: OutputBudget) -> list[str]:
    lin, mc, u = ob.linear, ob.monte_carlo, ob.unit
    pct = f"{100 * lin.p:g} %"
    rows = [
        (f"estimate [{u}]", num_near(lin.estimate, lin.u), num_near(mc.estimate, mc.u)),
        (f"standard uncertainty [{u}]", num(lin.u), num(mc.u)),
        (f"u with second-order terms [{u}]", num(ob.u_second_order), "—"),
        ("ν_eff", num(lin.nu_eff), "—"),
        ("k", num(lin.k), "—"),
        (f"U [{u}]", num(lin.U), "—"),
        (f"{pct} coverage interval [{u}]", _interval(lin.interval), _interval(mc.interval)),
        (f"{pct} shortest coverage interval [{u}]", "—", _interval(mc.shortest)),
        ("trials", "—", num(mc.trials)),
    ]
    return [_row(["quantity", "linear (JCGM 100)", "Monte Carlo (JCGM 101)"]), "|---|--:|--:|",
            *(_row(r) for r in rows)]


def output_markdown(ob: OutputBudget) -> str:
    """One output: result statement, verdict, component table, results table, warnings."""
    result = ob.statement if ob.method == "linear" else ob.mc_statement
    lines = [
        f"## {md_text(ob.label)}", "",
        f"**Result:** {md_text(result)} (result method: {ob.method})", "",
        f"**Validation:** {md_text(ob.validation.verdict())}", "",
        *_components(ob), "",
        *_results(ob), "",
    ]
    if ob.reference is not None:
        r = ob.reference
        lines += [f"**Reference check:** reference {num(r.angle_deg)}° (U_ref = {num(r.U_deg)}°, "
                  f"{md_text(r.source)}), measured {num(r.measured_deg)}° (U = {num(r.measured_U_deg)}°): "
                  f"E_n = {num(r.E_n)}, {'agrees (|E_n| ≤ 1)' if r.ok else '**disagrees** (|E_n| > 1)'} "
                  "(ISO 13528)", ""]
    if ob.warnings:
        lines += ["Warnings:", "", *(f"- {md_text(w)}" for w in ob.warnings), ""]
    return "\n".join(lines)


def _sweep(result: RunResult) -> list[str]:
    s = result.gain_summary
    if s is None:
        return []
    rows = [
        ("set points [V]", ", ".join(num(v) for v in s.set_points_v)),
        ("correlation of gain and intercept, linear", num(s.correlation_linear)),
        ("correlation of gain and intercept, Monte Carlo", num(s.correlation_mc)),
        ("non-linearity from measurement errors, mean [% of span]", num(s.nonlinearity_mean_pct)),
        ("non-linearity, 95th percentile [% of span]", num(s.nonlinearity_p95_pct)),
        ("degrees of freedom of the fit", num(s.dof)),
    ]
    lof = s.lack_of_fit
    if lof is not None:
        rows += [
            ("χ² of the measured angles about their line", num(lof.chi2)),
            ("p-value of χ²", num(lof.p_value)),
            ("χ²_ν(0.95), the acceptance limit", num(lof.critical)),
            ("lack of fit significant", "yes" if lof.significant else "no"),
            ("per-point discrepancy s_d carried [°]", num(lof.misfit_deg)),
        ]
    out = ["## Sweep: gain and intercept", "", _row(["quantity", "value"]), "|---|--:|", *(_row(r) for r in rows), ""]
    if lof is not None:
        out += [f"**Lack of fit:** {md_text(lof.verdict)}", ""]
    return out


def _data(result: RunResult) -> list[str]:
    d = result.data
    if d is None:
        return []
    out = ["## Measured data", "", "Files the data rest on (the data file lists every frame's image and SHA-256):", "",
           _row(["kind", "file", "SHA-256", "note"]), "|---|---|---|---|"]
    out += [_row([f.kind, md_code(f.path), f"`{f.sha256}`", md_text(f.note)]) for f in d.files]
    out += ["", "Located points in image coordinates (x right, y down, px from the centre of the top-left pixel); "
            "s is the frames' standard deviation, n_eff the effective number of independent frames, s²/σ² the "
            "scatter against the locator model's noise per frame:", "",
            _row(["point", "n", "n_eff", "mean x [px]", "mean y [px]", "s_x [px]", "s_y [px]", "r_xy", "drift [px]",
                  "lag-1 r", "s²/σ²", "frames"]), "|---|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|---|"]
    for m in d.points:
        frames = ", ".join(md_code(i) for i in m.images if i) or "—"
        out.append(_row([m.label, num(m.n), num(m.n_eff), num(m.mean_x_px), num(m.mean_y_px), num(m.sd_x_px),
                         num(m.sd_y_px), num(m.r_xy), num(m.drift_px) + (" (significant)" if m.drifting else ""),
                         num(m.lag1) + (" (significant)" if m.autocorrelated else ""), num(m.scatter_ratio), frames]))
    out += ["", f"**Scatter check:** {md_text(d.scatter_check)}", ""]
    return out


def render_markdown(result: RunResult) -> str:
    """The whole Markdown report."""
    lines = [
        f"# Uncertainty budget: {md_text(result.title)}", "",
        f"- Tool: thetabudget {md_text(result.tool_version)}",
        f"- Input file: {md_code(result.input_path)}, SHA-256 `{result.input_sha256}`",
        *(f"- Data file: {md_code(f.path)}, SHA-256 `{f.sha256}`" for f in
          (result.data.files if result.data is not None else ()) if f.kind == "data"),
        f"- Seed: {md_text(str(result.seed))}; coverage probability p = {num(result.p)}; run {result.created}",
        f"- Standards followed: {STANDARDS}",
        "",
        "Results are rounded per JCGM 100 7.2.6; table numbers have six significant digits. "
        "ν = ∞ means infinite degrees of freedom.",
        "",
    ]
    lines += _data(result)
    for ob in result.outputs:
        lines.append(output_markdown(ob))
    lines += _sweep(result)
    from budget.report.targets import target_lines

    if targets := target_lines(result):
        lines += ["## Targets, decisions and the claim for the range", "",
                  *(f"- {md_text(t.strip())}" for t in targets), ""]
    if result.assumptions:
        lines += ["## Assumptions", "", "Values the tool supplied because the input file left them out:", ""]
        lines += [f"- {md_code(a.field)} = {md_text(repr(a.value))}: {md_text(a.reason)}" for a in result.assumptions]
        lines += [""]
    described = result.component_descriptions()
    if described:
        lines += ["## What the components are", ""]
        lines += [f"- **{md_text(k)}**: {md_text(v)}" for k, v in described.items()] + [""]
    if result.warnings:
        lines += ["## Notes on this rig", "", *(f"- {md_text(w)}" for w in result.warnings), ""]
    return "\n".join(lines).rstrip("\n") + "\n"
