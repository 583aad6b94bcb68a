"""Evaluation mode: measured target positions give the Type A scatter, the checks of the frames and
the measured angles.

The positions come from :func:`budget.inputs.data_csv.read_rig_data` in image coordinates (x right,
y down), keyed by the rig's point labels: ``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm``
the pivot-arc points, ``M`` a pivot mark. Each located point from n frames is one bivariate
quantity (mean vector, sample covariance over n, ν = n − 1), checked for drift and for
correlation between frames (:func:`budget.propagation.type_a.type_a_series`), and its scatter is
compared with the locator model's prediction. Nothing here reads a file.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from budget.errors import BudgetInputError
from budget.imaging.locator_model import locator_model
from budget.propagation.type_a import ALPHA, MIN_OBSERVATIONS, SeriesTypeA, type_a_series, variance_ratio_interval
from budget.results import DataFile, MeasuredDataSummary, MeasuredPoint
from budget.rig.description import Data, MeasuredData, Positions, RigDescription, Sweep, point_labels
from budget.rig.geometry import reading_angles_deg

__all__ = ["PointScatter", "as_point_scatter", "load_evaluation", "Evaluation", "measured_angles_deg"]

_TINY = 1e-12


@dataclass(frozen=True)
class PointScatter:
    """The Type A knowledge of one located point that the budget uses, in image coordinates (px).

    ``covariance`` is that of the mean position, S/n_eff (JCGM 100 4.2.3, C.3.6); ``dof`` its
    ν; ``drift_px`` the drift over the frames when it is significant (else zero).
    """

    label: str
    n: int
    n_eff: float
    dof: float
    covariance: tuple[tuple[float, float], tuple[float, float]]
    drift_px: tuple[float, float] = (0.0, 0.0)
    note: str = ""

    def principal_axes(self) -> list[tuple[str, float, tuple[float, float]]]:
        """``[(axis name, variance, unit vector), …]`` of the covariance: major, then minor if not zero.

        Along its principal axes the mean's two components are uncorrelated, so the budget can
        carry them as two inputs without a correlation (one joint t, :mod:`budget.propagation.joint`).
        """
        w, v = np.linalg.eigh(np.array(self.covariance, dtype=float))
        order = np.argsort(w)[::-1]
        out = []
        for name, k in zip(("major", "minor"), order, strict=True):
            if w[k] > _TINY * max(w[order[0]], 0.0) and w[k] > 0:
                out.append((name, float(w[k]), (float(v[0, k]), float(v[1, k]))))
        return out

    def directions(self) -> dict[str, tuple[float, float]]:
        """Input name → unit vector in the image along which that input moves the point."""
        out = {f"noise_{name}_{self.label}": vec for name, _, vec in self.principal_axes()}
        d = math.hypot(*self.drift_px)
        if d > 0:
            out[f"drift_{self.label}"] = (self.drift_px[0] / d, self.drift_px[1] / d)
        return out


def as_point_scatter(label: str, value) -> PointScatter:
    """A :class:`PointScatter`, or ``(s_x/√n, s_y/√n, n)`` for independent axes (no drift)."""
    if isinstance(value, PointScatter):
        return value
    sx, sy, n = value
    return PointScatter(label, int(n), float(n), float(n) - 1.0, ((sx * sx, 0.0), (0.0, sy * sy)))


@dataclass(frozen=True)
class Evaluation:
    """The rig as measured: reading angles from the data, the Type A scatter, the data's summary."""

    rig: RigDescription
    type_a: dict[str, PointScatter] | None
    measured_deg: tuple[float, ...] | None
    data: MeasuredDataSummary | None = None
    warnings: tuple[str, ...] = field(default=())


def _series(lab: str, xy: np.ndarray, alpha: float) -> SeriesTypeA:
    n = len(xy)
    if n < MIN_OBSERVATIONS:
        raise BudgetInputError(
            f"Position '{lab}' has {n} frame{'s' if n != 1 else ''}; at least {MIN_OBSERVATIONS} are needed: the "
            f"mean of n frames has n − 1 degrees of freedom, and a t distribution with ν <= 2 has no variance "
            "(JCGM 101 6.4.9), so it cannot be propagated."
        )
    s = type_a_series(xy, alpha=alpha)
    if np.any(np.array(s.scatter).diagonal() <= 0):
        raise BudgetInputError(
            f"Position '{lab}': the {n} frames have zero scatter in x or y; the locator output is "
            "quantized or repeated. Use a sub-pixel locator or describe the noise in [target]."
        )
    if s.dof <= 2:
        raise BudgetInputError(
            f"Position '{lab}': its {n} frames are correlated in time (lag-1 autocorrelation "
            f"{max(s.lag1):.2f}) and amount to {s.n_eff:.1f} independent frames (Zhang 2006); with ν = n_eff − 1 "
            "<= 2 the t distribution of the mean has no variance (JCGM 101 6.4.9). Take more frames, further "
            "apart in time."
        )
    return s


def _scatter(lab: str, s: SeriesTypeA) -> tuple[PointScatter, list[str]]:
    warns = []
    drift = (0.0, 0.0)
    if s.drifting:
        d = s.drift_total
        drift = (float(d[0]), float(d[1]))
        warns.append(
            f"Position '{lab}': the located target drifts during its {s.n} frames by ({d[0]:+.3g}, {d[1]:+.3g}) px "
            f"(slope p = {min(s.slope_p):.2g}): the mean is not a still pointer's position. A drift term, "
            f"rectangular over ±{0.5 * math.hypot(*d):.3g} px along the drift, is in the budget; let the pointer "
            "settle before the frames."
        )
    if s.autocorrelated:
        warns.append(
            f"Position '{lab}': successive frames are correlated (lag-1 autocorrelation {max(s.lag1):.2f}); "
            f"the {s.n} frames amount to n_eff = {s.n_eff:.1f} independent ones (first-order autoregressive "
            f"estimate, Zhang 2006, Metrologia 43:S276), so u(mean) = s/√n_eff with ν = {s.dof:.1f}."
        )
    note = f"repeated frames, n = {s.n}" + (f", n_eff = {s.n_eff:.1f}" if s.autocorrelated else "") + " (Type A)"
    cov = s.covariance_of_mean
    return PointScatter(lab, s.n, s.n_eff, s.dof, ((cov[0, 0], cov[0, 1]), (cov[1, 0], cov[1, 1])), drift,
                        note), warns


def _scatter_check(rig: RigDescription, series: dict[str, SeriesTypeA]) -> tuple[dict, str, list[str]]:
    """The frames' scatter against the locator model's noise per frame (a χ² acceptance interval).

    Notes
    -----
    Under the locator model each axis of a frame has variance σ² (per frame), so
    ν_i s_i²/σ² ~ χ²(ν_i) with s_i² = (S_xx + S_yy)/2, ν_i = 2(n_i − 1) (two axes, taken as
    independent with equal σ, as the model has them). Pooled over the points,
    Σν_i s_i²/(σ² Σν_i) is compared with [χ²_ν(0.025)/ν, χ²_ν(0.975)/ν]
    (:func:`budget.propagation.type_a.variance_ratio_interval`); a point alone is flagged
    outside its interval at p = 1 − 0.05/m (Bonferroni over the m points).
    """
    sigma = locator_model(rig).noise_px_per_frame
    if sigma <= 0:
        return {}, ("The frames' scatter is not compared with the locator model: the model gives no "
                    "frame-to-frame noise for this locator."), []
    ratios, nus = {}, {}
    for lab, s in series.items():
        sc = np.array(s.scatter)
        ratios[lab] = 0.5 * (sc[0, 0] + sc[1, 1]) / sigma**2
        nus[lab] = 2.0 * (s.n - 1)
    nu = sum(nus.values())
    pooled = sum(ratios[k] * nus[k] for k in ratios) / nu
    lo, hi = variance_ratio_interval(nu, 0.95)
    head = (f"s²/σ² = {pooled:.3g} with ν = {nu:g}, against the 95 % acceptance interval [{lo:.3g}, {hi:.3g}] "
            f"of χ²_ν/ν, σ = {sigma:.3g} px per frame from the locator model")
    if pooled > hi:
        text = (f"The frames scatter more than the locator model predicts ({head}): something the light budget does "
                "not contain moves the target between frames (vibration, air currents, flicker, a loose pointer), or "
                "[target] signal_e / background_e are optimistic. The budget uses the measured scatter; a design-mode "
                "budget of this rig is too small.")
    elif pooled < lo:
        text = (f"The frames scatter less than the locator model predicts ({head}): [target] signal_e / "
                "background_e are pessimistic, the frames were averaged or repeated, or another locator than "
                "[locator] method was used.")
    else:
        text = f"The frames' scatter agrees with the locator model ({head})."
    warns = []
    m = len(ratios)
    for lab, r in ratios.items():
        a, b = variance_ratio_interval(nus[lab], 1.0 - 0.05 / m)
        if not a <= r <= b:
            warns.append(f"Position '{lab}': its frames' scatter is {math.sqrt(r):.2g}× the locator model's "
                         f"(s²/σ² = {r:.3g} outside [{a:.3g}, {b:.3g}], ν = {nus[lab]:g}, level 0.05/{m}).")
    if not lo <= pooled <= hi:
        warns.insert(0, text)
    return {"ratios": ratios, "pooled": pooled, "dof": nu, "interval": (lo, hi)}, text, warns


def load_evaluation(rig: RigDescription, data: MeasuredData | None) -> Evaluation:
    """Apply the rig's measured data, if any (design mode passes the rig through unchanged).

    Positions mode: the reading angles become those measured from the mean positions, so the
    budget is evaluated where the pointer really was. Sweep mode: the set points stay, the nominal
    gain becomes the measured OLS slope, and the measured angles go to the lack-of-fit check.

    Raises
    ------
    BudgetInputError
        Fewer than 4 frames at a position; frames so correlated that fewer than 4 independent
        ones remain; a measured reading farther than ``[data] angle_tolerance_deg`` from its
        nominal. Each message names the position.

    Notes
    -----
    The drift and autocorrelation tests of each point are at level 0.05/m over the m points
    (Bonferroni), so a still rig with white frame noise gets no such warning with probability
    at least 0.95.
    """
    if data is None:
        warns = ("[reference] angles are compared only with measured angles; this run has no [data].",) \
            if rig.reference is not None else ()
        return Evaluation(rig, None, None, warnings=warns)
    labels = point_labels(rig)
    alpha = ALPHA / len(labels)
    series = {lab: _series(lab, data.points[lab], alpha) for lab in labels}
    type_a, warns = {}, []
    for lab, s in series.items():
        type_a[lab], w = _scatter(lab, s)
        warns += w
    angles = tuple(float(a) for a in measured_angles_deg(rig, data.points))
    _check_nominal(rig, angles)
    check, text, w = _scatter_check(rig, series)
    warns = w + warns
    summary = _summary(rig, data, series, check, text)
    if rig.sweep is not None:
        x = np.array(rig.sweep.set_points_v)
        slope = float(np.polyfit(x, np.array(angles), 1)[0])
        new = replace(rig, sweep=Sweep(set_points_v=rig.sweep.set_points_v, nominal_gain_deg_per_v=slope))
    else:
        new = replace(rig, positions=Positions(angles_deg=angles))
    return Evaluation(new, type_a, angles, summary, tuple(warns))


def _tolerance_deg(rig: RigDescription) -> float:
    return (rig.data or Data()).angle_tolerance_deg


def _check_nominal(rig: RigDescription, angles: tuple[float, ...]) -> None:
    tol = _tolerance_deg(rig)
    for i, (m, nom) in enumerate(zip(angles, rig.nominal_angles_deg, strict=True)):
        if abs(m - nom) > tol:
            raise BudgetInputError(
                f"Position 'P{i + 1}': the measured reading is {m:.4g}°, {m - nom:+.4g}° from its nominal {nom:g}° "
                f"(more than angle_tolerance_deg = {tol:g}° of [data]). Check [geometry] travel (here "
                f"'{rig.geometry.travel}' on the displayed image), the position labels and the zero image, "
                "or the nominal angles."
            )


def _summary(rig, data: MeasuredData, series: dict[str, SeriesTypeA], check: dict, text: str) -> MeasuredDataSummary:
    points = []
    for lab, s in series.items():
        sd = s.sd
        sc = np.array(s.scatter)
        points.append(MeasuredPoint(
            label=lab, n=s.n, n_eff=s.n_eff, dof=s.dof, mean_x_px=s.mean[0], mean_y_px=s.mean[1],
            sd_x_px=float(sd[0]), sd_y_px=float(sd[1]), r_xy=float(sc[0, 1] / (sd[0] * sd[1])),
            lag1=float(max(s.lag1)), autocorrelated=s.autocorrelated,
            drift_px=float(math.hypot(*s.drift_total)), drift_p=float(min(s.slope_p)), drifting=s.drifting,
            scatter_ratio=check.get("ratios", {}).get(lab), images=tuple(data.images[lab]),
        ))
    files = tuple(DataFile(path, sha, kind, note) for path, sha, kind, note in data.files)
    return MeasuredDataSummary(
        files=files, points=tuple(points), scatter_check=text, scatter_ratio=check.get("pooled"),
        scatter_dof=check.get("dof"), scatter_interval=check.get("interval"),
        angle_tolerance_deg=_tolerance_deg(rig),
    )


def measured_angles_deg(rig: RigDescription, data: dict[str, np.ndarray]) -> np.ndarray:
    """Angles of the readings about the pivot, relative to the zero image, from mean positions (image coordinates)."""
    mean = {k: np.asarray(v).mean(axis=0) for k, v in data.items()}
    labels = point_labels(rig)
    img_x = np.array([[mean[k][0]] for k in labels])  # (n_points, 1): one trial
    img_y = np.array([[mean[k][1]] for k in labels])
    return reading_angles_deg(rig, img_x, img_y)[:, 0]
