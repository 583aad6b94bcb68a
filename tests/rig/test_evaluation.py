"""Evaluation mode: measured positions, Type A scatter, and the sign of modelled offsets.

[derived] The virtual rig gives the located value v of a true value n; the true value
behind a measured m is m − (v − n). A start-of-exposure timestamp on a pointer moving
at ω makes every located angle ω·t_e/2 too large, so the evaluated estimate must be
the measured angle minus ω·t_e/2.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from budget.inputs.data_csv import read_rig_data
from budget.inputs.rig_file import parse_rig
from budget.rig.budget import run_budget
from budget.rig.evaluation import load_evaluation
from budget.rig.geometry import nominal_image_points
from tests.paths import TEMPLATES

TEMPLATE = TEMPLATES / "moving_pointer.toml"
RATE, EXPOSURE_MS = 120.0, 2.0


def _evaluate(rig):
    return load_evaluation(rig, read_rig_data(rig))


def _doc() -> dict:
    doc = tomllib.loads(TEMPLATE.read_text(encoding="utf-8"))
    doc["camera"].update(shutter="global", exposure_ms=EXPOSURE_MS)
    doc["camera"].pop("row_time_us", None)
    doc["geometry"].update(tilt_deg=0.0)
    doc["motion"].update(rate_deg_per_s=RATE, timestamp="start", jitter_ms=0.01)
    return doc


@pytest.fixture(scope="module")
def evaluated(tmp_path_factory):
    folder = tmp_path_factory.mktemp("eval")
    doc = _doc()
    x, y = nominal_image_points(parse_rig(doc))
    rng = np.random.default_rng(5)
    labels = ["Z", "P1", "P2", "P3", "P4", "M"]
    rows = ["position,frame,x_px,y_px"]
    for lab, xi, yi in zip(labels, x, y, strict=True):
        rows += [f"{lab},{f + 1},{xi + rng.normal(0, 0.02):.6f},{yi + rng.normal(0, 0.02):.6f}" for f in range(6)]
    (folder / "readings.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    doc["data"] = {"readings_csv": "readings.csv"}
    ev = _evaluate(parse_rig(doc, base=folder))
    res = run_budget(ev.rig, rng=np.random.default_rng(1), trials=20_000, type_a=ev.type_a,
                     measured_deg=ev.measured_deg)
    return ev, res


def test_estimate_removes_the_timestamp_offset(evaluated):
    ev, res = evaluated
    offset = RATE * EXPOSURE_MS * 1e-3 / 2  # ω·t_e/2 = 0.12°
    for measured, ob in zip(ev.measured_deg, res.angles, strict=True):
        # tolerance: the linear estimate is exact up to the 1e-9-level rounding of the stencil
        assert ob.linear.estimate == pytest.approx(measured - offset, abs=1e-6)
        # Monte Carlo: its standard error u/√M
        assert ob.monte_carlo.estimate == pytest.approx(measured - offset, abs=4 * ob.monte_carlo.u / 141)


def test_measured_angles_replace_the_nominal_ones(evaluated):
    ev, _ = evaluated
    nominal = (20.0, 60.0, 100.0, 140.0)
    # the fake frames scatter by 0.02 px at a radius of ~350 px: angles within ~0.02°
    assert np.allclose(ev.measured_deg, nominal, atol=0.05)
    assert ev.rig.positions.angles_deg == ev.measured_deg


def test_type_a_noise_is_a_t_distribution_with_n_minus_1_dof(evaluated):
    """JCGM 100 4.2.3 and G.3: the mean of n frames has S/n with n − 1 degrees of freedom, one
    bivariate quantity carried along its two principal axes."""
    _, res = evaluated
    for axis in ("major", "minor"):
        q = res.inputs[f"noise_{axis}_P1"]
        assert q.evaluation == "A" and q.distribution.dof == 5
