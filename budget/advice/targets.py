"""Verdicts against a target and conformity decisions, from a finished run.

The expanded uncertainty that a target is compared with (:func:`budget.rig.claim.claim_U`) is the one a user can
claim about the reference value (the nominal in design mode, the measured value in evaluation
mode): the larger distance from it to the ends of the result's coverage interval. It equals the
linear method's U when the estimate sits on the reference, and it keeps any offset that the
model carries (a start-of-exposure timestamp, a measured tilt) inside the claim.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from budget.errors import BudgetInputError
from budget.results import Decision, GoalVerdict, OutputBudget, RunResult
from budget.rig.claim import claim_U
from budget.rig.description import RigDescription

__all__ = ["run_p", "goal_verdicts", "decide", "decisions", "rule_words", "with_verdicts", "BASIS"]

BASIS = ("the larger distance from the reference value (nominal, or measured) to the ends of the result's "
         "coverage interval: the linear method's y ± U when it is validated, else the Monte Carlo "
         "probabilistically symmetric interval")


def run_p(given: float | None, rig: RigDescription, name: str = "--p") -> float:
    """The coverage probability of a run: the one given (as ``name``), else the ``[goal]`` p, else 0.95.

    Raises
    ------
    BudgetInputError
        When both are given and differ: a target is judged at its own coverage probability.
    """
    goal_p = rig.goal.p if rig.goal is not None else None
    if given is not None and goal_p is not None and abs(given - goal_p) > 1e-12:
        raise BudgetInputError(f"{name} {given:g} differs from the 'p' field of [goal] ({goal_p:g}); a target is "
                               "judged at its own coverage probability: give one of them, or the same value.")
    return given if given is not None else (goal_p if goal_p is not None else 0.95)


def _estimate(ob: OutputBudget) -> float:
    return ob.linear.estimate if ob.method == "linear" else ob.monte_carlo.estimate


def _verdict(ob: OutputBudget, target: float, unit: str, scale: float, p: float) -> GoalVerdict:
    u = claim_U(ob) * scale
    return GoalVerdict(output=ob.name, label=ob.label, unit=unit, U_target=float(target), U=u,
                       meets=bool(u <= target), margin_pct=100.0 * (target - u) / target, p=p, basis=BASIS)


def goal_verdicts(rig: RigDescription, result: RunResult) -> tuple[GoalVerdict, ...]:
    """Each output against the rig file's ``[goal]`` (none without one)."""
    g = rig.goal
    if g is None:
        return ()
    out = []
    if g.angle_U_deg is not None:
        out += [_verdict(ob, g.angle_U_deg, "°", 1.0, result.p) for ob in result.angles]
    if result.gain is not None:
        if g.gain_U_pct is not None:
            out.append(_verdict(result.gain, g.gain_U_pct, "%", 100.0 / abs(result.gain.nominal), result.p))
        elif g.gain_U_deg_per_v is not None:
            out.append(_verdict(result.gain, g.gain_U_deg_per_v, "°/V", 1.0, result.p))
    return tuple(out)


def rule_words(rule: str) -> str:
    """The decision rule in words, as ISO/IEC 17025:2017 7.8.6.1 asks a report to state it."""
    if rule == "guarded":
        return ("Decision rule: guarded acceptance (JCGM 106:2012 8.3.2) with guard band w = U, the expanded "
                "uncertainty of the result at its coverage probability: accept when the result lies in the "
                "tolerance interval shrunk by w at each end, otherwise reject (ISO/IEC 17025:2017 7.8.6).")
    return ("Decision rule: simple acceptance (JCGM 106:2012 8.2, shared risk): accept when the result lies in "
            "the tolerance interval, otherwise reject; a result within U of a limit is flagged because the "
            "probability that the true value is out of tolerance can approach 50 % there (ISO/IEC 17025:2017 "
            "7.8.6).")


def decide(value: float, tolerance: tuple[float, float], U: float, rule: str,
           measurand_samples: np.ndarray) -> tuple[str, tuple[float, float], bool, float]:
    """One conformity decision.

    Parameters
    ----------
    value : float
        The result the decision is about.
    tolerance : (float, float)
        Tolerance limits (T_L, T_U).
    U : float
        Expanded uncertainty of the result; the guard band of the guarded rule.
    rule : {"simple", "guarded"}
    measurand_samples : ndarray
        Monte Carlo values of the measurand given the result.

    Returns
    -------
    decision, acceptance, in_guard_band, p_conformity
        ``"accept"``/``"reject"``, the acceptance limits, whether the result lies inside the tolerance
        interval but within U of a limit, and the probability of conformity.

    Notes
    -----
    JCGM 106:2012 clause 7.3: p_c = Pr(T_L ≤ Y ≤ T_U | result), here the fraction of Monte Carlo values
    of the measurand inside the tolerance interval (JCGM 101 7.5: the sampled distribution stands for
    the PDF). Acceptance limits A_L = T_L + w, A_U = T_U − w with w = U for guarded acceptance
    (8.3.2), w = 0 for simple acceptance (8.2).
    """
    lo, hi = tolerance
    w = U if rule == "guarded" else 0.0
    acc = (lo + w, hi - w)
    accept = acc[0] <= value <= acc[1]
    inside = lo <= value <= hi
    band = inside and (value - lo < U or hi - value < U)
    s = np.asarray(measurand_samples, dtype=float)
    p_c = float(np.mean((s >= lo) & (s <= hi))) if s.size else math.nan
    return ("accept" if accept else "reject"), acc, bool(band), p_c


def _measurand(ob: OutputBudget, mode: str, value: float) -> np.ndarray:
    """Monte Carlo values of the measurand given the result (design: truth behind a reading = value)."""
    s = ob.monte_carlo.samples
    return s if mode == "evaluation" else value + ob.nominal - s


def decisions(spec: RigDescription, result: RunResult) -> tuple[Decision, ...]:
    """Conformity decisions of every output the ``[conformity]`` section gives a tolerance for.

    ``spec`` is the rig as the file states it (its nominal angles and gain are the specification);
    in evaluation mode the result's own rig carries the measured values instead.
    """
    c = spec.conformity
    if c is None:
        return ()
    items = []
    if c.angle_tolerance_deg is not None:
        t = c.angle_tolerance_deg
        items += [(ob, (a - t, a + t), "°") for ob, a in zip(result.angles, spec.nominal_angles_deg, strict=True)]
    if c.gain_tolerance_pct is not None and result.gain is not None and spec.sweep is not None:
        k = spec.sweep.nominal_gain_deg_per_v
        half = abs(k) * c.gain_tolerance_pct / 100.0
        items.append((result.gain, (k - half, k + half), "°/V"))
    out = []
    for ob, tol, unit in items:
        value = _estimate(ob)
        U = claim_U(ob)
        verdict, acc, band, p_c = decide(value, tol, U, c.rule, _measurand(ob, result.mode, value))
        note = ("design mode: the decision is for the reading this rig would give of a pointer at the nominal"
                if result.mode == "design" else "evaluation mode: the decision is for the measured result")
        if band:
            note += "; IN THE GUARD BAND: within U of a tolerance limit"
        out.append(Decision(output=ob.name, label=ob.label, unit=unit, rule=c.rule, value=float(value),
                            tolerance=tol, acceptance=acc, U=U, decision=verdict, in_guard_band=band,
                            p_conformity=p_c, note=note))
    return tuple(out)


def with_verdicts(spec: RigDescription, result: RunResult) -> RunResult:
    """The result with its goal verdicts and conformity decisions (the file's targets)."""
    rule = rule_words(spec.conformity.rule) if spec.conformity is not None else ""
    return replace(result, goals=goal_verdicts(spec, result), decisions=decisions(spec, result),
                   decision_rule=rule)
