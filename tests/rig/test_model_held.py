"""The virtual rig with held inputs: forming the image once when nothing that shapes it moves.

The linear method's pair stencil and the one-component Monte Carlo pass every input they do not
move as a read-only broadcast view of its estimate; the rig then forms the image once and
projects only the readings whose own source inputs move (issue 14). The outputs must be those
of the same call with every input a full array (the trial-by-trial image), value for value.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from budget.inputs.rig_file import load_rig, parse_rig
from budget.rig import components as comp
from budget.rig.model import VirtualRig
from tests.paths import TEMPLATES
from tests.rigdoc import merge_doc

T = 40


def _sweep(over: dict | None = None):
    doc = tomllib.loads((TEMPLATES / "gain_sweep.toml").read_text())
    return parse_rig(merge_doc(doc, over))


RIGS = {
    "sweep": lambda: _sweep(),
    "sweep, meter read-back": lambda: _sweep({"source": {"readback": "dmm", "dmm_pct_reading": 0.01,
                                                          "dmm_counts": 2, "dmm_resolution_v": 1e-4}}),
    "sweep, pivot mark": lambda: _sweep({"pivot": {"method": "mark", "source": "mark"}}),
    "static gauge": lambda: load_rig(TEMPLATES / "gauge_static.toml"),
    "moving pointer": lambda: load_rig(TEMPLATES / "moving_pointer.toml"),
}


def _calls(rig, moved_names):
    """The same trials twice: the held inputs as broadcast views, and every input a full array."""
    inputs, _ = comp.build_inputs(rig)
    rng = np.random.default_rng(5)
    held, full = {}, {}
    for name, q in inputs.items():
        if name in moved_names:
            v = q.distribution.mean + q.distribution.u * rng.standard_normal(T)
            held[name], full[name] = v, v.copy()
        else:
            held[name] = np.broadcast_to(np.float64(q.distribution.mean), (T,))
            full[name] = np.full(T, q.distribution.mean)
    return inputs, held, full


def _moved(inputs, kinds):
    names = [n for n in inputs if n.startswith(kinds)]
    return set(names[::3])


@pytest.mark.parametrize("rig_name", list(RIGS))
@pytest.mark.parametrize("kinds", [("noise_", "resid_", "quant_", "lock_", "jitter_", "dmm_", "roll_"),
                                   ("noise_", "lsb_mv_", "vnoise_mv_"), ("inl_mv_",), ("tilt_", "noise_"),
                                   ("source_gain_pct", "resid_"), ("k1", "target_height"), ("mark_offset",)])
def test_held_inputs_give_the_trial_by_trial_outputs(rig_name, kinds):
    rig = RIGS[rig_name]()
    inputs, _ = comp.build_inputs(rig)
    moved = _moved(inputs, kinds)
    _, held, full = _calls(rig, moved)
    model = VirtualRig(rig)
    a, b = model(**held), model(**full)
    assert a.keys() == b.keys()
    for key in a:
        np.testing.assert_allclose(a[key], b[key], rtol=1e-14, atol=0, err_msg=key)


def test_only_readings_whose_source_inputs_move_are_projected_per_trial():
    rig = _sweep()
    inputs, held, _ = _calls(rig, {"lsb_mv_P3", "vnoise_mv_P7", "noise_x_P2", "resid_y_Z"})
    model = VirtualRig(rig)
    assert model._moving_readings(held, T) == [2, 6]
    _, held, _ = _calls(rig, {"noise_x_P2", "tilt_x_deg"})
    assert model._moving_readings(held, T) is None  # the tilt shapes every point
    _, held, _ = _calls(rig, {"lsb_mv_P3", "source_offset_mv"})
    assert model._moving_readings(held, T) is None  # a shared source input moves every reading
    _, held, _ = _calls(rig, set())
    held["someone_elses_input"] = np.zeros(T)  # not known to enter after the image: never held
    assert model._moving_readings(held, T) is None


def test_the_rig_and_its_wrappers_limit_the_trials_per_call():
    """The virtual rig's (points, trials) arrays stay in the cache at 4096 trials a call; the evaluation-mode
    wrapper and the one-component Monte Carlo's held model pass its limit on to the engine."""
    from budget.propagation.montecarlo import chunk_trials
    from budget.rig.budget import TrueValueModel, _fixed_model
    rig = load_rig(TEMPLATES / "gain_sweep.toml")
    model = VirtualRig(rig)
    inputs, _ = comp.build_inputs(rig)
    assert chunk_trials(model, 2) == 4096
    assert chunk_trials(TrueValueModel(model, located={}, nominal={}), 2) == 4096
    assert chunk_trials(_fixed_model(model, inputs, ("tilt_x_deg",)), 1) == 4096
    assert chunk_trials(lambda a: a, 2) > 4096
