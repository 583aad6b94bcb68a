"""A claim for the whole range: a conservative envelope of the expanded uncertainty over the angles.

The envelope is fitted to the claimable U (:func:`budget.advice.targets.claim_U`) at every computed
angle, then checked at the midpoints between neighbouring angles by running the rig with those
angles added (the same virtual rig, both methods). A midpoint the envelope does not cover joins the
fit, so the stated envelope covers every angle computed.
"""

from __future__ import annotations

from dataclasses import replace
from decimal import ROUND_CEILING, Decimal

import numpy as np

from budget.results import RangeClaim, RunResult
from budget.rig.budget import run_budget
from budget.rig.claim import claim_U
from budget.rig.description import Positions, RigDescription, Sweep

__all__ = ["linear_envelope", "round_up", "table_value", "claim_for_range", "midpoint_rig"]


def round_up(x: float, digits: int = 2) -> float:
    """``x`` rounded up to ``digits`` significant digits (JCGM 100 7.2.6 allows rounding up)."""
    if x <= 0:
        return 0.0
    d = Decimal(repr(x))
    q = Decimal(1).scaleb(d.adjusted() - digits + 1)
    return float(d.quantize(q, rounding=ROUND_CEILING))


def linear_envelope(theta_abs: np.ndarray, u: np.ndarray) -> tuple[float, float]:
    """The least line a + b·t (a, b ≥ 0) on or above every point (t_i, U_i).

    Notes
    -----
    Linear programme in two variables: minimize a + b·t̄ (the envelope's mean over the points)
    subject to a + b·t_i ≥ U_i, a ≥ 0, b ≥ 0. The optimum lies at a vertex of the feasible set, so
    the candidates are the lines through two points and the lines with a = 0 or b = 0 through one
    point [derived; any LP text, e.g. the fundamental theorem of linear programming].
    """
    t, y = np.asarray(theta_abs, float), np.asarray(u, float)
    tbar = float(t.mean())
    cands = [(float(y.max()), 0.0)]
    cands += [(0.0, float(np.max(y[t > 0] / t[t > 0])))] if np.any(t > 0) and np.all(y[t == 0] <= 0) else []
    for i in range(t.size):
        for j in range(i + 1, t.size):
            if t[i] != t[j]:
                b = (y[j] - y[i]) / (t[j] - t[i])
                cands.append((float(y[i] - b * t[i]), float(b)))
    ok = [(a, b) for a, b in cands if a >= -1e-15 and b >= -1e-15 and np.all(a + b * t >= y * (1 - 1e-12))]
    a, b = min(ok, key=lambda ab: ab[0] + ab[1] * tbar)
    return max(a, 0.0), max(b, 0.0)


def table_value(rows: tuple[tuple[float, float], ...], theta: float) -> float:
    """The table claim at ``theta``: linear interpolation between the neighbouring rows."""
    th = np.array([r[0] for r in rows])
    return float(np.interp(theta, th, np.array([r[1] for r in rows])))


def midpoint_rig(rig: RigDescription) -> tuple[RigDescription, np.ndarray]:
    """The rig with an extra reading halfway between each pair of neighbouring angles; which are added."""
    ang = np.array(rig.nominal_angles_deg)
    order = np.sort(ang)
    mids = 0.5 * (order[1:] + order[:-1])
    if rig.sweep is not None:
        k = rig.sweep.nominal_gain_deg_per_v
        volts = sorted({*rig.sweep.set_points_v, *(mids / k)})
        new = replace(rig, sweep=Sweep(tuple(volts), k))
    else:
        new = replace(rig, positions=Positions(tuple(sorted({*ang, *mids}))))
    return new, mids


def claim_for_range(rig: RigDescription, result: RunResult, *, rng: np.random.Generator,
                    trials: int | None = None) -> RangeClaim:
    """The envelope claim of ``result`` across its angles, checked at the midpoints.

    Parameters
    ----------
    rig : RigDescription
        The rig the result was run on (its ``range_claim`` chooses the form).
    result : RunResult
    rng : numpy.random.Generator
        For the midpoint run.
    trials : int, optional
        Monte Carlo trials of the midpoint run (default adaptive, as ``run``).
    """
    form = rig.range_claim.form if rig.range_claim is not None else "linear"
    theta = np.array([ob.nominal for ob in result.angles])
    u = np.array([claim_U(ob) for ob in result.angles])
    mid_rig, mids = midpoint_rig(rig)
    mid_res = run_budget(mid_rig, rng=rng, p=result.p, trials=trials)
    mid_u = {round(ob.nominal, 9): claim_U(ob) for ob in mid_res.angles}
    if rig.sweep is not None:
        k = rig.sweep.nominal_gain_deg_per_v
        mids = np.array([k * v for v in mid_rig.sweep.set_points_v if v not in rig.sweep.set_points_v])
    um = np.array([mid_u[round(float(m), 9)] for m in mids])
    pts_t, pts_u = theta, u

    def env_fn(t_all, u_all):
        if form == "linear":
            a, b = linear_envelope(np.abs(t_all), u_all)
            a, b = round_up(a), round_up(b)
            return (a, b, ()), (lambda th: a + b * np.abs(th))
        order = np.argsort(t_all)
        rows = tuple((float(t_all[i]), round_up(float(u_all[i]))) for i in order)
        return (None, None, rows), (lambda th: np.array([table_value(rows, x) for x in np.atleast_1d(th)]))

    params, env = env_fn(pts_t, pts_u)
    if np.any(env(mids) < um):  # a midpoint above the envelope joins the fit
        pts_t, pts_u = np.concatenate([theta, mids]), np.concatenate([u, um])
        params, env = env_fn(pts_t, pts_u)
    all_t = np.concatenate([theta, mids])
    all_u = np.concatenate([u, um])
    all_mid = np.concatenate([np.zeros(theta.size, bool), np.ones(mids.size, bool)])
    envelope = env(all_t)
    assert np.all(envelope >= all_u * (1 - 1e-12))
    points = tuple((float(t), float(x), float(e), bool(m)) for t, x, e, m in zip(all_t, all_u, envelope, all_mid,
                                                                               strict=True))
    low, high = float(all_t.min()), float(all_t.max())
    pct = f"{100 * result.p:g} %"
    a, b, rows = params
    if form == "linear":
        stmt = (f"U(θ) = {a:g}° + {b:g}·|θ|, {low:g}° ≤ θ ≤ {high:g}° (θ from the zero image), p = {pct}; "
                f"covers all {theta.size} computed angles and the {mids.size} midpoints run to check it")
    else:
        body = ", ".join(f"{t:g}°: {x:g}°" for t, x in rows)
        stmt = (f"U(θ) by table ({body}), linear interpolation between neighbouring rows, {low:g}° ≤ θ ≤ "
                f"{high:g}°, p = {pct}; covers all {theta.size} computed angles and the {mids.size} midpoints")
    if rig.pivot.method == "readings":
        stmt += " (the midpoints were run as extra readings, which also enter the pivot's circle fit)"
    return RangeClaim(form=form, a_deg=a, b=b, table=rows, low_deg=low, high_deg=high, p=result.p,
                      points=points, statement=stmt)
