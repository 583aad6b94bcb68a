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
            **({"u_exact_pivot": c.u_exact_pivot} if c.u_exact_pivot is not None else {}),
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
        **({"pivot_fit": {f"u_fitted_pivot{s}": lin.u, f"u_exact_pivot{s}": ob.u_exact_pivot,
                          "percent_of_variance_through_fit":
                              100.0 * max(0.0, 1.0 - (ob.u_exact_pivot / lin.u) ** 2) if lin.u > 0 else 0.0}}
           if ob.u_exact_pivot is not None else {}),
        "warnings": list(ob.warnings),
    }


def _reference(ob: OutputBudget) -> dict | None:
    r = ob.reference
    if r is None:
        return None
    return {"angle_deg": r.angle_deg, "U_deg": r.U_deg, "E_n": r.E_n, "ok": r.ok, "measured_deg": r.measured_deg,
            "measured_U_deg": r.measured_U_deg, "source": r.source}


def _measured(result: RunResult) -> dict | None:
    d = result.data
    if d is None:
        return None
    return {
        "coordinates": "image: x right, y down, px, origin at the centre of the top-left pixel",
        "points": [{
            "position": m.label, "n": m.n, "n_eff": m.n_eff, "dof": m.dof, "mean_x_px": m.mean_x_px,
            "mean_y_px": m.mean_y_px, "sd_x_px": m.sd_x_px, "sd_y_px": m.sd_y_px, "r_xy": m.r_xy,
            "lag1_autocorrelation": m.lag1, "autocorrelated": m.autocorrelated, "drift_px": m.drift_px,
            "drift_p_value": m.drift_p, "drifting": m.drifting, "scatter_ratio": m.scatter_ratio,
            "images": list(m.images)} for m in d.points],
        "scatter_check": {"text": d.scatter_check, "ratio": d.scatter_ratio, "dof": d.scatter_dof,
                          "interval": list(d.scatter_interval) if d.scatter_interval else None},
        "angle_tolerance_deg": d.angle_tolerance_deg,
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
        d["reference"] = _reference(ob)
        _targets(d, result, ob.name)
        angles.append(d)
    files = [{"path": f.path, "sha256": f.sha256, "kind": f.kind, "note": f.note}
             for f in (result.data.files if result.data is not None else ())]
    doc: dict = {
        "tool": {"name": "thetabudget", "version": result.tool_version},
        "title": result.title,
        "input": {"path": result.input_path, "sha256": result.input_sha256, "data": files},
        "mode": result.mode,
        "measured_data": _measured(result),
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
        lof = s.lack_of_fit
        block["lack_of_fit"] = None if lof is None else {
            "chi2": lof.chi2, "dof": lof.dof, "p_value": lof.p_value, "significant": lof.significant,
            "critical_95": lof.critical, "misfit_deg": lof.misfit_deg, "method": lof.method or None,
            "verdict": lof.verdict}
        block["measured_deg"] = list(s.measured_deg) if s.measured_deg is not None else None
        _targets(block, result, "gain")
        doc["gain"] = block
    if (cov := _covariance(result)) is not None:
        doc["covariance"] = cov
    if result.decisions:
        doc["decision_rule"] = result.decision_rule
    if result.range_claim is not None:
        doc["range_claim"] = claim_dict(result)
    return doc


def _covariance(result: RunResult) -> dict | None:
    """The reported outputs' joint covariance by each method (entry (i, j) in the unit of output i times
    that of output j): what a follow-on calculation needs to keep the outputs' correlations."""
    names = list(result.covariance_names)
    if not names or result.covariance_linear is None or result.covariance_mc is None:
        return None
    return {
        "outputs": names,
        "units": ["deg/V" if n == "gain" else "deg" for n in names],
        "linear": [[float(v) for v in row] for row in result.covariance_linear],
        "monte_carlo": [[float(v) for v in row] for row in result.covariance_mc],
        "method": "linear: C U_x C^T with the sensitivities of the first-order budget (JCGM 102 6.2); "
                  "Monte Carlo: the trials' sample covariance (JCGM 102 clause 7, recalled from memory)",
    }


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
