"""Using a sweep's calibration open loop: the voltage for a wanted angle, the angle for a voltage."""

from __future__ import annotations

import math

import numpy as np

from budget.errors import BudgetInputError, field_error
from budget.fit import line_variance
from budget.propagation import coverage_factor, coverage_intervals, round_pair
from budget.results import RunResult
from budget.rig.description import RigDescription
from budget.rig.source import per_point_u_v

__all__ = ["predict_from_sweep"]


def predict_from_sweep(rig: RigDescription, result: RunResult, *, angle_deg: float | None = None,
            volts: float | None = None) -> dict:
    """Angle for a commanded voltage, or voltage for a wanted angle, with uncertainties.

    Notes
    -----
    From the Monte Carlo joint samples of (K, θ0) of the sweep's budget:
    θ = K·V + θ0 or V = (θ − θ0)/K per trial (JCGM 101 7.5: propagating the joint
    distribution keeps the K–θ0 correlation), plus the source's per-point terms in
    quadrature. The linear figure uses the covariance of (K, θ0) (JCGM 100 eq. 13).
    A value outside the calibrated span is answered with an extrapolation warning.
    """
    if rig.sweep is None or result.gain is None or result.gain_summary is None:
        raise BudgetInputError("predict needs a [sweep] rig file; this file has [positions].")
    if (angle_deg is None) == (volts is None):
        raise BudgetInputError("predict takes exactly one of angle_deg and volts.")
    if angle_deg is not None and not (math.isfinite(angle_deg) and -360.0 < angle_deg < 360.0):
        raise field_error("angle_deg", "a number in (-360, 360)", angle_deg, "predict")
    if volts is not None and not math.isfinite(volts):
        raise field_error("volts", "a finite number", volts, "predict")
    k = result.joint["gain"]
    b = result.joint["intercept"]
    k_lin = result.gain.linear
    b_lin = result.gain_summary.intercept.linear
    k_est, b_est = k_lin.estimate, b_lin.estimate
    if result.mode == "design":
        # The budget's samples are what the rig would read for the nominal line; what is known of
        # the true line after a calibration that reads nominal is their reflection, 2n − v
        # (the evaluation-mode relation true = measured − (located − nominal) with measured = nominal).
        k_nom = rig.sweep.nominal_gain_deg_per_v
        k, b = 2 * k_nom - k, -b
        k_est, b_est = 2 * k_nom - k_est, -b_est
    rho = result.gain_summary.correlation_linear
    cov = np.array([[k_lin.u**2, rho * k_lin.u * b_lin.u], [rho * k_lin.u * b_lin.u, b_lin.u**2]])
    u_v = per_point_u_v(rig)
    v_lo, v_hi = min(rig.sweep.set_points_v), max(rig.sweep.set_points_v)
    warns = []
    if volts is not None:
        samples = k * volts + b
        est_lin = k_est * volts + b_est
        u_lin2 = float(line_variance(cov, volts))
        extra = abs(k_est) * u_v
        unit, x_out = "°", volts
        outside = max(v_lo - volts, volts - v_hi, 0.0)
        what = f"θ({volts:g} V)"
    else:
        samples = (angle_deg - b) / k
        est_lin = (angle_deg - b_est) / k_est
        u_lin2 = float(line_variance(cov, est_lin)) / k_est**2  # as StraightLine.inverse
        extra = u_v
        unit, x_out = "V", angle_deg
        outside = max(v_lo - est_lin, est_lin - v_hi, 0.0)
        what = f"V({angle_deg:g}°)"
    lof = result.gain_summary.lack_of_fit
    if lof is not None and lof.significant and "line_discrepancy" in result.joint:
        # a new point is off the rejected line by the discrepancy too (Paule & Mandel; drawn with K and θ0)
        d = result.joint["line_discrepancy"]
        samples = samples + d if volts is not None else samples - d / k
        u_lin2 += lof.misfit_deg**2 if volts is not None else (lof.misfit_deg / k_est) ** 2
        warns.append(f"Lack of fit: the sweep's straight line is rejected (χ² = {lof.chi2:.3g}, ν = {lof.dof}); "
                     f"its discrepancy s_d = {lof.misfit_deg:.2g}° at the new point is in the interval and in u.")
    u_mc = math.sqrt(float(np.var(samples, ddof=1)) + extra**2)
    u_lin = math.sqrt(max(u_lin2, 0.0) + extra**2)
    est = float(np.mean(samples))
    sym, short = coverage_intervals(np.sort(samples), result.p)
    if outside > 0:
        warns.append(f"Extrapolation: {outside:.4g} V outside the calibrated span [{v_lo:g}, {v_hi:g}] V; "
                     "the straight line is not verified there.")
    if extra > 0.1 * u_mc:
        warns.append("The interval is from the joint (K, θ0) samples only; the source's per-point "
                     "terms are in u, not in the interval.")
    kf = coverage_factor(result.p, math.inf)  # many trials: the normal quantile (JCGM 100 G.3.4)
    y, uu = round_pair(est, kf * u_mc)
    return {
        "query": {"angle_deg": angle_deg} if angle_deg is not None else {"volts": volts},
        "input": x_out, "unit": unit, "estimate": est, "u": u_mc, "estimate_linear": est_lin,
        "u_linear": u_lin, "interval": list(sym), "shortest": list(short), "p": result.p,
        "trials": int(k.size), "seed": _plain(result.seed),
        "statement": f"{what} = ({y} ± {uu}) {unit}, k ≈ {kf:.2f}, p ≈ {100 * result.p:g} %",
        "warnings": warns,
    }


def _plain(seed):
    if isinstance(seed, int | str) or seed is None:
        return seed
    try:
        return [int(s) for s in seed]
    except TypeError:
        return str(seed)
