"""The JSON record of a run: a plain dict, then strict JSON (no NaN or Infinity)."""

from __future__ import annotations

import json

from budget.report.targets import claim_dict, decision_dict, decision_for, goal_dict, goal_for
from budget.results import OutputBudget, RunResult, finite_or_none

__all__ = ["run_to_dict", "run_to_json", "output_to_dict"]


def _components(ob: OutputBudget) -> list[dict]:
    return [
        {
            "name": c.name, "description": c.description, "type": c.evaluation, "distribution": c.distribution,
            "u": c.contribution, "percent": c.percent, "dof": finite_or_none(c.dof),
            "monte_carlo_u": c.mc_u, "sources": list(c.sources),
        }
        for c in ob.components
    ]


def output_to_dict(ob: OutputBudget, suffix: str = "") -> dict:
    """One output's linear and Monte Carlo results; ``suffix`` appends a unit to the keys."""
    lin, mc = ob.linear, ob.monte_carlo
    s = suffix
    return {
        "linear": {
            f"estimate{s}": lin.estimate, f"u{s}": lin.u, "nu_eff": finite_or_none(lin.nu_eff),
            "k": lin.k, f"U{s}": lin.U,
            f"u_second_order{s}": ob.u_second_order,
        },
        "monte_carlo": {
            f"estimate{s}": mc.estimate, f"u{s}": mc.u,
            f"interval{s}": list(mc.interval), f"shortest{s}": list(mc.shortest),
            "trials": mc.trials, "adaptive": mc.adaptive, "converged": mc.converged,
        },
        "validated": ob.validation.validated,
        "validation": {"delta": ob.validation.delta, "d_low": ob.validation.d_low,
                       "d_high": ob.validation.d_high, "n_dig": ob.validation.n_dig},
        "result_method": ob.method,
        "statement": ob.statement if ob.method == "linear" else ob.mc_statement,
        "components": _components(ob),
        "warnings": list(ob.warnings),
    }


def run_to_dict(result: RunResult) -> dict:
    """The machine-readable record of a run (the contract documented in the README)."""
    angles = []
    for ob in result.angles:
        d = {"position": ob.name, "nominal_deg": ob.nominal}
        d.update(output_to_dict(ob, "_deg"))
        for c in d["components"]:
            c["u_deg"] = c.pop("u")
            c["monte_carlo_u_deg"] = c.pop("monte_carlo_u")
        _targets(d, result, ob.name)
        angles.append(d)
    doc: dict = {
        "tool": {"name": "thetabudget", "version": result.tool_version},
        "title": result.title,
        "input": {"path": result.input_path, "sha256": result.input_sha256},
        "created": result.created,
        "seed": _seed(result.seed),
        "p": result.p,
        "standards": ["JCGM 100:2008", "JCGM 101:2008"],
        "angles": angles,
        "assumptions": [{"field": a.field, "value": a.value, "reason": a.reason} for a in result.assumptions],
        "warnings": list(result.warnings),
    }
    if result.gain is not None and result.gain_summary is not None:
        g, s = result.gain, result.gain_summary
        block = {"unit": "deg/V", "nominal": g.nominal}
        block.update(output_to_dict(g))
        block["intercept"] = {"estimate_deg": s.intercept.linear.estimate,
                              "u_deg": s.intercept.linear.u,
                              "monte_carlo_u_deg": s.intercept.monte_carlo.u}
        block["correlation_slope_intercept"] = s.correlation_linear
        block["correlation_slope_intercept_monte_carlo"] = s.correlation_mc
        block["nonlinearity_percent_span"] = s.nonlinearity_mean_pct
        block["nonlinearity_percent_span_p95"] = s.nonlinearity_p95_pct
        block["chi2"] = s.chi2
        block["dof"] = s.dof
        _targets(block, result, "gain")
        doc["gain"] = block
    if result.decisions:
        doc["decision_rule"] = result.decision_rule
    if result.range_claim is not None:
        doc["range_claim"] = claim_dict(result)
    return doc


def _targets(block: dict, result: RunResult, name: str) -> None:
    """The output's goal verdict and conformity decision, where the file gives them."""
    if (g := goal_for(result, name)) is not None:
        block["goal"] = goal_dict(g)
    if (d := decision_for(result, name)) is not None:
        block["decision"] = decision_dict(d)


def _seed(seed: object) -> object:
    if isinstance(seed, int | str) or seed is None:
        return seed
    try:
        return [int(s) for s in seed]  # type: ignore[union-attr]
    except TypeError:
        return str(seed)


def run_to_json(result: RunResult) -> str:
    """Strict JSON text of :func:`run_to_dict` (raises if a NaN or inf slipped through)."""
    return json.dumps(run_to_dict(result), indent=2, allow_nan=False, ensure_ascii=False)
