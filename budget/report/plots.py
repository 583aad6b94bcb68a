"""PNG plots of a run (matplotlib, imported only when a plot is drawn).

* ``<output>_monte_carlo.png``: the histogram of the Monte Carlo values as a density, the
  linear method's distribution over it (normal N(y, u_c²), or the scaled and shifted t with
  ν_eff degrees of freedom, JCGM 100 G.3, JCGM 101 6.4.9), both Monte Carlo coverage
  intervals and the linear interval y ± U;
* ``<output>_pareto.png``: contributions in Pareto order with the cumulative share of u_c²,
  and each component's Monte Carlo u when it varies alone;
* ``sweep_residuals.png`` (sweeps): each angle's estimate minus the fitted line K·V + θ0 (with the
  lack-of-fit verdict in a box; a rejected line is drawn red with its ± s_d band),
  against the set point, with ± the angle's linear u;
* ``expanded_uncertainty.png`` (two or more angles): U(θ) across the range, linear and Monte
  Carlo (half-width of the probabilistically symmetric interval).

Figures are built as :class:`matplotlib.figure.Figure` objects and saved through the Agg
renderer; pyplot is never imported, so a caller's own matplotlib backend and state are left
alone.
"""

from __future__ import annotations

import math
import re
import textwrap
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from budget.report.binning import histogram
from budget.results import OutputBudget, RunResult

__all__ = ["plot_plan", "mc_histogram", "pareto", "sweep_residuals", "expanded_uncertainty"]

DPI = 130
SIZE = (8.0, 4.8)
C_MC, C_SYM, C_SHORT, C_LIN = "#9ecae1", "#d62728", "#2ca02c", "#222222"


def _figure():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=SIZE, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def provenance(result: RunResult) -> str:
    """The run a figure belongs to: input file, its SHA-256 and the seed (stored in each PNG)."""
    return f"{result.input_path} (SHA-256 {result.input_sha256}), seed {result.seed}, thetabudget {result.tool_version}"


def _save(fig, path: Path, stamp: str = "") -> None:
    meta = {"Software": "thetabudget (matplotlib)"}
    if stamp:
        meta["Source"] = stamp  # a PNG text chunk: the figure can be traced to its run
    fig.savefig(path, format="png", metadata=meta)


def _safe_name(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]", "_", name) or "output"


def _linear_pdf(ob: OutputBudget, x: np.ndarray) -> tuple[np.ndarray, str]:
    from scipy import stats

    lin = ob.linear
    if lin.u <= 0:
        return np.zeros_like(x), "linear method: u_c = 0"
    if math.isinf(lin.nu_eff):
        return stats.norm.pdf(x, loc=lin.estimate, scale=lin.u), "linear method: normal N(y, u_c²)"
    z = (x - lin.estimate) / lin.u
    return stats.t.pdf(z, lin.nu_eff) / lin.u, f"linear method: scaled t, ν_eff = {lin.nu_eff:g}"


def _rounded(estimate: float, u: float) -> str:
    """The estimate at the decimal place of its u rounded to two digits (JCGM 100 7.2.6)."""
    from budget.propagation import round_pair

    if not (u > 0 and math.isfinite(u)):
        return f"{estimate:.6g}"
    y = round_pair(estimate, u)[0]
    return y.lstrip("-") if float(y) == 0 else y


def mc_histogram(ob: OutputBudget, path: Path, stamp: str = "") -> None:
    """Monte Carlo histogram with the linear method's distribution and the intervals."""
    mc, lin = ob.monte_carlo, ob.linear
    h = histogram(mc, extra=(lin.estimate - lin.U, lin.estimate + lin.U))
    width = float(h.edges[1] - h.edges[0])
    fig = _figure()
    ax = fig.add_subplot()
    ax.bar(h.centres, h.counts / (mc.trials * width), width=width, color=C_MC, edgecolor="white",
           linewidth=0.3, label=f"Monte Carlo values, M = {mc.trials:,}")
    x = np.linspace(h.edges[0], h.edges[-1], 600)
    pdf, label = _linear_pdf(ob, x)
    ax.plot(x, pdf, color=C_LIN, linewidth=1.4, label=label)
    pct = f"{100 * mc.p:g} %"
    for pair, colour, style, what in (
        (mc.interval, C_SYM, "-", f"{pct} probabilistically symmetric interval (MC)"),
        (mc.shortest, C_SHORT, "--", f"{pct} shortest interval (MC)"),
        (lin.interval, C_LIN, ":", f"y ± U, k = {lin.k:.3f} (linear)"),
    ):
        for i, end in enumerate(pair):
            ax.axvline(end, color=colour, linestyle=style, linewidth=1.3, label=what if i == 0 else None)
    ax.ticklabel_format(axis="x", useOffset=False)
    ax.set_xlabel(f"{ob.label} [{ob.unit}]")
    ax.set_ylabel(f"probability density [1/{ob.unit}]")
    result = ob.statement if ob.method == "linear" else ob.mc_statement
    ax.set_title(f"{ob.label}: Monte Carlo and linear method\n{result}", fontsize=10)
    verdict = "linear method validated (JCGM 101 clause 8)" if ob.validation.validated else \
        "linear method NOT validated (JCGM 101 clause 8)"
    ax.text(0.01, 0.98, verdict, transform=ax.transAxes, va="top", fontsize=8)
    fig.legend(fontsize=7, loc="outside lower center", ncol=3, frameon=False)
    _save(fig, path, stamp)


def pareto(ob: OutputBudget, path: Path, stamp: str = "") -> None:
    """Contributions in Pareto order, cumulative share of u_c², and Monte Carlo u of each alone."""
    comps = sorted(ob.components, key=lambda c: -c.percent)
    names = ["\n".join(textwrap.wrap(c.name, 14)) or "?" for c in comps]
    x = np.arange(len(comps))
    fig = _figure()
    ax = fig.add_subplot()
    ax.bar(x, [c.contribution for c in comps], color="#4c72b0", label="|c_i|·u(x_i), linear method")
    mc_u = [c.mc_u if c.mc_u is not None else np.nan for c in comps]
    ax.plot(x, mc_u, linestyle="none", marker="D", markerfacecolor="none", markeredgecolor="#dd8452",
            label="u when this component alone varies (Monte Carlo)")
    ax.set_xticks(x, names, fontsize=8)
    ax.set_ylabel(f"contribution [{ob.unit}]")
    ax2 = ax.twinx()
    ax2.plot(x, np.cumsum([c.percent for c in comps]), color=C_SYM, marker="o", label="cumulative share of u_c²")
    ax2.set_ylim(0, 105)
    ax2.set_ylabel("cumulative share of u_c² [%]")
    ax.set_title(f"{ob.label}: contributions to u_c = {ob.linear.u:.3g} {ob.unit}", fontsize=10)
    handles = ax.get_legend_handles_labels()
    h2 = ax2.get_legend_handles_labels()
    ax.legend(handles[0] + h2[0], handles[1] + h2[1], fontsize=7, loc="center right")
    _save(fig, path, stamp)


def sweep_residuals(result: RunResult, path: Path) -> None:
    """Each angle's estimate minus the fitted line, against the set point, with ± its linear u."""
    s, gain = result.gain_summary, result.gain
    assert s is not None and gain is not None
    v = np.array(s.set_points_v)
    theta = np.array([ob.linear.estimate for ob in result.angles])
    u = np.array([ob.linear.u for ob in result.angles])
    resid = theta - (gain.linear.estimate * v + s.intercept.linear.estimate)
    fig = _figure()
    ax = fig.add_subplot()
    ax.axhline(0.0, color="#888888", linewidth=0.8)
    ax.errorbar(v, resid, yerr=u, fmt="o", color="#4c72b0", ecolor="#4c72b0", capsize=3,
                label="angle − (K·V + θ0), bars ± u (linear, k = 1)")
    ax.set_xlabel("set point [V]")
    ax.set_ylabel("residual [°]")
    ax.ticklabel_format(axis="y", useOffset=False)
    k_txt = _rounded(gain.linear.estimate, gain.linear.u)
    b_txt = _rounded(s.intercept.linear.estimate, s.intercept.linear.u)
    ax.set_title(f"Fit residuals against set point (K = {k_txt} °/V, θ0 = {b_txt} °)\n"
                 "each bar is the angle's whole u, shared errors (tilt, pivot, source gain) included",
                 fontsize=10)
    lof = s.lack_of_fit
    if lof is not None:
        words = (f"LACK OF FIT: χ² = {lof.chi2:.3g}, ν = {lof.dof}, p = {lof.p_value:.2g} > limit {lof.critical:.3g}; "
                 f"s_d = {lof.misfit_deg:.2g}° carried" if lof.significant else
                 f"no lack of fit: χ² = {lof.chi2:.3g}, ν = {lof.dof}, p = {lof.p_value:.2g}")
        color = "#c44e52" if lof.significant else "#55a868"
        if lof.significant:  # the discrepancy band the budget now carries
            ax.axhspan(-lof.misfit_deg, lof.misfit_deg, color=color, alpha=0.12, label="± s_d (per-point discrepancy)")
            ax.plot(v, resid, "o", color=color, zorder=3)
        ax.text(0.01, 0.98, words, transform=ax.transAxes, va="top", fontsize=8, color=color,
                bbox={"facecolor": "white", "edgecolor": color, "alpha": 0.9})
    ax.legend(fontsize=8, loc="lower right")
    _save(fig, path, provenance(result))


def expanded_uncertainty(result: RunResult, path: Path) -> None:
    """U(θ) across the range: linear U and the Monte Carlo half-width, per angle."""
    obs = sorted(result.angles, key=lambda ob: ob.nominal)
    x = [ob.nominal for ob in obs]
    fig = _figure()
    ax = fig.add_subplot()
    ax.plot(x, [ob.linear.U for ob in obs], marker="o", color=C_LIN, label="U = k·u_c (linear method)")
    ax.plot(x, [0.5 * (ob.monte_carlo.interval[1] - ob.monte_carlo.interval[0]) for ob in obs], marker="s",
            linestyle="--", color=C_SYM, label="half-width of the symmetric interval (Monte Carlo)")
    ax.set_xlabel("nominal angle θ [°]")
    ax.set_ylabel("expanded uncertainty [°]")
    ax.set_ylim(0, ax.get_ylim()[1] * 1.1)
    ax.set_title(f"Expanded uncertainty across the range, p = {100 * result.p:g} %", fontsize=10)
    ax.legend(fontsize=8)
    _save(fig, path, provenance(result))


def plot_names(outputs: Sequence[str], *, sweep: bool, n_angles: int) -> list[str]:
    """The PNG file names a run writes, known before it runs (so existing files are refused early)."""
    names = []
    for name in outputs:
        stem = _safe_name(name)
        names += [f"{stem}_monte_carlo.png", f"{stem}_pareto.png"]
    if sweep:
        names.append("sweep_residuals.png")
    if n_angles >= 2:
        names.append("expanded_uncertainty.png")
    return names


def plot_plan(result: RunResult) -> list[tuple[str, Callable[[Path], None]]]:
    """File names and the functions that draw them, in the order they are written."""
    draws: list[Callable[[Path], None]] = []
    stamp = provenance(result)
    for ob in result.outputs:
        draws += [lambda p, ob=ob: mc_histogram(ob, p, stamp), lambda p, ob=ob: pareto(ob, p, stamp)]
    sweep = result.gain_summary is not None and result.gain is not None \
        and len(result.gain_summary.set_points_v) == len(result.angles)
    if sweep:
        draws.append(lambda p: sweep_residuals(result, p))
    if len(result.angles) >= 2:
        draws.append(lambda p: expanded_uncertainty(result, p))
    names = plot_names([ob.name for ob in result.outputs], sweep=sweep, n_angles=len(result.angles))
    return list(zip(names, draws, strict=True))
