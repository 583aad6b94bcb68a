"""The components issue 10 found missing: pointer repeatability and settling, pivot runout, camera-mount
drift (shift and roll), fixed-pattern noise. Each is a budget row with its source note, in the one rig
model; each is checked against its closed form on a simple rig (pivot mark at the optical axis, zero
image pointing up, one reading at 90° counterclockwise; target on the dial plane)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.imaging.fixed_pattern import dsnu_sd_px, prnu_sd_px
from budget.inputs.rig_file import parse_rig
from budget.propagation import linear, monte_carlo
from budget.rig import components as comp
from budget.rig.components import build_inputs
from budget.rig.model import VirtualRig

R_MM = 40.0


def _rig(**extra):
    doc = {
        "camera": {"pixels_x": 2048, "pixels_y": 2048, "pitch_um": 5.0, "source": "camera sheet"},
        "lens": {"focal_length_mm": 25.0, "residual_rms_px": 0.01, "source": "calibration"},
        "geometry": {"working_distance_mm": 400.0, "pointer_radius_mm": R_MM, "tilt_bound_deg": 1e-6,
                     "source": "fixture"},
        "target": {"sigma_px": 1.0, "signal_e": 1e5},
        "pivot": {"method": "mark", "mark_offset_bound_mm": 0.0},
        "positions": {"angles_deg": [90.0]},
    }
    for section, fields in extra.items():
        doc.setdefault(section, {}).update(fields)
    return parse_rig(doc)


def _group_u(rig, group: str) -> float:
    inputs, corr = build_inputs(rig)
    lin = linear(VirtualRig(rig), inputs, correlation=corr or None)
    found = [g for g in lin["P1"].groups if g.name == group]
    assert found, [g.name for g in lin["P1"].groups]
    srcs = {inputs[n].source for n in found[0].inputs}
    assert all(s and s != "assumed" for s in srcs)  # every row carries its source note
    return found[0].contribution


def test_pointer_repeatability_zero_and_reading():
    """[derived] the zero image and the reading each rest off by N(0, s): u = s√2 = 0.01414° for s = 0.01°."""
    rig = _rig(pointer={"repeatability_deg": 0.01, "source": "maker's data"})
    assert _group_u(rig, comp.REPEAT) == pytest.approx(0.01 * math.sqrt(2), rel=1e-6)


def test_pointer_settling_bound():
    """[derived] rectangular ±b (JCGM 100 4.3.7): u = b/√3."""
    rig = _rig(pointer={"settling_deg": 0.03, "source": "step response"})
    assert _group_u(rig, comp.SETTLE) == pytest.approx(0.03 / math.sqrt(3), rel=1e-6)


def test_pivot_play_moves_each_image():
    """[derived] each image's pointer moves by ±b per axis (u = b/√3 along its tangent); the mark on the dial
    does not: u(θ) = √2·(b/√3)/R rad. b = 5 µm, R = 40 mm: 0.00584°. Within 0.5 % (perspective)."""
    rig = _rig(pointer={"pivot_play_mm": 0.005, "source": "bearing data"})
    want = math.degrees(math.sqrt(2) * 0.005 / math.sqrt(3) / R_MM)
    assert _group_u(rig, comp.PLAY) == pytest.approx(want, rel=5e-3)


def test_mount_shift_between_zero_image_and_readings():
    """[derived] the zero image is off by the camera's shift; only its tangential part turns the angle:
    u = (b/√3)/R rad. The issue's figure: a 10 µm shift at R = 42 mm is 10e-3/42 rad = 0.0136°."""
    rig = _rig(geometry={"mount_shift_um": 10.0})
    want = math.degrees(10e-3 / math.sqrt(3) / R_MM)
    assert _group_u(rig, comp.MOUNT) == pytest.approx(want, rel=5e-3)
    assert math.degrees(10e-3 / 42) == pytest.approx(0.0136, abs=1e-4)


def test_mount_roll_between_zero_image_and_readings():
    """[derived] a roll ±b about the principal point, here the pivot: the zero image turns by it, u = b/√3."""
    rig = _rig(geometry={"mount_roll_deg": 0.02})
    assert _group_u(rig, comp.MOUNT) == pytest.approx(0.02 / math.sqrt(3), rel=1e-4)


def test_fixed_pattern_noise_does_not_average():
    """[derived] u_f per axis at Z and P1 (the mark's goes to the pivot estimate, as all its locator terms):
    θ = angle of P1 − angle of Z, each off by its tangential u_f/R_px: u = √2·u_f/R_px; u_f from PRNU and DSNU in
    quadrature (tests/imaging/test_fixed_pattern.py checks them on rendered frames). The same with 1 and
    64 frames averaged: the pattern is in every frame."""
    for n in (1, 64):
        rig = _rig(camera={"prnu_pct": 1.0, "dsnu_e": 3.0}, frames={"per_reading": n})
        uf = math.hypot(prnu_sd_px(1.0), dsnu_sd_px(3.0, 1e5, rig.locator.window_px))
        want = math.degrees(math.sqrt(2) * uf / rig.radius_px)
        assert _group_u(rig, comp.FPN) == pytest.approx(want, rel=1e-3)


def test_monte_carlo_sees_the_new_components():
    """The one model: Monte Carlo of all of them together agrees with the linear root sum of squares, 3 %."""
    rig = _rig(pointer={"repeatability_deg": 0.01, "settling_deg": 0.01, "pivot_play_mm": 0.005},
               geometry={"mount_shift_um": 10.0, "mount_roll_deg": 0.01}, camera={"prnu_pct": 1.0})
    inputs, corr = build_inputs(rig)
    model = VirtualRig(rig)
    lin = linear(model, inputs)
    mc = monte_carlo(model, inputs, trials=50_000, rng=np.random.default_rng(3))
    assert mc["P1"].u == pytest.approx(lin["P1"].u, rel=0.03)
