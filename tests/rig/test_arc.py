"""A fitted pivot is refused up front when its arc bows less than a located point's own scatter.

The sagitta of a circular arc of radius R spanning θ is R(1 − cos θ/2) (plane geometry, common
practice). The threshold (one standard uncertainty of a located point along an image axis) is our
own choice: below it the points can lie on a line within their uncertainties and the fitted centre
is undetermined (Chernov 2010, ch. 3, recalled from memory).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from budget.errors import BudgetInputError
from budget.inputs.rig_file import load_rig
from budget.rig import components as comp
from budget.rig.arc import arc_bow, short_arc_reason
from budget.rig.budget import run_budget
from budget.rig.model import LOCATOR_KINDS
from tests.paths import TEMPLATES


def _scaled(rig, factor):
    volts = tuple(v * factor for v in rig.sweep.set_points_v)
    return dataclasses.replace(rig, sweep=dataclasses.replace(rig.sweep, set_points_v=volts))


def _u_point(inputs):
    kinds = LOCATOR_KINDS
    keys = {k.split("_", 1)[1] for k in inputs if k.startswith(kinds)}
    return max(math.sqrt(sum(inputs[f"{kd}_{key}"].distribution.u ** 2 for kd in kinds if f"{kd}_{key}" in inputs))
               for key in keys)


def test_the_bow_is_the_arcs_sagitta():
    rig = load_rig(TEMPLATES / "bench_sweep.toml")
    span, sagitta = arc_bow(rig)
    assert span == pytest.approx(max(rig.nominal_angles_deg) - min(0.0, *rig.nominal_angles_deg))
    assert sagitta == pytest.approx(rig.radius_px * (1 - math.cos(math.radians(span / 2))), rel=1e-12)


@pytest.mark.parametrize(("bow_in_u", "refused"), [(0.5, True), (2.0, False)])
def test_an_arc_is_refused_only_below_the_points_scatter(bow_in_u, refused):
    rig = load_rig(TEMPLATES / "bench_sweep.toml")
    assert rig.pivot.method == "readings"
    inputs, _ = comp.build_inputs(rig)
    u = _u_point(inputs)
    span, _ = arc_bow(rig)
    want = 2 * math.degrees(math.acos(1 - bow_in_u * u / rig.radius_px))  # the span that bows bow_in_u · u
    small = _scaled(rig, want / span)
    small_inputs, _ = comp.build_inputs(small)
    assert arc_bow(small)[1] == pytest.approx(bow_in_u * u, rel=1e-6)
    reason = short_arc_reason(small, small_inputs)
    assert (reason is not None) == refused
    if refused:
        assert "own scatter" in reason and "method = 'mark'" in reason
        with pytest.raises(BudgetInputError, match="The pivot cannot be found"):
            run_budget(small, rng=np.random.default_rng(1), trials=1000)


def test_a_pivot_mark_needs_no_arc():
    rig = load_rig(TEMPLATES / "bench_sweep.toml")
    marked = dataclasses.replace(rig, pivot=dataclasses.replace(rig.pivot, method="mark"))
    assert arc_bow(marked) is None
    assert short_arc_reason(_scaled(marked, 1e-3), comp.build_inputs(rig)[0]) is None
