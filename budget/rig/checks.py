"""Checks of an evaluation run against outside knowledge: the sweep's lack of fit, the reference angles.

* Lack of fit (ISO/TS 28037 validation of the straight-line model): χ² of the measured angles
  about their weighted line with each reading's own uncertainty, against χ²_ν(0.95). When the
  line is rejected, the misfit becomes a per-point discrepancy s_d (Paule & Mandel 1982) carried
  into the gain, the intercept and predictions as input quantities ``misfit_Pj``.
* Reference check: E_n = (y − y_ref)/√(U² + U_ref²) of each measured angle (ISO 13528,
  ISO/IEC 17043), |E_n| <= 1 for agreement.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from budget.fit import ols_batch_residuals, straight_line
from budget.propagation import InputQuantity, MultivariateT, Normal
from budget.results import LackOfFit, OutputBudget, ReferenceCheck
from budget.rig.components import MISFIT
from budget.rig.description import RigDescription

__all__ = ["own_u_deg", "lack_of_fit", "paule_mandel", "misfit_inputs", "reference_check", "NONLINEARITY",
           "nonlinearity_per_trial", "nonlinearity_pct"]

METHOD = ("per-point discrepancy s_d with χ²(u_j² + s_d²) = ν (Paule & Mandel 1982, J. Res. Natl. Bur. Stand. "
          "87:377, applied to the straight line), carried as a joint t with ν = n − 2 into the gain, the "
          "intercept and predictions")


def own_u_deg(lin, n_read: int) -> list[float]:
    """u(θ_j) from the inputs of reading j alone (names ending in ``_Pj``), from a linear result.

    Notes
    -----
    Shared effects (the zero image's locator errors, pivot, tilt, source gain and offset) move
    every point together and do not scatter them about the line (ISO/TS 28037 clause 6); the
    reading's own locator errors, distortion residual, drift, set-point step, INL, noise and
    timing jitter do.
    """
    out = []
    for j in range(n_read):
        name = f"P{j + 1}"
        rows = lin[name].rows
        out.append(math.sqrt(sum(r.contribution**2 for r in rows if r.name.endswith(f"_{name}"))))
    return out


def paule_mandel(x: np.ndarray, y: np.ndarray, u: np.ndarray, dof: int) -> float:
    """s_d >= 0 such that the weighted line with u_j² + s_d² has χ² = ν (0 if χ² <= ν already).

    Notes
    -----
    The moment equation of Paule & Mandel (1982, J. Res. Natl. Bur. Stand. 87:377) for a common
    between-point variance, with the straight line's ν = n − 2; χ²(s) decreases with s, so the
    root is found by bisection to a relative 1e-10.
    """
    def chi2(s: float) -> float:
        return float(straight_line(x, y, u_y=np.sqrt(u * u + s * s)).chi2)

    if chi2(0.0) <= dof:
        return 0.0
    hi = float(np.ptp(y)) + float(u.max())
    while chi2(hi) > dof:
        hi *= 2.0
    lo = 0.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if chi2(mid) > dof else (lo, mid)
        if hi - lo <= 1e-10 * hi:
            break
    return 0.5 * (lo + hi)


def lack_of_fit(rig: RigDescription, u_own: list[float], measured: tuple[float, ...]) -> LackOfFit | None:
    """χ² of the measured angles about their straight line, p-value and verdict; None if it cannot be formed.

    Notes
    -----
    Weighted least squares with u(θ_j) from the reading's own inputs (:func:`own_u_deg`); ν = n − 2;
    p = P(χ²_ν > χ²) (scipy.stats.chi2.sf); the line is rejected when χ² > χ²_ν(0.95)
    (ISO/TS 28037:2010, validation of the model by the χ² test).
    """
    from scipy import stats  # here, not at import: a design run never needs scipy

    x = np.array(rig.sweep.set_points_v)
    y = np.array(measured)
    u = np.array(u_own)
    if u.min() <= 0:
        return None
    dof = x.size - 2
    chi2 = float(straight_line(x, y, u_y=u).chi2)
    crit = float(stats.chi2.ppf(0.95, dof))
    p = float(stats.chi2.sf(chi2, dof))
    head = f"χ² = {chi2:.4g} with ν = {dof} (p = {p:.2g})"
    if chi2 <= crit:
        verdict = (f"Lack of fit: none shown. {head} is within χ²_ν(0.95) = {crit:.4g}: the straight line fits the "
                   "readings within their own uncertainties (ISO/TS 28037 χ² test).")
        return LackOfFit(chi2, dof, p, crit, False, 0.0, "", verdict)
    s_d = paule_mandel(x, y, u, dof)
    verdict = (f"Lack of fit: {head} exceeds χ²_ν(0.95) = {crit:.4g}: the readings are not on a straight line within "
               "their own uncertainties (ISO/TS 28037 χ² test): the response is curved, or an error that scatters "
               f"the points is missing from the budget. A discrepancy s_d = {s_d:.3g}° per point is carried into "
               "u(K), the intercept and predictions (Paule & Mandel 1982); see the residual plot.")
    return LackOfFit(chi2, dof, p, crit, True, s_d, METHOD, verdict)


def misfit_inputs(rig: RigDescription, lof: LackOfFit) -> dict[str, InputQuantity]:
    """The discrepancy s_d of a rejected line as one input per reading (``misfit_Pj``, deg) and one
    for a new point (``misfit_new``: the line's discrepancy where a prediction is made).

    Notes
    -----
    All of them come from one estimate of s_d with ν = n − 2, so they are the components of one
    :class:`~budget.propagation.MultivariateT` with scale s_d²·I (counted once in ν_eff); with
    ν <= 2 that t has no variance and they are normal instead (their ν then left infinite).
    The virtual rig adds ``misfit_Pj`` to the fitted angles only (not to the angles themselves)
    and returns ``misfit_new`` as the output ``line_discrepancy``, which predictions add to
    every Monte Carlo trial.
    """
    n = len(rig.sweep.set_points_v) + 1
    src = (f"sweep's χ² = {lof.chi2:.4g} with ν = {lof.dof} (p = {lof.p_value:.2g}); "
           f"Paule–Mandel s_d = {lof.misfit_deg:.3g}°")
    if lof.dof > 2:
        joint = MultivariateT(tuple(0.0 for _ in range(n)), np.eye(n) * lof.misfit_deg**2, float(lof.dof),
                              label="the line's discrepancy")
        dists = joint.components()
    else:
        dists = tuple(Normal(0.0, lof.misfit_deg) for _ in range(n))
        src += "; ν <= 2, carried as normal"
    names = [f"misfit_P{j + 1}" for j in range(n - 1)] + ["misfit_new"]
    return {name: InputQuantity(d, "°", MISFIT, src, evaluation="A") for name, d in zip(names, dists, strict=True)}


def reference_check(rig: RigDescription, ob: OutputBudget, index: int) -> ReferenceCheck | None:
    """E_n of reading ``index`` against the rig's ``[reference]``, or None without one.

    Notes
    -----
    E_n = (y − y_ref)/√(U² + U_ref²) (ISO 13528:2015 and ISO/IEC 17043:2010, the E_n number of
    proficiency testing), |E_n| <= 1 for agreement. y and U are the result the run states: the
    linear estimate and U when clause 8 validates it, otherwise the Monte Carlo estimate and the
    larger distance from it to an end of its probabilistically symmetric interval, at the run's p.
    """
    ref = rig.reference
    if ref is None:
        return None
    a = ref.angles_deg[index]
    u_ref = ref.U_deg[index] if len(ref.U_deg) > 1 else ref.U_deg[0]
    if ob.method == "linear":
        y, big_u = ob.linear.estimate, ob.linear.U
    else:
        mc = ob.monte_carlo
        y = mc.estimate
        big_u = max(y - mc.interval[0], mc.interval[1] - y)
    e_n = (y - a) / math.hypot(big_u, u_ref)
    return ReferenceCheck(angle_deg=a, U_deg=u_ref, measured_deg=y, measured_U_deg=big_u, E_n=e_n,
                          ok=abs(e_n) <= 1.0, source=ref.source)


NONLINEARITY = "nonlinearity_pct"
"""Per-trial value the sweep's Monte Carlo keeps beside its outputs (``derived``)."""


def nonlinearity_per_trial(rig: RigDescription) -> Callable[[dict[str, np.ndarray]], np.ndarray]:
    """Largest |residual| of each trial's straight line as % of its angle span, from a chunk's outputs."""
    x = np.array(rig.sweep.set_points_v)
    names = [f"P{i + 1}" for i in range(len(rig.nominal_angles_deg))]

    def per_trial(out: dict[str, np.ndarray]) -> np.ndarray:
        y = np.stack([out[k] for k in names]).T  # (trials, points), each point a contiguous row beneath
        _, _, res = ols_batch_residuals(x, y)
        return 100.0 * np.max(np.abs(res), axis=1) / np.ptp(y, axis=1)

    return per_trial


def nonlinearity_pct(nl: np.ndarray) -> tuple[float, float]:
    """Mean and 95th percentile over the trials of the per-trial non-linearity."""
    return float(nl.mean()), float(np.quantile(nl, 0.95))
