"""A run's results as pandas DataFrames and as correlated ``uncertainties`` values (the Python API).

Nothing is computed here that the engine did not compute: the frames tabulate the
:class:`~budget.results.RunResult`, and :func:`correlated_outputs` hands its joint covariance to
``uncertainties.correlated_values``. pandas and uncertainties are imported on first use only,
so ``import budget`` and the command line stay light.
"""

from __future__ import annotations

import numpy as np

__all__ = ["summary_frame", "table_frame", "correlated_outputs", "SUMMARY_FIELDS", "TABLE_FIELDS"]

SUMMARY_FIELDS = ("output", "label", "unit", "estimate", "u", "low", "high", "U", "method", "p", "k", "nu_eff",
                  "mc_low", "mc_high", "trials", "dominant", "dominant_percent", "meets", "statement")
"""Columns of :func:`summary_frame`: ``estimate``, ``u``, ``low``, ``high`` are the result's (the method in
``method``); ``U`` is the linear expanded uncertainty (the half-width when the result is the linear one);
``mc_low``/``mc_high`` the Monte Carlo probabilistically symmetric interval; ``meets`` is None without a target."""

TABLE_FIELDS = ("output", "component", "type", "distribution", "u_input", "input_unit", "sensitivity",
                "effective_sensitivity", "contribution", "percent", "dof", "mc_alone", "unit", "sources")
"""Columns of :func:`table_frame`: one row per component per output; ``effective_sensitivity`` is the
contribution over u(x) where the component has one u(x) (a component of several terms has no single c_i)."""


def summary_rows(result) -> list[dict]:
    """One dict per output, the fields of :data:`SUMMARY_FIELDS`."""
    goals = {g.output: g for g in getattr(result, "goals", ())}
    rows = []
    for ob in result.outputs:
        low, high = ob.result_interval
        top = ob.dominant
        goal = goals.get(ob.name)
        rows.append(dict(
            output=ob.name, label=ob.label, unit=ob.unit, estimate=ob.result_estimate, u=ob.result_u, low=low,
            high=high, U=ob.linear.U, method=ob.method, p=result.p, k=ob.linear.k, nu_eff=ob.linear.nu_eff,
            mc_low=ob.monte_carlo.interval[0], mc_high=ob.monte_carlo.interval[1], trials=ob.monte_carlo.trials,
            dominant=top.name if top else None, dominant_percent=top.percent if top else None,
            meets=None if goal is None else bool(goal.meets), statement=ob.result_statement,
        ))
    return rows


def summary_frame(result):
    """The summary as a DataFrame, indexed by output name."""
    import pandas as pd

    return pd.DataFrame(summary_rows(result), columns=list(SUMMARY_FIELDS)).set_index("output")


def table_frame(result):
    """The budget lines as a DataFrame (a plain range index; ``output`` and ``component`` as columns)."""
    import pandas as pd

    rows = []
    for ob in result.outputs:
        for c in ob.components:
            rows.append(dict(
                output=ob.name, component=c.name, type=c.evaluation, distribution=c.distribution,
                u_input=c.u_input, input_unit=c.unit, sensitivity=c.sensitivity,
                effective_sensitivity=c.effective_sensitivity, contribution=c.contribution, percent=c.percent,
                dof=c.dof, mc_alone=c.mc_u, unit=ob.unit, sources="; ".join(c.sources),
            ))
    return pd.DataFrame(rows, columns=list(TABLE_FIELDS))


def correlated_outputs(result, method: str = "mc") -> dict:
    """``{output name: uncertainties value}`` correlated through the run's joint covariance.

    Raises
    ------
    ValueError
        ``method`` is neither ``"mc"`` nor ``"linear"``, or the result carries no covariance.
    """
    from uncertainties import correlated_values

    if method not in ("mc", "linear"):
        raise ValueError(f"method must be 'mc' or 'linear', got {method!r}")
    cov = result.covariance_mc if method == "mc" else result.covariance_linear
    names = tuple(result.covariance_names)
    if cov is None or not names:
        raise ValueError("this result carries no joint covariance (made before covariances were kept)")
    by_name = {ob.name: ob for ob in result.outputs}
    est = [by_name[n].monte_carlo.estimate if method == "mc" else by_name[n].linear.estimate for n in names]
    cov = np.asarray(cov, dtype=float)
    cov = 0.5 * (cov + cov.T)  # exactly symmetric, as correlated_values expects
    values = correlated_values(est, cov, tags=list(names))
    return dict(zip(names, values, strict=True))
