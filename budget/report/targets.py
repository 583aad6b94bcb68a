"""Presenting targets: goal verdicts, conformity decisions and the range claim, for every report.

Nothing here computes an uncertainty: the verdicts, decisions and envelope come from
:mod:`budget.advice` through the :class:`~budget.results.RunResult`.
"""

from __future__ import annotations

from budget.results import Decision, GoalVerdict, RunResult

__all__ = ["goal_for", "decision_for", "goal_dict", "decision_dict", "claim_dict", "target_lines",
           "target_rows"]


def goal_for(result: RunResult, output: str) -> GoalVerdict | None:
    """The goal verdict of one output, if the file gives a target for it."""
    return next((g for g in result.goals if g.output == output), None)


def decision_for(result: RunResult, output: str) -> Decision | None:
    """The conformity decision of one output, if the file gives a tolerance for it."""
    return next((d for d in result.decisions if d.output == output), None)


def goal_dict(g: GoalVerdict) -> dict:
    """JSON block ``{"U_target", "meets", "margin_pct", ...}`` of a verdict."""
    return {"U_target": g.U_target, "U": g.U, "unit": g.unit, "meets": g.meets, "margin_pct": g.margin_pct,
            "p": g.p, "basis": g.basis}


def decision_dict(d: Decision) -> dict:
    """JSON block of a conformity decision."""
    return {"rule": d.rule, "value": d.value, "unit": d.unit, "tolerance": list(d.tolerance),
            "acceptance": list(d.acceptance), "U": d.U, "decision": d.decision,
            "in_guard_band": d.in_guard_band, "probability_of_conformity": d.p_conformity, "note": d.note}


def claim_dict(result: RunResult) -> dict | None:
    """JSON block of the range claim (None without ``[range_claim]``)."""
    c = result.range_claim
    if c is None:
        return None
    return {"form": c.form, "a_deg": c.a_deg, "b_deg_per_deg": c.b, "table_deg": [list(r) for r in c.table],
            "low_deg": c.low_deg, "high_deg": c.high_deg, "p": c.p, "statement": c.statement,
            "points": [{"angle_deg": t, "U_deg": u, "envelope_deg": e, "midpoint": m} for t, u, e, m in c.points]}


def _goal_text(g: GoalVerdict) -> str:
    word = "meets" if g.meets else "MISSES"
    return (f"{g.label}: {word} the target U <= {g.U_target:g} {g.unit} with U = {g.U:.3g} {g.unit} "
            f"(margin {g.margin_pct:+.1f} %, p = {100 * g.p:g} %)")


def _decision_text(d: Decision) -> str:
    lo, hi = d.tolerance
    flag = " ! in the guard band" if d.in_guard_band else ""
    return (f"{d.label}: {d.decision.upper()} — result {d.value:.6g} {d.unit}, tolerance [{lo:.6g}, {hi:.6g}], "
            f"acceptance [{d.acceptance[0]:.6g}, {d.acceptance[1]:.6g}], U = {d.U:.3g} {d.unit}, probability "
            f"of conformity {100 * d.p_conformity:.1f} % ({d.note}){flag}")


def target_lines(result: RunResult) -> list[str]:
    """Plain lines for the console and Markdown: verdicts, decisions with the rule, the range claim."""
    lines: list[str] = []
    if result.goals:
        lines.append("Targets (U compared: the larger distance from the reference value to the ends of the "
                     "result's coverage interval):")
        lines += [f"  {_goal_text(g)}" for g in result.goals]
    if result.decisions:
        lines.append(f"Conformity: {result.decision_rule}")
        lines += [f"  {_decision_text(d)}" for d in result.decisions]
    if result.range_claim is not None:
        lines.append(f"Claim for the range: {result.range_claim.statement}")
    return lines


def target_rows(result: RunResult) -> list[tuple[str, str]]:
    """(label, text) rows for the workbook's Summary sheet."""
    rows = [(g.label, "target: " + _goal_text(g)) for g in result.goals]
    if result.decisions:
        rows.append(("decision rule", result.decision_rule))
    rows += [(d.label, "conformity: " + _decision_text(d)) for d in result.decisions]
    if result.range_claim is not None:
        rows.append(("claim for the range", result.range_claim.statement))
    return rows
