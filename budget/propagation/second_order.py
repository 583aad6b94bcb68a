"""The second-order terms of JCGM 100 eq. (14), summed for every output of a model.

The double sum runs over the inputs the pair stencil moves (:func:`budget.propagation.stencils.
paired_inputs`: an input with u = 0 left out, each set of inputs the model reads only through their
sum counted once). A model may also name sets that it reads through a sum only while some other
inputs are held (``model.additive_apart(estimates)``, given every input's estimate: a list of
``({name: c_a}, apart)``, c_a the coefficients at the estimates of the ``apart`` inputs): the
virtual rig's source errors and pointer offsets at one reading, summed in the pointer's angle with a
weight that the source's gain and load set. The double sum then splits exactly into

(a) the terms of every pair that moves none of the apart inputs: every derivative in them is taken
    with the apart inputs at their estimates, where each such set is read through its sum, so the
    set counts as one quantity (the algebra of ``paired_inputs``, term by term); and
(b) the terms of every pair that moves an apart input, and the apart inputs' own terms, with the sets
    as the inputs they are.

On the 51-point sweep (319 paired inputs, two apart) that is 35 245 + 635 pairs where there were
50 721.
"""

from __future__ import annotations

import numpy as np

from budget.propagation.model import Model, evaluate
from budget.propagation.stencils import axis_points, pair_values, paired_inputs, second_order_terms

__all__ = ["STEP2", "second_order_sums"]

STEP2 = 5e-2
"""Second and third derivatives (second-order terms): h_i = STEP2·u(x_i)."""


def _passes(model: Model, names: list[str], x0: np.ndarray, u: np.ndarray
            ) -> list[tuple[np.ndarray, np.ndarray, list[int] | None]]:
    """(inputs moved, their u, positions of the apart inputs among them or None for every pair) per pass."""
    declared = getattr(model, "additive_apart", None)
    parts = list(declared(dict(zip(names, x0.tolist(), strict=True)))) if declared is not None else []
    apart = sorted({nm for _, away in parts for nm in away if nm in names})
    sets = [s for s, _ in parts]
    if not apart:  # nothing is held apart: the sets are plain sums
        return [(*paired_inputs(model, names, u, sets), None)]
    keep, uk = paired_inputs(model, names, u)
    touch = [k for k, i in enumerate(keep) if names[i] in apart]
    return [(*paired_inputs(model, names, u, sets, leave_out=apart), None), (keep, uk, touch)]


def second_order_sums(model: Model, names: list[str], x0: np.ndarray, u: np.ndarray, jac: np.ndarray,
                      out_names: list[str], f0: np.ndarray) -> np.ndarray:
    """The double sum of eq. (14) for each output (``jac`` its first derivatives, rows in ``out_names``
    order; ``f0`` its values at x0): one number per output."""
    total = np.zeros(len(out_names))
    for keep, uk, touch in _passes(model, names, x0, u):
        if not keep.size:
            continue
        h2 = STEP2 * uk
        pts = axis_points(x0, h2, keep)
        diag = evaluate(model, {nm: pts[:, i] for i, nm in enumerate(names)}, len(pts))
        if keep.size > 1 and (touch is None or touch):
            ii, jj, pairs = pair_values(model, names, x0, h2, keep, touching=touch)
        else:
            none = np.empty(0, dtype=int)
            ii, jj, pairs = none, none, {on: np.empty((2, 2, 0)) for on in out_names}
        own = None if touch is None else np.isin(np.arange(keep.size), touch)
        for k, on in enumerate(out_names):
            total[k] += second_order_terms(float(f0[k]), diag[on].reshape(keep.size, 4), pairs[on], ii, jj,
                                           jac[k][keep] * uk, STEP2, own)
    return total
