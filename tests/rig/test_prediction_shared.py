"""predict: the source's shared terms cancel between calibration and use, the stated interval is the
Monte Carlo one, and a voltage the source cannot command is refused (issue 10, item 5d)."""

from __future__ import annotations

import copy
import tomllib

import numpy as np
import pytest

from budget.cli import main
from budget.commands.new import STARTERS
from budget.errors import BudgetInputError
from budget.inputs.rig_file import parse_rig
from budget.rig.budget import run_budget
from budget.rig.prediction import predict_from_sweep
from tests.paths import TEMPLATES as TEMPLATE_DIR

SWEEP = TEMPLATE_DIR / STARTERS["sweep"]
DOC = tomllib.loads(SWEEP.read_text(encoding="utf-8"))


def _run(gain_pct: float, offset_mv: float, readback: str = "commanded"):
    doc = copy.deepcopy(DOC)
    doc["source"].update(gain_error_pct=gain_pct, offset_mv=offset_mv, readback=readback)
    if readback == "dmm":
        doc["source"].update(dmm_pct_reading=gain_pct, dmm_counts=5, dmm_resolution_v=1e-4)
    rig = parse_rig(doc)
    return rig, run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(1)), trials=20_000)


def _predict(run, **query):
    return predict_from_sweep(*run, **query, rng=np.random.default_rng(np.random.SeedSequence(5)))


@pytest.mark.parametrize("readback", ["commanded", "dmm"])
def test_shared_gain_and_offset_cancel(readback):
    """[derived] Calibration and use see V_pointer = a·x + c with the same a, c (source gain 5 %,
    offset 50 mV; or the meter's): the line fitted against x already holds them, so θ(x) = K̂x + θ̂0
    carries none of their uncertainty. The budget's u(K) grows by K·5 %/√3 = 0.29 °/V [JCGM 100 4.3.7],
    the prediction's u stays that of the rig without them (within the Monte Carlo noise, 5 %)."""
    small, big = _run(0.0, 0.0, readback), _run(5.0, 50.0, readback)
    assert big[1].gain.linear.u > 0.25  # the budget of K carries the shared gain
    for query in ({"volts": 4.0}, {"angle_deg": 45.0}):
        a, b = _predict(small, **query), _predict(big, **query)
        assert b["u"] == pytest.approx(a["u"], rel=0.05)
        assert b["u_linear"] == pytest.approx(a["u_linear"], rel=0.02)
        assert b["shared_cancelled"] and any("cancel" in w for w in b["warnings"])
    assert _predict(big, volts=4.0)["u"] < 0.05 * big[1].gain.linear.u * 4.0  # 0.035° against 1.2°


def test_the_statement_is_the_monte_carlo_interval():
    """JCGM 101 7.7: the statement gives the probabilistically symmetric interval the trials give, its
    ends rounded outward at the place of u (not ±1.96·u)."""
    p = _predict(_run(0.02, 1.0), volts=4.0)
    lo, hi = p["interval"]
    text = p["statement"]
    assert "coverage interval [" in text and "±" not in text
    shown = [float(v) for v in text.split("[")[1].split("]")[0].split(",")]
    assert shown[0] <= lo and shown[1] >= hi
    assert shown[1] - shown[0] < (hi - lo) * 1.2


def test_a_voltage_beyond_the_source_is_refused():
    """The template's source is bipolar 20 V: ±10 V. 150° at 10 °/V needs 15 V."""
    run = _run(0.02, 1.0)
    with pytest.raises(BudgetInputError, match=r"15(\.\d+)? V, outside the source's range \[-10, 10\] V"):
        _predict(run, angle_deg=150.0)
    with pytest.raises(BudgetInputError, match="volts"):
        _predict(run, volts=10.5)


def test_cli_refuses_an_angle_beyond_the_source(capsys):
    code = main(["predict", str(SWEEP), "--angle", "150", "--trials", "2000", "--seed", "1"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "outside the source's range" in err
