"""Whether a circle fitted to the located points can find the pivot: how far the arc bows.

A fitted pivot (``[pivot] method = "readings"`` or ``"arc"``) needs points that bow away from a
straight line by more than their own scatter; otherwise, within their uncertainties, they can lie
on a line and the circle's centre runs off towards infinity (Chernov 2010, ch. 3, on the
geometric fit of an arc whose best fit is a line).
"""

from __future__ import annotations

import math

from budget.errors import BudgetInputError
from budget.rig.description import RigDescription
from budget.rig.model import LOCATOR_KINDS

__all__ = ["arc_bow", "short_arc_reason", "refuse_short_arc"]


def arc_bow(rig: RigDescription) -> tuple[float, float] | None:
    """(span in degrees, sagitta in px) of the points a fitted pivot uses; None for a pivot mark."""
    method = rig.pivot.method
    if method not in ("readings", "arc"):
        return None
    span = (2 * rig.pivot.arc_half_angle_deg if method == "arc"
            else max(0.0, *rig.nominal_angles_deg) - min(0.0, *rig.nominal_angles_deg))
    return span, rig.radius_px * (1 - math.cos(math.radians(min(span, 360.0)) / 2))


def _reason(rig: RigDescription, span: float, sagitta: float, scatter: str) -> str:
    method = rig.pivot.method
    where = "[pivot] arc_half_angle_deg" if method == "arc" else "the readings ([positions] or [sweep])"
    return (f"[pivot] method = '{method}' fits a circle to points that span only {span:.3g}° of arc (they bow "
            f"{sagitta:.2g} px from a straight line{scatter}), so within their uncertainties they can lie on a "
            f"line. Widen {where}, or give the pivot as method = 'mark'.")


def short_arc_reason(rig: RigDescription, inputs: dict | None = None) -> str | None:
    """Why the pivot cannot be found, in the rig file's words, or None when the arc bows enough.

    With ``inputs`` (the rig's input quantities): the arc bows less than the largest standard
    uncertainty of a located point along one image axis (its locator errors and distortion residual
    together). Without: less than one pixel, for a model that already gave no finite value.
    """
    bow = arc_bow(rig)
    if bow is None:
        return None
    span, sagitta = bow
    if inputs is None:
        return _reason(rig, span, sagitta, "") if sagitta < 1.0 else None
    u_point = 0.0
    for key in {k.split("_", 1)[1] for k in inputs if k.startswith(LOCATOR_KINDS) and "_" in k}:  # "x_P3", "y_Z", …
        u2 = sum(inputs[f"{kind}_{key}"].distribution.u ** 2 for kind in LOCATOR_KINDS if f"{kind}_{key}" in inputs)
        u_point = max(u_point, math.sqrt(u2))
    if sagitta >= u_point:
        return None
    return _reason(rig, span, sagitta, f", less than a located point's own scatter, u = {u_point:.2g} px")


def refuse_short_arc(rig: RigDescription, inputs: dict) -> None:
    """Raise :class:`BudgetInputError` (before any work) when :func:`short_arc_reason` gives a reason."""
    reason = short_arc_reason(rig, inputs)
    if reason is not None:
        raise BudgetInputError(f"The pivot cannot be found: {reason}")
