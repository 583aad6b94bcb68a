"""What comes through a fitted pivot: each output's budget beside the one with an exact pivot.

A circle fitted to located points takes in more than their locator errors: the camera's tilt turns the
circle into an ellipse whose fitted centre moves, and that moves every angle (and the gain of a sweep).
The budget lists such an effect under its cause (``camera skew``); this module runs the linear method
once more with the angles taken about the true pivot (:class:`budget.rig.model.VirtualRig` with
``exact_pivot``) and gives each output and component its u with an exact pivot, so a report can say
how much of u comes through the fit, and that a pivot mark or a longer arc would remove it.
"""

from __future__ import annotations

import math
from dataclasses import replace

from budget.propagation import linear
from budget.propagation.rounding import round_pair
from budget.results import OutputBudget

__all__ = ["exact_pivot_linear", "with_pivot_attribution", "SHOWN_SHARE"]

SHOWN_SHARE = 20.0
"""Share of u² (%) through the fit from which the words are added to the output's warnings."""


def exact_pivot_linear(rig, model_exact, inputs, p: float, correlation):
    """The linear method on the model with an exact pivot, or None when the pivot is not fitted."""
    if rig.pivot.method not in ("readings", "arc"):
        return None
    return linear(model_exact, inputs, p=p, correlation=correlation)


def with_pivot_attribution(ob: OutputBudget, lin_exact, method: str) -> OutputBudget:
    """``ob`` with its u and its components' contributions had the pivot been exact, and the words.

    Notes
    -----
    share = 1 − u_exact²/u² of the linear u (JCGM 100 eq. 13 for each model): what the fitted pivot adds
    over an exact one. Per component, the contribution with the exact pivot beside the fitted one.
    """
    exact_groups = {g.name: g.contribution for g in lin_exact.groups}
    comps = tuple(replace(c, u_exact_pivot=exact_groups.get(c.name, 0.0)) for c in ob.components)
    u, u0 = ob.linear.u, lin_exact.u
    out = replace(ob, components=comps, u_exact_pivot=u0)
    if u <= 0:
        return out
    share = 100.0 * max(0.0, 1.0 - (u0 / u) ** 2)
    if share < SHOWN_SHARE:
        return out
    moved = sorted(((c.contribution**2 - (c.u_exact_pivot or 0.0) ** 2, c) for c in comps), key=lambda x: -x[0])
    through = ", ".join(f"{c.name} {c.contribution:.2g} (exact pivot {_at_digits_of(c.u_exact_pivot or 0.0, u)})"
                        for d, c in moved[:3] if d > 0.05 * (u**2 - u0**2))
    how = {"readings": "a circle through the zero image and the readings",
           "arc": "a circle through the pivot-arc points"}.get(method, "a circle")
    lever = ("a pivot mark ([pivot] method = \"mark\") or a longer arc ([pivot] method = \"arc\" with a wider "
             "arc_half_angle_deg)" if method == "readings"
             else "a pivot mark ([pivot] method = \"mark\") or a longer arc (a wider arc_half_angle_deg)")
    words = (f"{ob.label}: the pivot is fitted ({how}) and {share:.0f} % of u² comes through the fit: "
             f"u = {u:.2g} {ob.unit} with the fitted pivot, {u0:.2g} {ob.unit} with an exact one"
             + (f"; through the fit: {through} {ob.unit}" if through else "")
             + f". The budget lists these effects under their causes; {lever} would remove most of "
             f"{math.sqrt(max(u**2 - u0**2, 0.0)):.2g} {ob.unit} of it.")
    return replace(out, warnings=(*out.warnings, words))


def _at_digits_of(value: float, u: float) -> str:
    """``value`` to two significant digits, or 0 where it is zero at the decimals of u's two digits (JCGM 100
    7.2.6, :func:`budget.propagation.rounding.round_pair`): a contribution at the linear method's rounding
    floor, about 1e-13 of u, is not printed as 6.1e-14."""
    if value == 0.0 or float(round_pair(value, u)[0]) == 0.0:
        return "0"
    return f"{value:.2g}"
