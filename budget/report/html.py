"""The HTML report a metrologist can attach to a test report and sign: one self-contained file.

Built with a Jinja2 template (``report.html.j2``, package data read through :mod:`importlib.resources`)
with autoescaping on, so every text from the input (title, names, source notes) is escaped. The plots are
the PNG figures of :mod:`budget.report.plots` embedded as data URIs. The print stylesheet fits A4 and US
Letter and keeps each output's budget on one page where it fits (``break-inside: avoid``). Nothing here
computes an uncertainty: it lays out the :class:`~budget.results.RunResult`.
"""

from __future__ import annotations

import base64
import io
from importlib import resources

from budget.dataframes import summary_rows
from budget.report.console import COLUMNS, EFFECTIVE, METHOD, SHORTHAND, fmt, fmt_dof, fmt_near, reference_line
from budget.report.safe_write import clean_text
from budget.report.targets import target_lines
from budget.results import OutputBudget, RunResult

__all__ = ["render_html", "TEMPLATE"]

TEMPLATE = "report.html.j2"


def _uri(draw) -> str:
    buf = io.BytesIO()
    draw(buf)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _summary(result: RunResult) -> list[dict]:
    out = []
    for row, ob in zip(summary_rows(result), result.outputs, strict=True):
        u = ob.result_u
        spread = (f"± {fmt_near(ob.linear.U, u)} (k = {ob.linear.k:.2f})" if ob.method == "linear"
                  else f"[{fmt_near(row['low'], u)}, {fmt_near(row['high'], u)}]")
        meets = row["meets"]
        out.append(dict(label=ob.label, estimate=fmt_near(row["estimate"], u), u=fmt(u, 2), spread=spread,
                        unit=ob.unit, method=METHOD.get(ob.method, ob.method),
                        dominant=f"{row['dominant']} ({row['dominant_percent']:.0f} %)" if row["dominant"] else "—",
                        target="" if meets is None else ("meets" if meets else "FAILS")))
    return out


def _budget(ob: OutputBudget, plots: list[dict]) -> dict:
    lin, mc = ob.linear, ob.monte_carlo
    rows = []
    for c in sorted(ob.components, key=lambda c: -max(c.contribution, c.mc_u or 0.0)):
        eff = c.effective_sensitivity
        rows.append(dict(
            name=c.name, type=c.evaluation, distribution=c.distribution,
            u=f"{fmt(c.u_input)} {c.unit}".strip() if c.u_input is not None else "various",
            c=fmt(c.sensitivity) if c.sensitivity is not None else ("—" if eff is None else f"{fmt(eff)}*"),
            contribution=fmt(c.contribution), share=f"{c.percent:.1f} %", dof=fmt_dof(c.dof), mc=fmt(c.mc_u),
            sources="; ".join(c.sources)))
    lu, mu = lin.u, mc.u
    lines = [
        f"Linear (JCGM 100): estimate {fmt_near(lin.estimate, lu)} {ob.unit}, u_c = {fmt(lin.u)}, "
        f"ν_eff = {fmt_dof(lin.nu_eff)}, k = {lin.k:.3f}, U = {fmt(lin.U)} {ob.unit}.",
        f"Monte Carlo (JCGM 101): estimate {fmt_near(mc.estimate, mu)} {ob.unit}, u = {fmt(mc.u)}, "
        f"{100 * mc.p:g} % interval [{fmt_near(mc.interval[0], mu)}, {fmt_near(mc.interval[1], mu)}], shortest "
        f"[{fmt_near(mc.shortest[0], mu)}, {fmt_near(mc.shortest[1], mu)}], {mc.trials:,} trials.",
        ob.validation.verdict(),
    ]
    if ref := reference_line(ob):
        lines.append(ref)
    return dict(label=ob.label, unit=ob.unit, rows=rows, lines=lines, statement=ob.result_statement,
                warnings=list(ob.warnings), plots=plots)


def _decisions(result: RunResult) -> list[dict]:
    return [dict(label=d.label, decision=d.decision, in_guard_band=d.in_guard_band, value=f"{d.value:.6g} {d.unit}",
                 tolerance=f"[{d.tolerance[0]:.6g}, {d.tolerance[1]:.6g}]",
                 acceptance=f"[{d.acceptance[0]:.6g}, {d.acceptance[1]:.6g}]", U=f"{d.U:.3g}",
                 p=f"{100 * d.p_conformity:.1f} %", note=d.note) for d in result.decisions]


def _sweep_lines(result: RunResult) -> list[str]:
    s = result.gain_summary
    if s is None:
        return []
    lines = [f"Correlation of gain and intercept: {s.correlation_linear:+.3f} (linear), "
             f"{s.correlation_mc:+.3f} (Monte Carlo).",
             f"Non-linearity from measurement errors alone: mean {s.nonlinearity_mean_pct:.2g} % of span, "
             f"95th percentile {s.nonlinearity_p95_pct:.2g} %."]
    if s.lack_of_fit is not None:
        lines.append(s.lack_of_fit.verdict)
    return lines


def _plots(result: RunResult, with_plots: bool) -> tuple[dict[str, list[dict]], list[dict]]:
    if not with_plots:
        return {}, []
    from budget.report.plots import expanded_uncertainty, mc_histogram, pareto, provenance, sweep_residuals

    stamp = provenance(result)
    per = {ob.name: [dict(alt=f"{ob.label}: Monte Carlo values and intervals",
                          uri=_uri(lambda f, ob=ob: mc_histogram(ob, f, stamp))),
                     dict(alt=f"{ob.label}: contributions (Pareto)", uri=_uri(lambda f, ob=ob: pareto(ob, f, stamp)))]
           for ob in result.outputs}
    extra = []
    s = result.gain_summary
    if s is not None and result.gain is not None and len(s.set_points_v) == len(result.angles):
        extra.append(dict(alt="sweep residuals", uri=_uri(lambda f: sweep_residuals(result, f))))
    if len(result.angles) >= 2:
        extra.append(dict(alt="expanded uncertainty over the angles",
                          uri=_uri(lambda f: expanded_uncertainty(result, f))))
    return per, extra


def render_html(result: RunResult, with_plots: bool = True) -> str:
    """The report as HTML text (UTF-8)."""
    import jinja2

    from budget.report.workbook_sheets import STANDARDS

    source = resources.files("budget.report").joinpath(TEMPLATE).read_text(encoding="utf-8")
    env = jinja2.Environment(autoescape=True, undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["clean"] = clean_text
    per, extra = _plots(result, with_plots)
    effective = any(c.sensitivity is None and c.effective_sensitivity is not None
                    for ob in result.outputs for c in ob.components)
    html = env.from_string(source).render(
        r=result, tool=f"thetabudget {result.tool_version}", standards=STANDARDS,
        mode_text="evaluation: the outputs are the true values behind measured data" if result.mode == "evaluation"
        else "design: the outputs are what the rig would read",
        summary=_summary(result), goals=bool(result.goals), target_lines=target_lines(result),
        data=result.data, budgets=[_budget(ob, per.get(ob.name, [])) for ob in result.outputs],
        columns_note=COLUMNS, shorthand=SHORTHAND, effective=EFFECTIVE if effective else "",
        extra_plots=extra, sweep_lines=_sweep_lines(result), decision_rule=result.decision_rule,
        decisions=_decisions(result),
        validations=[dict(label=ob.label, ok="yes" if ob.validation.validated else "no",
                          verdict=ob.validation.verdict()) for ob in result.outputs],
        assumptions=[dict(field=a.field, value=repr(a.value), reason=a.reason) for a in result.assumptions],
        components=list(result.component_descriptions().items()), warnings=list(result.warnings),
    )
    return clean_text(html)
