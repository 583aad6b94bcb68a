"""The console report: rich tables rendered to a string (printing is the caller's job)."""

from __future__ import annotations

import io
import math

from rich.console import Console
from rich.table import Table

from budget.results import OutputBudget, RunResult

__all__ = ["render_run", "budget_table", "fmt", "fmt_dof", "reference_line", "data_table"]


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


def budget_table(ob: OutputBudget) -> Table:
    """One output's component table."""
    t = Table(title=f"{ob.label}: budget", title_justify="left", show_lines=False)
    t.add_column("component", max_width=20)
    t.add_column("type", justify="center", min_width=4)
    t.add_column("distribution", max_width=22)
    for col in ("u(x)", "sensitivity", f"contribution [{ob.unit}]", "share", "ν", f"MC alone [{ob.unit}]"):
        t.add_column(col, justify="right", no_wrap=True, min_width=max(3, min(len(col), 12)))
    t.add_column("source", justify="left", overflow="fold", min_width=24)  # wrapped, never cut short
    for c in sorted(ob.components, key=lambda c: -max(c.contribution, c.mc_u or 0.0)):
        u_txt = f"{fmt(c.u_input)} {c.unit}".strip() if c.u_input is not None else "various"
        t.add_row(c.name, c.evaluation, c.distribution, u_txt, fmt(c.sensitivity), fmt(c.contribution),
                  f"{c.percent:.1f} %", fmt_dof(c.dof), fmt(c.mc_u), "; ".join(c.sources))
    return t


def _summary_lines(ob: OutputBudget) -> list[str]:
    lin, mc, v = ob.linear, ob.monte_carlo, ob.validation
    u2 = f", second order {fmt(ob.u_second_order)}" if ob.u_second_order is not None else ""
    return [
        f"  linear (JCGM 100): estimate {lin.estimate:.6g} {ob.unit}, u_c = {fmt(lin.u)}{u2}, "
        f"ν_eff = {fmt_dof(lin.nu_eff)}, k = {lin.k:.3f}, U = {fmt(lin.U)} {ob.unit}",
        f"  Monte Carlo (JCGM 101): estimate {mc.estimate:.6g} {ob.unit}, u = {fmt(mc.u)}, "
        f"{100 * mc.p:g} % interval [{mc.interval[0]:.6g}, {mc.interval[1]:.6g}], "
        f"shortest [{mc.shortest[0]:.6g}, {mc.shortest[1]:.6g}], {mc.trials} trials"
        f"{' (adaptive)' if mc.adaptive else ''}",
        f"  {v.verdict()}",
        f"  Result: {ob.statement if ob.method == 'linear' else ob.mc_statement}",
    ]


def reference_line(ob: OutputBudget) -> str | None:
    """The reference check of one angle in words, or None."""
    r = ob.reference
    if r is None:
        return None
    verdict = "agrees (|E_n| <= 1)" if r.ok else "DISAGREES (|E_n| > 1)"
    return (f"reference {r.angle_deg:.6g} ° (U_ref = {fmt(r.U_deg)} °, {r.source}): measured {r.measured_deg:.6g} ° "
            f"(U = {fmt(r.measured_U_deg)} °), E_n = {r.E_n:+.3f}: {verdict} (ISO 13528)")


def data_table(result: RunResult) -> Table | None:
    """The measured data per located point (image coordinates, px)."""
    d = result.data
    if d is None:
        return None
    t = Table(title="measured data (image coordinates: x right, y down, px from the centre of the top-left pixel)",
              title_justify="left")
    for col in ("point", "n", "n_eff", "mean x", "mean y", "s_x", "s_y", "r_xy", "drift", "lag-1 r", "s²/σ²"):
        t.add_column(col, justify="right", no_wrap=True)
    t.add_column("frames", overflow="fold", min_width=20)
    for m in d.points:
        frames = f"{m.images[0]} … {m.images[-1]}" if m.images and m.images[0] else "—"
        t.add_row(m.label, str(m.n), fmt(m.n_eff), f"{m.mean_x_px:.4f}", f"{m.mean_y_px:.4f}", fmt(m.sd_x_px),
                  fmt(m.sd_y_px), f"{m.r_xy:+.2f}", fmt(m.drift_px) + (" !" if m.drifting else ""),
                  f"{m.lag1:+.2f}" + (" !" if m.autocorrelated else ""), fmt(m.scatter_ratio), frames)
    return t


def _data_section(con: Console, result: RunResult) -> None:
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
    con.print(data_table(result))
    con.print(f"  {d.scatter_check}")


def render_run(result: RunResult, width: int = 170) -> str:
    """The whole console report as text."""
    buf = io.StringIO()
    # markup off: square brackets in a title or a source note are the user's text, not style tags
    con = Console(file=buf, width=width, force_terminal=False, color_system=None, highlight=False, markup=False)
    con.print(f"thetabudget {result.tool_version} — {result.title}")
    con.print(f"input {result.input_path} (sha256 {result.input_sha256[:16]}…), seed {result.seed}, "
              f"p = {result.p:g}")
    _data_section(con, result)
    for ob in result.outputs:
        con.print()
        con.print(budget_table(ob))
        for line in _summary_lines(ob):
            con.print(line)
        ref = reference_line(ob)
        if ref:
            con.print(f"  {ref}")
        for w in ob.warnings:
            con.print(f"  ! {w}")
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
    if described:
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
