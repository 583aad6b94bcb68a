"""The whole design of each candidate: the working distance (and f-number and exposure where given).

Every camera × lens is tried across its allowed working-distance range, at each f-number and exposure
that ``[search]`` lists, and keeps the setting with the best margin among those that fit the dial,
hold it in focus and reach the frame rate. Each step is one vectorized surrogate call over all
candidates, so memory stays that of one call.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from budget.choice.design import PointGradients
from budget.choice.model import Candidates, Prediction, distance_bounds, predict_candidates
from budget.inputs.choose_file import ChooseSpec

__all__ = ["Settings", "search", "REFINE"]

REFINE = 4
"""Extra distances tried between the grid neighbours of each candidate's best grid point."""


@dataclass(frozen=True)
class Settings:
    """The chosen setting of each candidate (arrays of length C)."""

    distance_mm: np.ndarray
    f_number: np.ndarray
    exposure_ms: np.ndarray


def _score(pred: Prediction) -> np.ndarray:
    """Feasible settings first (dial fits, depth of field, frame rate), then the larger margin."""
    ok = pred.fits & pred.dof_ok & pred.frame_rate_ok
    return np.where(np.isfinite(pred.margin), pred.margin, -1e12) + np.where(ok, 1e6, 0.0)


def search(spec: ChooseSpec, cand: Candidates, geo: PointGradients) -> tuple[Candidates, Settings, Prediction,
                                                                               Prediction]:
    """Best setting of every candidate; returns the candidates at their chosen f-number, the settings,
    the prediction there, and the prediction at the shortest distance with the lens as listed.

    Notes
    -----
    A geometric grid of ``[search] distance_steps`` distances between the shortest and the longest
    allowed, then :data:`REFINE` distances between the neighbours of each candidate's best grid
    point. With ``f_numbers``, a lens's listed f-number is its largest aperture and every listed
    f-number at or above it is tried; with ``exposures_ms`` every exposure is tried (each still
    shortened against saturation and blur). Depth of field, diffraction and light trade against each
    other through the surrogate (:func:`budget.choice.model.predict_candidates`); the search screens
    with the ADC's rounding as added noise, the prediction at the chosen setting has it exact.
    """
    n = cand.pitch_um.size
    lo, hi = distance_bounds(spec, cand)
    ratio = np.where(hi > lo, hi / lo, 1.0)
    steps = spec.search.get("distance_steps", 12)
    fnums = spec.search.get("f_numbers") or (None,)
    exps = spec.search.get("exposures_ms") or (None,)
    best = np.full(n, -np.inf)
    chosen_u, chosen_n, chosen_t = np.zeros(n), cand.f_number.copy(), np.full(n, np.nan)
    grid = np.linspace(0.0, 1.0, steps)
    half = 1.0 / (steps - 1)
    for fn in fnums:
        fn_arr = cand.f_number if fn is None else np.full(n, float(fn))
        allowed = np.ones(n, bool) if fn is None else fn_arr >= cand.f_number * (1 - 1e-12)
        if not allowed.any():
            continue
        trial = replace(cand, f_number=fn_arr)
        for t in exps:
            local, local_u = np.full(n, -np.inf), np.zeros(n)

            def consider(u, trial=trial, t=t, allowed=allowed, local=local, local_u=local_u):
                pred = predict_candidates(spec, trial, geo, distance_mm=lo * ratio**u, exposure_ms=t, exact_adc=False)
                s = np.where(allowed, _score(pred), -np.inf)
                better = s > local
                local[better], local_u[better] = s[better], np.broadcast_to(u, (n,))[better]

            for u in grid:
                consider(u)
            centre = local_u.copy()
            for d in np.linspace(-half, half, REFINE + 2)[1:-1]:
                consider(np.clip(centre + d, 0.0, 1.0))
            take = local > best
            best[take], chosen_u[take], chosen_n[take] = local[take], local_u[take], fn_arr[take]
            chosen_t[take] = np.nan if t is None else t
    settings = Settings(lo * ratio**chosen_u, chosen_n, chosen_t)
    chosen = replace(cand, f_number=chosen_n)
    exposure = np.where(np.isnan(chosen_t), spec.light["exposure_ms"], chosen_t)
    pred = predict_candidates(spec, chosen, geo, distance_mm=settings.distance_mm, exposure_ms=exposure)
    shortest = predict_candidates(spec, cand, geo, distance_mm=lo)
    return chosen, Settings(settings.distance_mm, chosen_n, exposure), pred, shortest
