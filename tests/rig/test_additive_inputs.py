"""The virtual rig reads each set of inputs it declares additive only through their sum (issue 14).

``VirtualRig.additive_inputs`` lets the linear method's second-order terms count such a set as one
quantity (the algebra is checked against eq. (14) written out by hand in
tests/propagation/test_second_order.py). Here the rig is held to its declaration: moving two
members of a set by equal and opposite amounts changes no output, and moving either one alone
changes every output alike; and the second-order u with the sets counted once is that with every
input on its own, to 1e-6 relative (issue 14: second-order terms to 1e-6). Internal consistency of
one model, not an outside reference.
"""

from __future__ import annotations

import numpy as np
import pytest

from budget.propagation import linear
from budget.rig import components as comp
from budget.rig.budget import TrueValueModel
from budget.rig.model import VirtualRig
from tests.rig.test_linear_paths_agree import RIGS


class _Apart:
    """The rig without its declaration: every input its own quantity in the second-order terms."""

    def __init__(self, model) -> None:
        self.model = model
        self.costly_inputs = model.costly_inputs

    def __call__(self, **kw):
        return self.model(**kw)


def _sets(rig):
    inputs, _ = comp.build_inputs(rig)
    model = VirtualRig(rig)
    sets = [s for s in model.additive_inputs(list(inputs)) if len(s) > 1]
    return inputs, model, sets


@pytest.mark.parametrize("name", list(RIGS))
def test_declared_sets_enter_only_through_their_sum(name):
    # Internal consistency (no outside reference): the rig against its own declaration.
    inputs, model, sets = _sets(RIGS[name]())
    assert sets, "every template has a point with more than one locator error"
    names = list(inputs)
    x0 = {k: np.full(3, q.distribution.mean) for k, q in inputs.items()}
    base = model(**x0)
    for s in sets:
        a, b = list(s)[:2]
        d = inputs[a].distribution.u
        opposite = {**x0, a: x0[a] + np.array([d, -d, 3 * d]), b: x0[b] - np.array([d, -d, 3 * d])}
        alone_a = {**x0, a: x0[a] + d}
        alone_b = {**x0, b: x0[b] + d}
        moved_a, moved_b, both = model(**alone_a), model(**alone_b), model(**opposite)
        for out, v in base.items():
            np.testing.assert_allclose(both[out], v, rtol=0, atol=1e-10 * max(1.0, abs(v[0])), err_msg=f"{s} {out}")
            np.testing.assert_allclose(moved_a[out], moved_b[out], rtol=0, atol=1e-10 * max(1.0, abs(v[0])))
    # something of every kind the rig declares is present in some template
    assert all(k in names for s in sets for k in s)


@pytest.mark.parametrize("name", list(RIGS))
def test_sets_counted_once_keep_the_second_order_u(name):
    # Internal consistency: the same model with and without the declaration. The outside check of the
    # algebra is JCGM 100:2008 5.1.2 eq. (14) written out by hand, in tests/propagation/test_second_order.py
    # (test_inputs_read_through_one_sum_count_once); the 1e-6 is issue 14's tolerance for second-order terms.
    inputs, model, sets = _sets(RIGS[name]())
    once = linear(model, inputs, second_order=True)
    apart = linear(_Apart(model), inputs, second_order=True)
    for out in once.names:
        assert once[out].u == pytest.approx(apart[out].u, rel=1e-6), out
        assert once[out].u_first_order == apart[out].u_first_order


def test_evaluation_mode_keeps_the_declaration():
    # Internal consistency: the evaluation-mode wrapper forwards what the rig declares.
    rig = RIGS["gain_sweep"]()
    inputs, model, sets = _sets(rig)
    wrapped = TrueValueModel(model, located={}, nominal={})
    assert wrapped.additive_inputs(list(inputs)) == model.additive_inputs(list(inputs))
    assert wrapped.costly_inputs(list(inputs)) == model.costly_inputs(list(inputs))
    x0 = {k: q.distribution.mean for k, q in inputs.items()}
    assert wrapped.additive_apart(x0) == model.additive_apart(x0) != []


@pytest.mark.parametrize("name", ["gain_sweep", "gain_sweep, 21 points", "bench_sweep"])
def test_sets_held_apart_enter_through_their_weighted_sum(name):
    # Internal consistency (no outside reference): the rig against its own declaration. With the source's
    # gain and load at their estimates, moving a source error by d and a pointer offset at the same set point
    # by -w·d (w the declared weight) changes no output; with the gain moved off its estimate it does (the
    # reason those two are held apart). An outside check of the algebra is in tests/propagation/
    # test_second_order.py.
    rig = RIGS[name]()
    inputs, _ = comp.build_inputs(rig)
    model = VirtualRig(rig)
    x0 = {k: q.distribution.mean for k, q in inputs.items()}
    declared = model.additive_apart(x0)
    if rig.source is None or rig.source.readback != "commanded":
        assert declared == []
        return
    assert len(declared) == len(rig.sweep.set_points_v)
    base = model(**{k: np.full(2, v) for k, v in x0.items()})
    for members, apart in declared[:: max(1, len(declared) // 4)]:
        src = [k for k in members if not k.startswith(("repeat", "settle"))]
        ptr = [k for k in members if k.startswith(("repeat", "settle"))]
        if not src or not ptr:
            continue
        a, b = src[0], ptr[0]
        d = inputs[a].distribution.u
        kw = {k: np.full(2, v) for k, v in x0.items()}
        kw[a] = kw[a] + d
        kw[b] = kw[b] - members[a] / members[b] * d
        moved = model(**kw)
        for out, v in base.items():
            np.testing.assert_allclose(moved[out], v, rtol=0, atol=1e-10 * max(1.0, abs(v[0])), err_msg=f"{a} {out}")
        if "source_gain_pct" in apart and "source_gain_pct" in x0:
            kw["source_gain_pct"] = kw["source_gain_pct"] + 50 * inputs["source_gain_pct"].distribution.u
            off = dict(kw)
            off[a], off[b] = x0[a] + np.zeros(2), x0[b] + np.zeros(2)
            reading = a.rsplit("_", 1)[1]  # the angle of that set point
            assert not np.allclose(model(**kw)[reading], model(**off)[reading], rtol=0, atol=1e-13)
