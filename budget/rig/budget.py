"""Run a rig's budget by both methods and say in words what the physics says.

input file -> rig description -> virtual rig -> propagation -> :class:`RunResult`.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import math
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path

import numpy as np

from budget import __version__
from budget.errors import BudgetInputError, collected_warnings, warn
from budget.imaging.locator_model import locator_model
from budget.propagation import (
    InputQuantity,
    interval_statement,
    linear,
    monte_carlo,
    monte_carlo_u,
    statement,
    validate,
)
from budget.propagation.model import NonFiniteOutput
from budget.results import ComponentLine, GainSummary, OutputBudget, RunResult
from budget.rig import checks
from budget.rig import components as comp
from budget.rig.arc import refuse_short_arc, short_arc_reason
from budget.rig.attribution import exact_pivot_linear, with_pivot_attribution
from budget.rig.description import RigDescription
from budget.rig.evaluation import Evaluation
from budget.rig.model import VirtualRig
from budget.rig.physics_notes import bias_causes, rig_warnings

__all__ = ["run_budget", "component_mc_u", "GROUP_TRIALS"]

GROUP_TRIALS = 20_000
"""Trials of each one-component-at-a-time Monte Carlo (its u to about ±1 %)."""


def _fixed_model(model, inputs: dict[str, InputQuantity], keep: tuple[str, ...]):
    """The model with every input outside ``keep`` held at its estimate.

    The held inputs are read-only broadcast views of their estimates (no array is filled per
    call; a model that wrote into its inputs would fail loudly).
    """
    means = np.array([q.distribution.mean for k, q in inputs.items() if k not in keep])
    held = [k for k in inputs if k not in keep]

    def wrapped(**kw):
        n = len(next(iter(kw.values())))
        full = dict(zip(held, np.broadcast_to(means[:, None], (means.size, n)), strict=True))
        full.update(kw)
        return model(**full)

    wrapped.max_chunk = getattr(model, "max_chunk", None)  # the model's own limit on trials per call
    return wrapped


def component_mc_u(model, inputs: dict[str, InputQuantity], corr: dict, members: tuple[str, ...],
                   *, rng: np.random.Generator, p: float) -> dict[str, float]:
    """Monte Carlo standard uncertainty of every output when only ``members`` vary.

    Notes
    -----
    GROUP_TRIALS trials, or the least M >= 100/(1 − p) of JCGM 101 7.9.4 if that is more.
    """
    sub = {k: inputs[k] for k in members}
    sub_corr = {pair: r for pair, r in corr.items() if pair[0] in sub and pair[1] in sub} or None
    trials = max(GROUP_TRIALS, math.ceil(100.0 / (1.0 - p) - 1e-9))
    return monte_carlo_u(_fixed_model(model, inputs, members), sub, trials, rng=rng, correlation=sub_corr)


GroupFixed = dict[str, tuple[float | None, str, str]]
"""Per component: the u of its inputs (None when they differ), their unit and distribution(s)."""


def group_fixed(lin) -> GroupFixed:
    """What a component's line takes from its inputs alone, the same for every output: from the rows of
    any one output (a sweep's 55 outputs share them; forming them once saves 680 rows per output)."""
    rows = {r.name: r for r in lin.rows}
    out: GroupFixed = {}
    for g in lin.groups:
        members = [rows[n] for n in g.inputs]
        first = members[0]
        same = all(abs(m.u - first.u) <= 1e-12 * max(first.u, 1e-300) and m.unit == first.unit
                   for m in members)
        kinds = sorted({m.distribution.split(",")[0] for m in members})
        dist = kinds[0] if len(kinds) == 1 else " + ".join(kinds)
        if len(members) > 1:
            dist += f" ×{len(members)}"
        out[g.name] = (first.u if same else None, first.unit if same else "", dist)
    return out


def _component_lines(lin, group_mc: dict[str, dict[str, float]], output: str,
                     fixed: GroupFixed) -> tuple[ComponentLine, ...]:
    single = {r.name: r.sensitivity for r in lin.rows} if any(len(g.inputs) == 1 for g in lin.groups) else {}
    lines = []
    for g in lin.groups:
        u_input, unit, dist = fixed[g.name]
        lines.append(ComponentLine(
            name=g.name, evaluation=g.evaluation, distribution=dist, u_input=u_input, unit=unit,
            sensitivity=single[g.inputs[0]] if len(g.inputs) == 1 else None,
            contribution=g.contribution, percent=g.percent, dof=g.dof,
            mc_u=group_mc.get(g.name, {}).get(output), sources=g.sources, inputs=g.inputs,
            description=comp.DESCRIPTIONS.get(g.name, ""),
        ))
    return tuple(lines)


def _budget(name: str, label: str, unit: str, nominal: float, lin, lin2, mc, group_mc,
            p: float, symbol: str, method: str, causes: tuple[str, ...], fixed: GroupFixed) -> OutputBudget:
    val = validate(lin, mc, n_dig=2)
    # The engine's per-input zero-sensitivity notes list every other point's inputs for each
    # angle; the component-level comparison with Monte Carlo below says what matters.
    warns = [w for w in lin.warnings if "zero first-order sensitivity" not in w] + list(mc.warnings)
    if lin2 is not None:  # a negative second-order variance is said, never clamped silently
        warns += [f"{label}: {w}" for w in lin2.warnings if "negative u_c²" in w]
    u2 = lin2.u if lin2 is not None else None
    lines = _component_lines(lin, group_mc, name, fixed)
    missed = [c for c in lines if c.mc_u is not None and c.contribution <= 1e-9 * max(lin.u, 1e-300)
              and c.mc_u > 0.05 * mc.u]
    if missed:  # the linear shares are then shares of the wrong total
        warns = [w for w in warns if "of the variance of" not in w]
    for line in missed:
        warns.append(
            f"{label}: '{line.name}' has zero first-order sensitivity at its estimate, so the linear "
            f"method gives it 0; Monte Carlo gives it u = {line.mc_u:.2g} {unit} (a second-order "
            "effect, JCGM 100 5.1.2 note). The Monte Carlo interval is the result."
        )
    top = max(lines, key=lambda c: c.percent)
    if top.name == comp.PIVOT and top.percent > 50:
        why = {"arc": "a pivot fitted to a short arc is poorly determined (Chernov 2010, ch. 7); "
                      "widen the arc or use a mark",
               "mark": "the pivot mark's location and offset from the shaft set the result; "
                       "locate the mark better or fit a circle over a wide arc"}.get(method, "")
        warns.append(f"{label}: the pivot estimate dominates ({top.percent:.0f} % of the variance)"
                     + (f": {why}." if why else "."))
    bias = mc.estimate - nominal
    if abs(bias) > 3 * mc.u / math.sqrt(mc.trials) and abs(bias) > 0.05 * mc.u:
        which = f" ({', '.join(causes)})" if causes else ""
        warns.append(
            f"{label}: the estimate differs from {nominal:g} {unit} (the nominal, or in evaluation mode the "
            f"measured value) by {bias:+.2g} {unit}: systematic effects{which} that the model carries as "
            "offsets; correct them at the source or report them."
        )
    lin_stmt = statement(symbol, lin.estimate, lin.U, lin.k, p, unit) if lin.U > 0 else \
        f"{symbol} = {lin.estimate:g} {unit} (the linear method gives U = 0)"
    mc_stmt = interval_statement(symbol, mc.estimate, mc.u, mc.interval, p, unit) if mc.u > 0 else \
        f"{symbol} = {mc.estimate:g} {unit}"
    return OutputBudget(
        name=name, label=label, unit=unit, nominal=nominal, linear=lin, u_second_order=u2,
        monte_carlo=mc, validation=val, components=lines, statement=lin_stmt, mc_statement=mc_stmt,
        method="linear" if val.validated else "monte carlo", warnings=tuple(warns),
    )


def run_budget(
    rig: RigDescription,
    *,
    rng: np.random.Generator,
    p: float = 0.95,
    trials: int | None = None,
    input_path: str | Path = "",
    progress: Callable[[int], None] | None = None,
    type_a: dict | None = None,
    measured_deg: tuple[float, ...] | None = None,
    evaluation: Evaluation | None = None,
) -> RunResult:
    """Budget of every angle position (and the gain of a sweep) by JCGM 100 and JCGM 101.

    Parameters
    ----------
    rig : RigDescription
    rng : numpy.random.Generator
        Random numbers for Monte Carlo; its seed is recorded.
    p : float
        Coverage probability.
    trials : int, optional
        Fixed Monte Carlo trials; default the adaptive procedure (JCGM 101 7.9).
    input_path : path
        The input file, for provenance (its SHA-256 goes into every report).
    progress : callable, optional
        Called with the trials done.
    type_a : dict, optional
        Repeated-frame scatter per point label (see :func:`components.build_inputs`).
    measured_deg : tuple, optional
        Measured reading angles (evaluation mode): the outputs become the true values behind
        them; for a sweep they give the lack-of-fit check (:func:`budget.rig.checks.lack_of_fit`).
    evaluation : Evaluation, optional
        What :func:`budget.rig.evaluation.load_evaluation` made of the measured data: it supplies
        ``type_a`` and ``measured_deg``, the data's summary and its warnings.
    """
    data = None
    pre: tuple[str, ...] = ()
    if evaluation is not None:
        type_a, measured_deg, data, pre = evaluation.type_a, evaluation.measured_deg, evaluation.data, \
            evaluation.warnings
    try:
        with collected_warnings() as raised:
            result = _run_budget(rig, rng=rng, p=p, trials=trials, input_path=input_path, progress=progress,
                                 type_a=type_a, measured_deg=measured_deg)
    except NonFiniteOutput as exc:  # say which part of the rig, in words, not the engine's input names
        raise BudgetInputError(_not_finite(rig, exc)) from None
    result = replace(result, data=data, warnings=(*pre, *result.warnings))
    return replace(result, warnings=(*result.warnings, *raised)) if raised else result


def _run_budget(rig: RigDescription, *, rng: np.random.Generator, p: float, trials: int | None,
                input_path: str | Path, progress: Callable[[int], None] | None, type_a: dict | None,
                measured_deg: tuple[float, ...] | None) -> RunResult:
    for note in rig.input_warnings:  # numbers outside their plausible range: into every report
        warn(note)
    inputs, corr = comp.build_inputs(rig, type_a)
    refuse_short_arc(rig, inputs)  # before any work, whatever the draws would give
    nominal = {f"P{i + 1}": a for i, a in enumerate(rig.nominal_angles_deg)}
    if rig.sweep is not None:
        nominal.update(gain=rig.sweep.nominal_gain_deg_per_v, intercept=0.0)
    model = VirtualRig(rig, type_a)
    reference = nominal
    if measured_deg is not None:
        reference = _located(rig, measured_deg)
        model = TrueValueModel(model, located=reference, nominal=nominal)
    corr_arg = corr or None
    lin = linear(model, inputs, p=p, correlation=corr_arg)
    lof = None
    if rig.sweep is not None and measured_deg is not None:
        lof = checks.lack_of_fit(rig, checks.own_u_deg(lin, len(measured_deg)), measured_deg)
        if lof is not None and lof.significant:  # the misfit enters the gain and intercept (both methods)
            inputs = {**inputs, **checks.misfit_inputs(rig, lof)}
            lin = linear(model, inputs, p=p, correlation=corr_arg)
    lin2 = None if corr else linear(model, inputs, p=p, second_order=True)
    exact = VirtualRig(rig, type_a, exact_pivot=True)
    exact = exact if measured_deg is None else TrueValueModel(exact, located=reference, nominal=nominal)
    lin0 = exact_pivot_linear(rig, exact, inputs, p, corr_arg)  # None unless the pivot is fitted
    # Kept in trial order: what predict propagates further ((K, θ0), and a rejected line's
    # discrepancy at a new point), and each trial's non-linearity; the intervals, histograms and
    # correlations need no trial order.
    sweep = rig.sweep is not None
    keep = ("gain", "intercept", *(("line_discrepancy",) if "misfit_new" in inputs else ()),
            *(("gain_shared", "intercept_shared") if model_shares(model) else ()))
    mc = monte_carlo(model, inputs, p=p, trials=trials, rng=rng, correlation=corr_arg, progress=progress,
                     joint=keep if sweep else False,
                     derived={checks.NONLINEARITY: checks.nonlinearity_per_trial(rig)} if sweep else None)
    groups: dict[str, tuple[str, ...]] = {}
    for name, q in inputs.items():
        groups.setdefault(q.group or name, ())
        groups[q.group or name] += (name,)
    group_mc = {g: component_mc_u(model, inputs, corr, members, rng=rng, p=p) for g, members in groups.items()}
    causes = bias_causes(rig)
    fixed = group_fixed(lin[lin.names[0]])  # every output's component lines share it
    angles = []
    for i in range(len(rig.nominal_angles_deg)):
        name = f"P{i + 1}"
        label = f"angle {name} ({reference[name]:g}°)"
        ob = _budget(name, label, "°", reference[name], lin[name], lin2[name] if lin2 else None,
                     mc[name], group_mc, p, f"θ({name})", rig.pivot.method, causes, fixed)
        if measured_deg is not None:
            ob = replace(ob, reference=checks.reference_check(rig, ob, i))
        angles.append(ob if lin0 is None else with_pivot_attribution(ob, lin0[name], rig.pivot.method))
    gain = summary = None
    if rig.sweep is not None:
        gain = _budget("gain", "gain K", "°/V", reference["gain"], lin["gain"], lin2["gain"] if lin2 else None,
                       mc["gain"], group_mc, p, "K", rig.pivot.method, causes, fixed)
        intercept = _budget("intercept", "intercept", "°", reference["intercept"], lin["intercept"],
                            lin2["intercept"] if lin2 else None, mc["intercept"], group_mc, p, "θ0",
                            rig.pivot.method, causes, fixed)
        if lin0 is not None:
            gain = with_pivot_attribution(gain, lin0["gain"], rig.pivot.method)
            intercept = with_pivot_attribution(intercept, lin0["intercept"], rig.pivot.method)
        ig, ii = lin.names.index("gain"), lin.names.index("intercept")
        corr_lin = lin.correlation[ig, ii]
        jg, ji = mc.names.index("gain"), mc.names.index("intercept")
        corr_mc = float(mc.correlation[jg, ji])
        nl_mean, nl_95 = checks.nonlinearity_pct(mc.joint[checks.NONLINEARITY])
        summary = GainSummary(intercept=intercept, correlation_linear=float(corr_lin),
                              correlation_mc=corr_mc, nonlinearity_mean_pct=nl_mean,
                              nonlinearity_p95_pct=nl_95, chi2=lof.chi2 if lof is not None else None,
                              dof=len(rig.sweep.set_points_v) - 2,
                              set_points_v=tuple(rig.sweep.set_points_v), lack_of_fit=lof,
                              measured_deg=tuple(measured_deg) if measured_deg is not None else None)
    notes = locator_model(rig).notes
    warns = rig_warnings(rig, notes, evaluated=type_a is not None)
    if lof is not None and lof.significant:
        warns.insert(0, lof.verdict)
    for ob in angles:
        ref = ob.reference
        if ref is not None and not ref.ok:
            warns.append(f"{ob.label}: E_n = {ref.E_n:+.2f} against the reference {ref.angle_deg:g}° "
                         f"(U_ref = {ref.U_deg:g}°, {ref.source}): |E_n| > 1, the measurement and the reference "
                         "disagree beyond their expanded uncertainties (ISO 13528).")
    reported = [n for n in lin.names if n in nominal]  # not the model's helper outputs (shared terms, discrepancy)
    path = Path(input_path) if input_path else None
    sha = hashlib.sha256(path.read_bytes()).hexdigest() if path and path.is_file() else ""
    return RunResult(
        title=rig.title, tool_version=__version__, input_path=str(path.name if path else ""),
        input_sha256=sha, created=_dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
        seed=mc.seed, p=p, angles=tuple(angles), gain=gain, gain_summary=summary,
        warnings=tuple(warns), inputs=inputs, rig_raw=rig.raw,
        locator_notes=notes, joint={k: v for k, v in mc.joint.items() if k != checks.NONLINEARITY},
        assumptions=rig.assumptions,
        mode="design" if measured_deg is None else "evaluation",
        covariance_names=tuple(reported),
        covariance_linear=np.array(lin.covariance)[np.ix_(*[[lin.names.index(n) for n in reported]] * 2)],
        covariance_mc=np.array(mc.covariance)[np.ix_(*[[mc.names.index(n) for n in reported]] * 2)],
    )


class TrueValueModel:
    """Evaluation mode: the measurand is the true value behind a measured (located) value.

    The virtual rig gives the located value ``v`` for a true value at its nominal
    ``n``, so the error is ``v − n`` and the true value behind a measured ``m`` is
    ``m − (v − n)``. Same inputs, same sensitivities up to sign: one model still
    serves both methods.
    """

    def __init__(self, model, *, located: dict[str, float], nominal: dict[str, float]) -> None:
        self.model, self.located, self.nominal = model, located, nominal

    @property
    def shared(self) -> bool:
        return self.model.shared

    @property
    def max_chunk(self) -> int | None:
        """The wrapped rig's limit on trials per call."""
        return getattr(self.model, "max_chunk", None)

    def costly_inputs(self, names) -> list[str]:
        """The wrapped rig's: the true value is the located one moved by a constant."""
        return self.model.costly_inputs(names)

    def additive_inputs(self, names) -> list[dict[str, float]]:
        """The wrapped rig's, for the same reason."""
        return self.model.additive_inputs(names)

    def additive_apart(self, estimates) -> list[tuple[dict[str, float], tuple[str, ...]]]:
        """The wrapped rig's, for the same reason."""
        return self.model.additive_apart(estimates)

    def __call__(self, **kw: np.ndarray) -> dict[str, np.ndarray]:
        out = self.model(**kw)
        # the terms calibration and use share are an effect on the line, not a measurand: kept as they are
        return {k: v if k.endswith("_shared") else self.located.get(k, 0.0) + self.nominal.get(k, 0.0) - v
                for k, v in out.items()}


def model_shares(model) -> bool:
    """Whether the rig model gives the source's shared terms (``gain_shared``, ``intercept_shared``)."""
    return bool(getattr(model, "shared", False))


def _not_finite(rig: RigDescription, exc: NonFiniteOutput) -> str:
    """Why the rig model gave NaN or inf for an output, in the rig file's words."""
    reason = short_arc_reason(rig)  # the arc bends less than a pixel: its scatter can straighten it
    if reason is not None:
        return f"The pivot cannot be found for '{exc.output}': {reason}"
    moved = sorted(((abs(v), k) for k, v in exc.point.items() if v != 0), reverse=True)[:3]
    at = ", ".join(f"{k} = {exc.point[k]:.4g}" for _, k in moved) or "the nominal values"
    return (f"The rig model gives no finite value of '{exc.output}' for input values within their uncertainties "
            f"(first at {at}): the rig as described cannot be evaluated there; check [geometry], [camera] and "
            "[lens] and the size of each uncertainty.")


def _located(rig: RigDescription, measured_deg: tuple[float, ...]) -> dict[str, float]:
    """Measured values of every output: the angles and, for a sweep, their straight line."""
    out = {f"P{i + 1}": float(a) for i, a in enumerate(measured_deg)}
    if rig.sweep is not None:
        slope, intercept = np.polyfit(np.array(rig.sweep.set_points_v), np.array(measured_deg), 1)
        out.update(gain=float(slope), intercept=float(intercept))
    return out
