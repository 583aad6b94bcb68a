"""Using a sweep's calibration open loop: the voltage for a wanted angle, the angle for a voltage."""

from __future__ import annotations

import math

import numpy as np

from budget.errors import BudgetInputError, field_error
from budget.fit import line_variance
from budget.propagation import coverage_intervals, interval_statement
from budget.results import RunResult
from budget.rig.description import RigDescription
from budget.rig.source import PER_POINT, per_point_u_v, shared_names, source_inputs

__all__ = ["predict_from_sweep"]


def predict_from_sweep(rig: RigDescription, result: RunResult, *, angle_deg: float | None = None,
                       volts: float | None = None, rng: np.random.Generator) -> dict:
    """Angle for a commanded voltage, or voltage for a wanted angle, with uncertainties.

    Notes
    -----
    From the Monte Carlo joint samples of (K, θ0) of the sweep's budget:
    θ = K·V + θ0 or V = (θ − θ0)/K per trial (JCGM 101 7.5: propagating the joint
    distribution keeps the K–θ0 correlation). The source's gain, offset and output divider
    (or, with ``readback = "dmm"``, the meter's ±% and ±counts) are the same in the calibration
    and in its use: the line fitted against the commanded (read) voltage already holds them, so
    they cancel [derived: V_pointer = a·x + c in both; the fit gives K·a and K·c + θ0]. Each trial's
    line is shifted by the model's ``gain_shared`` and ``intercept_shared`` for that; the linear
    figure drops those inputs' terms from the covariance of (K, θ0) (JCGM 100 eq. 13). The
    source's per-point terms (DAC step, INL, noise) are fresh at the new voltage: drawn from
    ``rng`` into every trial, so the stated coverage interval is the Monte Carlo one (JCGM 101 7.7).
    A value outside the calibrated span is answered with an extrapolation warning; a voltage
    outside the source's range is refused.
    """
    if rig.sweep is None or result.gain is None or result.gain_summary is None:
        raise BudgetInputError("predict needs a [sweep] rig file; this file has [positions].")
    if (angle_deg is None) == (volts is None):
        raise BudgetInputError("predict takes exactly one of angle_deg and volts.")
    if angle_deg is not None and not (math.isfinite(angle_deg) and -360.0 < angle_deg < 360.0):
        raise field_error("angle_deg", "a number in (-360, 360)", angle_deg, "predict")
    if volts is not None and not math.isfinite(volts):
        raise field_error("volts", "a finite number", volts, "predict")
    lo_v, hi_v = rig.source.range_v if rig.source is not None else (-math.inf, math.inf)
    span_words = (f"the source's range [{lo_v:g}, {hi_v:g}] V ({rig.source.polarity}, span {rig.source.span_v:g} V)"
                  if rig.source is not None else "")
    if volts is not None and not lo_v <= volts <= hi_v:
        raise field_error("volts", f"a voltage within {span_words}", volts, "predict")
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
    shared = shared_names(rig)
    if "gain_shared" in result.joint:  # cancel what calibration and use share
        k = k + result.joint["gain_shared"]
        b = b + result.joint["intercept_shared"]
    cov = _line_covariance(result, shared)
    source = source_inputs(rig) if rig.source is not None else {}
    dv = np.zeros(k.size)  # the source's per-point error at the new voltage, V
    for stem in PER_POINT:
        if f"{stem}_P1" in source:
            dv += source[f"{stem}_P1"].distribution.sample(rng, k.size) * 1e-3
    u_v = per_point_u_v(rig)
    v_lo, v_hi = min(rig.sweep.set_points_v), max(rig.sweep.set_points_v)
    warns = []
    if shared:
        words = ("the meter's ±% of reading and ±counts" if rig.source.readback == "dmm"
                 else "the source's gain, offset and output divider")
        warns.append(f"{words.capitalize()} cancel: the calibration and its use share them "
                     f"({', '.join(shared)}); the prediction holds only what differs between them"
                     + (" (voltages as read on the same meter)." if rig.source.readback == "dmm" else "."))
    if volts is not None:
        samples = k * (volts + dv) + b  # the pointer sees the commanded voltage plus its per-point error
        est_lin = k_est * volts + b_est
        u_lin2 = float(line_variance(cov, volts))
        extra = abs(k_est) * u_v
        unit, x_out = "°", volts
        outside = max(v_lo - volts, volts - v_hi, 0.0)
        what = f"θ({volts:g} V)"
    else:
        samples = (angle_deg - b) / k - dv  # command less what the source adds
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
    u_mc = float(np.std(samples, ddof=1))
    u_lin = math.sqrt(max(u_lin2, 0.0) + extra**2)
    est = float(np.mean(samples))
    sym, short = coverage_intervals(np.sort(samples), result.p)
    if angle_deg is not None:
        if not lo_v <= est <= hi_v:
            raise BudgetInputError(f"The voltage for {angle_deg:g}° would be {est:.4g} V, outside {span_words}: "
                                   "the source cannot command it; ask for an angle the source can reach.")
        if sym[0] < lo_v or sym[1] > hi_v:
            warns.append(f"The coverage interval [{sym[0]:.4g}, {sym[1]:.4g}] V reaches beyond {span_words}.")
    if outside > 0:
        warns.append(f"Extrapolation: {outside:.4g} V outside the calibrated span [{v_lo:g}, {v_hi:g}] V; "
                     "the straight line is not verified there.")
    return {
        "query": {"angle_deg": angle_deg} if angle_deg is not None else {"volts": volts},
        "input": x_out, "unit": unit, "estimate": est, "u": u_mc, "estimate_linear": est_lin,
        "u_linear": u_lin, "interval": list(sym), "shortest": list(short), "p": result.p,
        "trials": int(k.size), "seed": _plain(result.seed),
        "statement": interval_statement(what, est, u_mc, sym, result.p, unit),
        "shared_cancelled": list(shared),
        "warnings": warns,
    }


def _line_covariance(result: RunResult, shared: tuple[str, ...]) -> np.ndarray:
    """Linear covariance of (K, θ0) without the terms of the inputs ``shared`` (uncorrelated with the rest)."""
    k_lin, b_lin = result.gain.linear, result.gain_summary.intercept.linear
    rho = result.gain_summary.correlation_linear
    cov = np.array([[k_lin.u**2, rho * k_lin.u * b_lin.u], [rho * k_lin.u * b_lin.u, b_lin.u**2]])
    ck = {r.name: r.sensitivity * r.u for r in k_lin.rows}
    cb = {r.name: r.sensitivity * r.u for r in b_lin.rows}
    for name in shared:
        a, c = ck.get(name, 0.0), cb.get(name, 0.0)
        cov -= np.array([[a * a, a * c], [a * c, c * c]])
    cov[0, 0], cov[1, 1] = max(cov[0, 0], 0.0), max(cov[1, 1], 0.0)  # rounding only: the terms are inside
    return cov


def _plain(seed):
    if isinstance(seed, int | str) or seed is None:
        return seed
    try:
        return [int(s) for s in seed]
    except TypeError:
        return str(seed)
