"""The expanded uncertainty a user can claim about the reference value, by each method.

One rule serves ``run``'s verdicts, ``advise`` and ``choose``: the larger distance from the reference
value (the nominal in design mode, the measured value in evaluation mode) to the ends of the
result's coverage interval.
"""

from __future__ import annotations

import numpy as np

from budget.propagation import linear
from budget.results import OutputBudget
from budget.rig.components import build_inputs
from budget.rig.description import RigDescription
from budget.rig.model import VirtualRig

__all__ = ["claim_U", "linear_claims"]


def claim_U(ob: OutputBudget) -> float:
    """Expanded uncertainty claimable about the reference value, in the output's unit.

    Notes
    -----
    U_claim = max(|y_low − r|, |y_high − r|) with [y_low, y_high] the result's coverage interval at p
    (JCGM 100 6.2.1: y ± U when the linear method is validated; JCGM 101 7.7: the probabilistically
    symmetric interval otherwise) and r the reference value. The interval r ± U_claim contains the
    result's interval, so its coverage probability is at least p [derived].
    """
    if ob.method == "linear":
        lo, hi = ob.linear.estimate - ob.linear.U, ob.linear.estimate + ob.linear.U
    else:
        lo, hi = ob.monte_carlo.interval
    return float(max(abs(lo - ob.nominal), abs(hi - ob.nominal)))


def linear_claims(rig: RigDescription, *, p: float, type_a: dict | None = None) -> dict[str, float]:
    """The same claim by the linear method alone (first order): U + |y − r| for every output.

    The screening value of ``advise`` and the rig-model check of ``choose``: one vectorized call of the
    virtual rig (JCGM 100 eq. 13 with its own sensitivities). Keys are the outputs (``P1``…, ``gain``).
    """
    inputs, corr = build_inputs(rig, type_a)
    lin = linear(VirtualRig(rig, type_a), inputs, p=p, correlation=corr or None)
    nominal = {f"P{i + 1}": a for i, a in enumerate(rig.nominal_angles_deg)}
    if rig.sweep is not None:
        nominal["gain"] = rig.sweep.nominal_gain_deg_per_v
    return {name: float(lin[name].U + np.abs(lin[name].estimate - ref)) for name, ref in nominal.items()}
