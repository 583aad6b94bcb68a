"""The top pick through the rig model itself: its equivalent rig run as ``run`` runs it.

The surrogate ranks thousands of candidates; the pick a user will buy is then budgeted by the one
virtual rig (both methods, the Monte Carlo result where the linear method is not validated), so the
U that ``choose --verify`` prints is the U that ``run`` prints on the file ``--rig-out`` writes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from budget.choice.equivalent import equivalent_rig
from budget.choice.rank import Choice
from budget.rig.budget import run_budget
from budget.rig.claim import claim_U

__all__ = ["Confirmation", "confirm_top"]


@dataclass(frozen=True)
class Confirmation:
    """The rig model's answer for one candidate: claimable U of the worst angle and of the gain."""

    index: int
    U_angle_deg: float
    U_gain_pct: float | None
    meets: bool
    margin_pct: float
    methods: tuple[str, ...]  # each output's result method ("linear" or "monte carlo")
    trials: int


def confirm_top(ch: Choice, *, rng: np.random.Generator, trials: int | None = None,
                i: int | None = None) -> Confirmation:
    """Run candidate ``i`` (default the top pick) through :func:`budget.rig.budget.run_budget`."""
    spec = ch.spec
    i = int(ch.order[0]) if i is None else i
    rig = equivalent_rig(spec, ch.cand, ch.pred, i)
    res = run_budget(rig, rng=rng, p=spec.goal["p"], trials=trials)
    u_angle = max(claim_U(ob) for ob in res.angles)
    u_gain = None if res.gain is None else 100.0 * claim_U(res.gain) / abs(res.gain.nominal)
    margins = []
    if "angle_U_deg" in spec.goal:
        margins.append((spec.goal["angle_U_deg"] - u_angle) / spec.goal["angle_U_deg"])
    if u_gain is not None and "gain_U_pct" in spec.goal:
        margins.append((spec.goal["gain_U_pct"] - u_gain) / spec.goal["gain_U_pct"])
    margin = min(margins)
    methods = tuple(ob.method for ob in res.outputs)
    trials_done = res.angles[0].monte_carlo.trials
    return Confirmation(i, u_angle, u_gain, bool(margin >= 0), 100.0 * margin, methods, trials_done)
