"""The console report: rich tables rendered to a string (printing is the caller's job)."""

from __future__ import annotations

import io
import math

from rich import box
from rich.console import Console
from rich.table import Table

from budget.results import OutputBudget, RunResult

__all__ = ["render_run", "budget_table", "summary_table", "fmt_near", "fmt", "fmt_dof",
           "reference_line", "data_table"]


def fmt(x: float | int | None, digits: int = 3) -> str:
    """A number with ``digits`` significant digits; whole ints as they are; ∞ / -∞; NaN; — for None.

    The one number formatter of the text reports (console and Markdown).
    """
    if x is None:
        return "—"
    if isinstance(x, int) and not isinstance(x, bool):
        return str(x)
    x = float(x)
    if math.isnan(x):
        return "NaN"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def fmt_dof(nu: float) -> str:
    """Degrees of freedom: ∞ or a whole number (one decimal below 10)."""
    if math.isinf(nu):
        return "∞"
    return f"{nu:.0f}" if nu >= 10 or float(nu).is_integer() else f"{nu:.1f}"


def fmt_near(x: float, u: float, extra: int = 1) -> str:
    """A value to the decimals of its uncertainty ``u`` (two significant digits of u, plus ``extra``).

    A value that is zero at those decimals prints as 0 (no ``-1.42109e-14``); without a usable u, six
    significant digits.
    """
    x = float(x)
    if not math.isfinite(x):
        return fmt(x)
    if not (math.isfinite(u) and u > 0):
        return "0" if abs(x) < 1e-12 else f"{x:.6g}"
    decimals = max(0, 1 - math.floor(math.log10(u)) + extra)
    if decimals > 12:
        return f"{x:.6g}"
    txt = f"{x:.{decimals}f}"
    return "0" if float(txt) == 0 else txt


METHOD = {"linear": "linear", "monte carlo": "Monte Carlo"}
SHORTHAND = ("×N after a distribution: the component groups N input quantities of that distribution, "
             "each with the u(x) shown (\"various\" when they differ).")
COLUMNS = ("u(x): standard uncertainty of the input quantity; c_i: sensitivity coefficient; u_i(y) = |c_i|·u(x): "
           "contribution (JCGM 100 5.1.3); share: of u_c²; ν: degrees of freedom; MC alone: Monte Carlo u(y) with "
           "only this component varying.")
EFFECTIVE = ("* effective sensitivity: contribution / u(x), for a component that enters through more than one "
             "input quantity (the model is not a single product).")


def _sensitivity(c) -> str:
    if c.sensitivity is not None:
        return fmt(c.sensitivity)
    eff = c.effective_sensitivity
    return "—" if eff is None else f"{fmt(eff)}*"


def budget_table(ob: OutputBudget, roomy: bool = True) -> Table:
    """One output's component table; number columns never wrap, text columns wrap at word boundaries.

    Headers are short (JCGM 100 symbols: u(x), c_i, u_i(y)) and the output's unit is in the title, so the
    table fits a 100-column terminal; the text columns take what is left and wrap. ``roomy`` puts a space
    on each side of every cell (wide terminals); without it the columns are one space apart.
    """
    t = Table(title=f"{ob.label}: budget (u_i(y) and MC alone in {ob.unit})", title_justify="left",
              box=box.SIMPLE_HEAD, show_edge=False,
              padding=(0, 1) if roomy else (0, 0), pad_edge=False)
    t.add_column("component", ratio=2, min_width=9, overflow="fold")
    t.add_column("type, distribution", ratio=2, min_width=11, overflow="fold")
    for col in ("u(x)", "c_i", "u_i(y)", "share", "ν", "MC alone"):
        t.add_column(col, justify="right", no_wrap=True)
    t.add_column("source", justify="left", overflow="fold", ratio=5, min_width=16)  # wrapped, never cut short
    for c in sorted(ob.components, key=lambda c: -max(c.contribution, c.mc_u or 0.0)):
        u_txt = f"{fmt(c.u_input)} {c.unit}".strip() if c.u_input is not None else "various"
        t.add_row(c.name, f"{c.evaluation}, {c.distribution}", u_txt, _sensitivity(c), fmt(c.contribution),
                  f"{c.percent:.1f} %", fmt_dof(c.dof), fmt(c.mc_u), "; ".join(c.sources))
    return t


def summary_table(result: RunResult) -> Table:
    """One row per output: the result (its method's estimate, u and interval), the dominant component, a verdict."""
    goals = {g.output: g for g in result.goals}
    t = Table(title=f"Summary (p = {100 * result.p:g} %; the result rests on the method named)", title_justify="left")
    t.add_column("output", ratio=2, overflow="fold")
    t.add_column("estimate", justify="right", no_wrap=True)
    t.add_column("u", justify="right", no_wrap=True)
    t.add_column("U or interval", justify="right", no_wrap=True)
    t.add_column("unit", no_wrap=True)
    t.add_column("method", no_wrap=True)
    t.add_column("dominant component", ratio=3, overflow="fold")
    if goals:
        t.add_column("target", no_wrap=True)
    for ob in result.outputs:
        u = ob.result_u
        if ob.method == "linear":
            spread = f"± {fmt_near(ob.linear.U, u)} (k = {ob.linear.k:.2f})"
        else:
            lo, hi = ob.result_interval
            spread = f"[{fmt_near(lo, u)}, {fmt_near(hi, u)}]"
        top = ob.dominant
        dom = "—" if top is None else f"{top.name} ({top.percent:.0f} %)"
        row = [ob.label, fmt_near(ob.result_estimate, u), fmt(u, 2), spread, ob.unit, METHOD.get(ob.method, ob.method),
               dom]
        if goals:
            g = goals.get(ob.name)
            row.append("" if g is None else ("meets" if g.meets else "FAILS"))
        t.add_row(*row)
    return t


def _summary_lines(ob: OutputBudget) -> list[str]:
    lin, mc, v = ob.linear, ob.monte_carlo, ob.validation
    u2 = f", second order {fmt(ob.u_second_order)}" if ob.u_second_order is not None else ""
    lu, mu = lin.u, mc.u
    return [
        f"  linear (JCGM 100): estimate {fmt_near(lin.estimate, lu)} {ob.unit}, u_c = {fmt(lin.u)}{u2}, "
        f"ν_eff = {fmt_dof(lin.nu_eff)}, k = {lin.k:.3f}, U = {fmt(lin.U)} {ob.unit}",
        f"  Monte Carlo (JCGM 101): estimate {fmt_near(mc.estimate, mu)} {ob.unit}, u = {fmt(mc.u)}, "
        f"{100 * mc.p:g} % interval [{fmt_near(mc.interval[0], mu)}, {fmt_near(mc.interval[1], mu)}], "
        f"shortest [{fmt_near(mc.shortest[0], mu)}, {fmt_near(mc.shortest[1], mu)}], {mc.trials} trials"
        f"{' (adaptive)' if mc.adaptive else ''}",
        f"  {v.verdict()}",
        f"  Result: {ob.result_statement}",
    ]


def reference_line(ob: OutputBudget) -> str | None:
    """The reference check of one angle in words, or None."""
    r = ob.reference
    if r is None:
        return None
    verdict = "agrees (|E_n| <= 1)" if r.ok else "DISAGREES (|E_n| > 1)"
    return (f"reference {r.angle_deg:.6g} ° (U_ref = {fmt(r.U_deg)} °, {r.source}): measured {r.measured_deg:.6g} ° "
            f"(U = {fmt(r.measured_U_deg)} °), E_n = {r.E_n:+.3f}: {verdict} (ISO 13528)")


def data_table(result: RunResult, roomy: bool = True) -> Table | None:
    """The measured data per located point (image coordinates, px); ``roomy`` as in :func:`budget_table`."""
    d = result.data
    if d is None:
        return None
    t = Table(title="measured data (image coordinates: x right, y down, px from the centre of the top-left pixel)",
              title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, padding=(0, 1) if roomy else (0, 0),
              pad_edge=False)
    for col in ("point", "n", "n_eff", "mean x", "mean y", "s_x", "s_y", "r_xy", "drift", "lag-1 r", "s²/σ²"):
        t.add_column(col, justify="right", no_wrap=True)
    t.add_column("frames", overflow="fold", min_width=16)
    for m in d.points:
        frames = f"{m.images[0]} … {m.images[-1]}" if m.images and m.images[0] else "—"
        t.add_row(m.label, str(m.n), fmt(m.n_eff), f"{m.mean_x_px:.4f}", f"{m.mean_y_px:.4f}", fmt(m.sd_x_px),
                  fmt(m.sd_y_px), f"{m.r_xy:+.2f}", fmt(m.drift_px) + (" !" if m.drifting else ""),
                  f"{m.lag1:+.2f}" + (" !" if m.autocorrelated else ""), fmt(m.scatter_ratio), frames)
    return t


def _data_section(con: Console, result: RunResult, roomy: bool = True) -> None:
    d = result.data
    if d is None:
        return
    con.print()
    con.print("Measured data files:")
    images = [f for f in d.files if f.kind == "image"]
    for f in d.files:
        if f.kind != "image" or len(images) <= 4:
            con.print(f"  {f.kind:<5} {f.path}  sha256 {f.sha256}" + (f" ({f.note})" if f.note else ""))
    if len(images) > 4:
        missing = sum(1 for f in images if f.note)
        con.print(f"  {len(images)} image files named in the data file, each with its SHA-256 (listed in the JSON, "
                  "Markdown and workbook)" + (f"; {missing} not found, their recorded SHA-256 kept" if missing else ""))
    con.print(data_table(result, roomy))
    con.print(f"  {d.scatter_check}")


def render_run(result: RunResult, width: int = 120, detail: bool = False) -> str:
    """The whole console report as text: the summary first, each output's budget with ``detail``."""
    buf = io.StringIO()
    # markup off: square brackets in a title or a source note are the user's text, not style tags
    con = Console(file=buf, width=width, force_terminal=False, color_system=None, highlight=False, markup=False)
    con.print(f"thetabudget {result.tool_version} — {result.title}")
    con.print(f"input {result.input_path} (sha256 {result.input_sha256[:16]}…), seed {result.seed} "
              f"(--seed {result.seed} repeats this run), p = {result.p:g}")
    _data_section(con, result, roomy=width >= 130)
    con.print()
    con.print(summary_table(result))
    con.print("The result rests on the linear method (JCGM 100) where JCGM 101 clause 8 validates it, else on Monte "
              "Carlo (JCGM 101) with its probabilistically symmetric coverage interval.")
    if not detail:
        for ob in result.outputs:
            for w in ob.warnings:
                con.print(f"  ! {w}")
        con.print("Each output's budget (components, sensitivities, source notes, both methods): add --detail.")
    for ob in result.outputs if detail else ():
        con.print()
        con.print(budget_table(ob, roomy=width >= 130))
        for line in _summary_lines(ob):
            con.print(line)
        ref = reference_line(ob)
        if ref:
            con.print(f"  {ref}")
        for w in ob.warnings:
            con.print(f"  ! {w}")
    if detail:
        con.print()
        con.print(COLUMNS)
        con.print(SHORTHAND)
        if any(c.sensitivity is None and c.effective_sensitivity is not None for ob in result.outputs
               for c in ob.components):
            con.print(EFFECTIVE)
    elif any(ob.reference is not None for ob in result.outputs):
        for ob in result.outputs:
            if ref := reference_line(ob):
                con.print(f"  {ob.label}: {ref}")
    if result.gain_summary is not None:
        s = result.gain_summary
        con.print()
        con.print(f"Gain and intercept correlation: {s.correlation_linear:+.3f} (linear), "
                  f"{s.correlation_mc:+.3f} (Monte Carlo)")
        con.print(f"Non-linearity from measurement errors alone: mean {s.nonlinearity_mean_pct:.2g} % of span, "
                  f"95th percentile {s.nonlinearity_p95_pct:.2g} %")
        if s.lack_of_fit is not None:
            con.print(s.lack_of_fit.verdict)
    from budget.report.targets import target_lines

    if lines := target_lines(result):
        con.print()
        for line in lines:
            con.print(line)
    if result.assumptions:
        con.print()
        con.print("Assumptions (values the tool supplied because the file left them out):")
        for a in result.assumptions:
            con.print(f"  {a.field} = {a.value!r}: {a.reason}")
    described = result.component_descriptions()
    if described and detail:
        con.print()
        con.print("What the components are:")
        for name, text in described.items():
            con.print(f"  {name}: {text}")
    if result.warnings:
        con.print()
        con.print("Notes on this rig:")
        for w in result.warnings:
            con.print(f"  ! {w}")
    return buf.getvalue()
