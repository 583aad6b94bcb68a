"""The linear method's fast paths through the virtual rig give the figures of the plain path (issue 14).

Fast: the rig forms the image once for held inputs (broadcast views), the pair stencil tiles
the inputs that shape the whole image apart (``VirtualRig.costly_inputs``) and evaluates 2^20
input values a call. Plain: every input a full array (the image formed trial by trial), no
tiling hint, 2^18 values a call, as before these changes. Second-order terms to 1e-6 relative
(issue 14; they agree value for value on this machine); both sides are the same model, so the
templates' figures are checked against one another, not against a stored copy that a change to
the rig's physics would invalidate. Published values of the engine itself: tests/reference/.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from budget.inputs.rig_file import load_rig, parse_rig
from budget.propagation import linear
from budget.rig import components as comp
from budget.rig.model import VirtualRig
from tests.paths import TEMPLATES
from tests.rigdoc import merge_doc


def _sweep(points: int | None = None, over: dict | None = None):
    doc = tomllib.loads((TEMPLATES / "gain_sweep.toml").read_text())
    if points is not None:
        over = {**(over or {}), "sweep": {"set_points_v": [round(float(v), 6) for v in np.linspace(1.0, 9.0, points)]}}
    return parse_rig(merge_doc(doc, over))


RIGS = {
    "bench_sweep": lambda: load_rig(TEMPLATES / "bench_sweep.toml"),
    "gain_sweep": lambda: load_rig(TEMPLATES / "gain_sweep.toml"),
    "gauge_static": lambda: load_rig(TEMPLATES / "gauge_static.toml"),
    "moving_pointer": lambda: load_rig(TEMPLATES / "moving_pointer.toml"),
    "gain_sweep, 21 points": lambda: _sweep(21),
    "gain_sweep, pivot mark": lambda: _sweep(over={"pivot": {"method": "mark", "source": "pivot mark"}}),
}


class _Plain:
    """The rig with every input materialized (no held views) and no tiling hint (the sets of inputs read
    through one sum are still counted once: tests/rig/test_additive_inputs.py checks that step)."""

    def __init__(self, model: VirtualRig) -> None:
        self.model = model
        self.additive_inputs = model.additive_inputs
        self.additive_apart = model.additive_apart

    def __call__(self, **kw):
        return self.model(**{k: np.array(v, dtype=float) for k, v in kw.items()})


@pytest.mark.parametrize("name", list(RIGS))
def test_fast_and_plain_paths_give_the_same_figures(name, monkeypatch):
    rig = RIGS[name]()
    inputs, _ = comp.build_inputs(rig)
    model = VirtualRig(rig)
    fast = [linear(model, inputs), linear(model, inputs, second_order=True)]
    monkeypatch.setattr("budget.propagation.stencils.PAIR_CHUNK_VALUES", 262_144)
    plain = [linear(_Plain(model), inputs), linear(_Plain(model), inputs, second_order=True)]
    for f, p in zip(fast, plain, strict=True):
        assert f.names == p.names
        np.testing.assert_allclose(f.jacobian, p.jacobian, rtol=1e-12, atol=0)
        for out in f.names:
            assert f[out].u == pytest.approx(p[out].u, rel=1e-12), out
            assert f[out].u_second_order == pytest.approx(p[out].u_second_order, rel=1e-6), out
            assert f[out].nu_eff == p[out].nu_eff
            assert [g.contribution for g in f[out].groups] == pytest.approx(
                [g.contribution for g in p[out].groups], rel=1e-12)
