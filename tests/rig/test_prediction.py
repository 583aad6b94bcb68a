"""Open-loop use of a sweep: the angle for a commanded voltage and the voltage for a
wanted angle, from the sweep template's budget (20 000 trials, seed 1)."""

from __future__ import annotations

import json
import math
import re
import tomllib

import numpy as np
import pytest

from budget.cli import main
from budget.commands.new import STARTERS
from budget.inputs.rig_file import load_rig
from budget.rig.budget import run_budget
from budget.rig.prediction import predict_from_sweep
from tests.paths import TEMPLATES as TEMPLATE_DIR

SWEEP = TEMPLATE_DIR / STARTERS["sweep"]


def _reject_constant(name: str):
    raise ValueError(f"non-standard JSON constant {name}")


@pytest.fixture(scope="module")
def sweep_run():
    rig = load_rig(SWEEP)
    return rig, run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(1)), trials=20_000)


def _shared_u():
    """[derived] The template's shared source terms, which calibration and use share: the gain ±0.02 %
    (u = 0.02/√3 %, ∂K/∂g = K·1e-2 per %), the offset ±1 mV (u = 1/√3 mV, ∂θ0/∂o = K·1e-3 per mV) and the
    output impedance 0…0.2 Ω into 10 kΩ (u = 0.2/√12 Ω, ∂K/∂Z = −K/R_L): JCGM 100 4.3.7, eq. (10)."""
    s = tomllib.loads(SWEEP.read_text(encoding="utf-8"))["source"]
    k = 10.0
    uk2 = (k * 1e-2 * s["gain_error_pct"] / math.sqrt(3)) ** 2 + \
        (k / s["load_resistance_ohm"] * s["output_impedance_ohm"] / math.sqrt(12)) ** 2
    ub2 = (k * 1e-3 * s["offset_mv"] / math.sqrt(3)) ** 2
    return uk2, ub2


def _u_fit(res, volts: float) -> float:
    """[derived] JCGM 100 eq. (13) for θ = K·V + θ0 with the run's u(K), u(θ0), r(K, θ0), less the
    shared source terms (:func:`_shared_u`), which cancel between calibration and use."""
    uk, ub = res.gain.linear.u, res.gain_summary.intercept.linear.u
    r = res.gain_summary.correlation_linear
    sk2, sb2 = _shared_u()
    return math.sqrt(volts**2 * (uk**2 - sk2) + (ub**2 - sb2) + 2 * volts * r * uk * ub)


def _rng():
    return np.random.default_rng(np.random.SeedSequence(2))


def _u_source_v() -> float:
    """JCGM 100 F.2.2.1 and 4.3.7 from the template's own figures: one DAC step q over
    ±q/2 (q/√12), INL ±2q (2q/√3) and 50 µV rms noise, per commanded voltage."""
    s = tomllib.loads(SWEEP.read_text(encoding="utf-8"))["source"]
    q = s["span_v"] / 2 ** s["bits"]
    return math.sqrt(q**2 / 12 + (s["inl_lsb"] * q) ** 2 / 3 + (s["noise_uv"] * 1e-6) ** 2)


def test_angle_for_4_volts(sweep_run):
    """Common practice: 10 °/V nominal, so 4 V gives 40°. The estimate is the mean of
    K·4 V + θ0 over the trials: within 3 Monte Carlo standard errors (3u/√M) of 40° plus
    the run's own bias (< 1e-3°). u: linear by eq. (13) plus K·u(V) of the source, to
    1e-9 [derived]; Monte Carlo within 5 % of it (sd standard error 0.5 %, and the tilt's
    second-order term adds about 1 %)."""
    rig, res = sweep_run
    p = predict_from_sweep(rig, res, volts=4.0, rng=_rng())
    assert p["unit"] == "°"
    assert p["estimate"] == pytest.approx(40.0, abs=3 * p["u"] / math.sqrt(20_000) + 1e-3)
    want = math.hypot(_u_fit(res, 4.0), rig.sweep.nominal_gain_deg_per_v * _u_source_v())
    assert p["u_linear"] == pytest.approx(want, rel=1e-4)
    assert p["u"] == pytest.approx(p["u_linear"], rel=0.05)
    assert 0.001 < p["u"] < 0.2  # a sensible size for this rig: well under a tenth of a degree
    lo, hi = p["interval"]
    assert lo < p["estimate"] < hi
    assert not any("Extrapolation" in w for w in p["warnings"])


def test_voltage_for_45_degrees(sweep_run):
    """[derived] V = (θ − θ0)/K; to first order δV = −(δθ0 + V·δK)/K, so
    u(V) = u_fit(V)/K with u_fit from eq. (13), plus the source's per-point u(V):
    4.5 V, to 1e-6 (linear) and 5 % (Monte Carlo)."""
    rig, res = sweep_run
    p = predict_from_sweep(rig, res, angle_deg=45.0, rng=_rng())
    assert p["unit"] == "V"
    assert p["estimate"] == pytest.approx(4.5, abs=0.002)
    v = p["estimate_linear"]
    # design mode: what is known of the true K is the reflection 2·K_nom − K̂ (prediction.py)
    k_true = 2 * rig.sweep.nominal_gain_deg_per_v - res.gain.linear.estimate
    want = math.hypot(_u_fit(res, v) / k_true, _u_source_v())
    assert p["u_linear"] == pytest.approx(want, rel=1e-4)
    assert p["u"] == pytest.approx(p["u_linear"], rel=0.05)
    assert not any("Extrapolation" in w for w in p["warnings"])


@pytest.mark.parametrize(("query", "outside"), [({"volts": 9.5}, 0.5), ({"volts": 0.25}, 0.75),
                                                 ({"angle_deg": 5.0}, 0.5), ({"angle_deg": 99.0}, 0.9)])
def test_outside_the_calibrated_span_warns(sweep_run, query, outside):
    """The sweep calibrates 1…9 V; beyond it the straight line is not verified. (99°, not 100°: 100° asks for
    the source's own limit of 10 V, which the estimate of a Monte Carlo run exceeds for some draws.)"""
    rig, res = sweep_run
    p = predict_from_sweep(rig, res, **query, rng=_rng())
    warns = [w for w in p["warnings"] if "Extrapolation" in w]
    assert len(warns) == 1
    assert f"{outside:.4g} V outside" in warns[0] or "angle_deg" in query  # the distance, to 4 digits
    if "angle_deg" in query:  # the voltage is itself an estimate: its distance to the span, to 4 digits
        v = p["estimate_linear"]
        assert f"{max(1.0 - v, v - 9.0):.4g} V outside" in warns[0]
        assert max(1.0 - v, v - 9.0) == pytest.approx(outside, abs=1e-3)


def test_cli_predict_volts_json(capsys):
    code = main(["predict", str(SWEEP), "--volts", "4", "--trials", "20000", "--seed", "1", "--json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    doc = json.loads(out, parse_constant=_reject_constant)
    assert doc["query"] == {"volts": 4.0} and doc["unit"] == "°" and doc["seed"] == 1
    assert doc["estimate"] == pytest.approx(40.0, abs=0.005)
    assert 0.001 < doc["u"] < 0.2 and doc["trials"] == 20000


def test_cli_predict_angle_text(capsys):
    code = main(["predict", str(SWEEP), "--angle", "45", "--trials", "20000", "--seed", "1"])
    out, err = capsys.readouterr()
    assert code == 0, err
    # The statement rounds the Monte Carlo estimate, 4.5 V within its sampling error
    # (u ≈ 0.004 V over 20 000 trials: se ≈ 3e-5 V), to the digits of U.
    found = re.search(r"V\(45°\) = (\d+\.\d+) V, u = (\d+\.\d+) V, 95 % coverage interval "
                      r"\[(\d+\.\d+), (\d+\.\d+)\] V", out)
    assert found, out
    assert float(found.group(1)) == pytest.approx(4.5, abs=2e-4)
    lo, hi = float(found.group(3)), float(found.group(4))
    assert lo < 4.5 < hi and hi - lo == pytest.approx(2 * 1.96 * float(found.group(2)), rel=0.1)


def test_cli_predict_needs_a_sweep(capsys):
    code = main(["predict", str(TEMPLATE_DIR / STARTERS["gauge"]), "--volts", "4", "--trials", "2000",
                 "--seed", "1"])
    out, err = capsys.readouterr()
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "[sweep]" in lines[0] and "[positions]" in lines[0]
    assert out == ""


@pytest.mark.parametrize("query", [{"angle_deg": 1e308}, {"angle_deg": float("nan")}, {"volts": float("inf")},
                                   {"volts": 1.0, "angle_deg": 10.0}, {}])
def test_library_predict_refuses_bad_queries(sweep_run, query):
    """One clear error, never an overflow or a NaN answer."""
    from budget.errors import BudgetInputError

    rig, res = sweep_run
    with pytest.raises(BudgetInputError):
        predict_from_sweep(rig, res, **query, rng=_rng())
