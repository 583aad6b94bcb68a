"""Targets in a run: goal verdicts, conformity decisions and the claim across the range."""

from __future__ import annotations

import json
import tomllib

import numpy as np
import pytest
from scipy.optimize import linprog
from scipy.stats import norm

from budget.advice.range_claim import claim_for_range, linear_envelope, round_up
from budget.advice.targets import decide, with_verdicts
from budget.cli import main
from budget.errors import BudgetInputError
from budget.inputs.rig_file import parse_rig
from budget.rig.budget import run_budget
from budget.rig.claim import claim_U
from tests.paths import TEMPLATES
from tests.rigdoc import merge_doc


def _doc(name: str) -> dict:
    return tomllib.loads((TEMPLATES / name).read_text(encoding="utf-8"))


def _run(doc: dict, seed: int = 1, trials: int = 20_000):
    rig = parse_rig(doc)
    res = run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(seed)), trials=trials)
    return rig, with_verdicts(rig, res)


def test_goal_verdicts_meet_and_miss_with_margin():
    # [derived] the verdict compares the claimable U with the target: margin = (target - U)/target.
    doc = merge_doc(_doc("gauge_static.toml"), {"goal": {"angle_U_deg": 0.08, "source": "demo spec"}})
    rig, res = _run(doc)
    assert len(res.goals) == 4
    for g, ob in zip(res.goals, res.angles, strict=True):
        assert g.U == pytest.approx(claim_U(ob)) and g.meets == (g.U <= 0.08)
        assert g.margin_pct == pytest.approx(100 * (0.08 - g.U) / 0.08)
    assert any(g.meets for g in res.goals) and not all(g.meets for g in res.goals)


def test_claim_U_is_the_linear_U_for_a_validated_unbiased_result():
    # JCGM 100 6.2.1: for y at the reference and a validated linear method, the claim is y +- U.
    doc = merge_doc(_doc("gauge_static.toml"), {"geometry": {"tilt_bound_deg": None}})
    _, res = _run(doc)
    for ob in res.angles:
        if ob.method == "linear":
            bias = abs(ob.linear.estimate - ob.nominal)
            assert claim_U(ob) == pytest.approx(ob.linear.U + bias, rel=1e-12)


def test_gain_goal_in_percent_and_json_block(tmp_path, capsys):
    from budget.inputs.toml_text import dumps_toml

    doc = merge_doc(_doc("gain_sweep.toml"), {"goal": {"gain_U_pct": 0.5, "angle_U_deg": 0.2}})
    path = tmp_path / "sweep.toml"
    path.write_text(dumps_toml(doc), encoding="utf-8")
    assert main(["run", str(path), "--seed", "2", "--trials", "20000", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    g = out["gain"]["goal"]
    assert set(g) >= {"U_target", "meets", "margin_pct"} and g["U_target"] == 0.5 and g["unit"] == "%"
    assert g["U"] == pytest.approx(100 * max(abs(x - 10.0) for x in out["gain"]["monte_carlo"]["interval"]) / 10.0)
    assert out["angles"][0]["goal"]["U_target"] == 0.2


@pytest.mark.parametrize(("over", "message"), [
    ({"goal": {"gain_U_pct": 1.0}}, "has no [sweep]"),
    ({"goal": {"angle_U_deg": None}}, "[goal] needs"),
    ({"conformity": {"rule": "guarded"}}, "[conformity] needs"),
    ({"conformity": {"angle_tolerance_deg": 0.2}}, "'rule' field of [conformity] is missing"),
    ({"conformity": {"rule": "lenient", "angle_tolerance_deg": 0.2}}, "'rule' field of [conformity] must be"),
    ({"range_claim": {"form": "curve"}}, "'form' field of [range_claim] must be"),
])
def test_bad_target_sections_are_one_line(over, message):
    with pytest.raises(BudgetInputError) as exc:
        parse_rig(merge_doc(_doc("gauge_static.toml"), over))
    assert message in str(exc.value) and "\n" not in str(exc.value)


def test_p_of_the_goal_and_of_the_command_must_agree(tmp_path, capsys):
    from budget.inputs.toml_text import dumps_toml

    path = tmp_path / "g.toml"
    path.write_text(dumps_toml(merge_doc(_doc("gauge_static.toml"), {"goal": {"p": 0.99}})), encoding="utf-8")
    assert main(["run", str(path), "--p", "0.95", "--trials", "20000"]) == 2
    assert "differs from the 'p' field of [goal]" in capsys.readouterr().err


def test_decisions_simple_and_guarded_with_guard_band():
    # JCGM 106:2012 8.2 (simple acceptance) and 8.3.2 (guarded acceptance, w = U); p_c from a normal PDF
    # of the measurand, 7.3: p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u), here against 10^6 samples.
    rng = np.random.default_rng(11)
    y, u, tol = 10.15, 0.05, (9.8, 10.2)
    samples = rng.normal(loc=y, scale=u, size=1_000_000)
    U = 2 * u
    simple = decide(y, tol, U, "simple", samples)
    guarded = decide(y, tol, U, "guarded", samples)
    assert simple[0] == "accept" and guarded[0] == "reject"
    assert simple[2] and guarded[2]  # within U of the upper limit: flagged in the guard band
    assert guarded[1] == pytest.approx((9.9, 10.1))
    p_c = norm.cdf((tol[1] - y) / u) - norm.cdf((tol[0] - y) / u)
    assert simple[3] == pytest.approx(p_c, abs=5 * np.sqrt(p_c * (1 - p_c) / 1e6))
    far = decide(10.0, tol, U, "guarded", samples)
    assert far[0] == "accept" and not far[2]


def test_a_biased_rig_puts_its_readings_in_the_guard_band():
    # Demo (invented): the moving pointer's start-of-exposure timestamps (w*t_e/2 = 0.12 deg) and rolling-shutter
    # rows bias its first reading to about 20.34 deg; with a +-0.4 deg tolerance it lies inside the tolerance
    # but within U of the upper limit: guarded acceptance rejects it and the report flags the guard band.
    doc = merge_doc(_doc("moving_pointer.toml"), {"conformity": {"rule": "guarded", "angle_tolerance_deg": 0.4}})
    rig, res = _run(doc)
    flagged = [d for d in res.decisions if d.in_guard_band]
    assert flagged and all(d.decision == "reject" for d in flagged)
    assert "guarded acceptance" in res.decision_rule and "7.8.6" in res.decision_rule
    from budget.report.console import render_run
    from budget.report.markdown import render_markdown

    assert "in the guard band" in render_run(res) and "GUARD BAND" in render_markdown(res)
    from budget.report.html import render_html

    html = render_html(res, with_plots=False)
    assert "(in the guard band)" in html and "Decision rule and verdicts" in html and "7.8.6" in html


def test_linear_envelope_is_the_linear_programme_optimum():
    # Reference: scipy.optimize.linprog (HiGHS) on the same programme, min a + b*mean(t) s.t. a + b t_i >= U_i.
    rng = np.random.default_rng(3)
    for _ in range(20):
        t = np.sort(rng.uniform(0, 270, 6))
        u = 0.01 + 0.0005 * t + rng.uniform(0, 0.02, 6)
        a, b = linear_envelope(t, u)
        ref = linprog([1.0, t.mean()], A_ub=-np.column_stack([np.ones_like(t), t]), b_ub=-u,
                      bounds=[(0, None), (0, None)])
        assert a + b * t.mean() == pytest.approx(ref.fun, rel=1e-9)
        assert np.all(a + b * t >= u * (1 - 1e-12))


def test_round_up_two_digits():
    assert round_up(0.0123) == 0.013 and round_up(0.00080) == 0.0008 and round_up(0.0100001) == 0.011


@pytest.mark.parametrize("form", ["linear", "table"])
def test_range_claim_covers_every_angle_and_midpoint(form):
    doc = merge_doc(_doc("gauge_static.toml"), {"range_claim": {"form": form}})
    rig, res = _run(doc)
    claim = claim_for_range(rig, res, rng=np.random.default_rng(5), trials=20_000)
    mids = [p for p in claim.points if p[3]]
    assert len(mids) == 3 and len(claim.points) == 7
    assert all(env >= u for _, u, env, _ in claim.points)
    assert claim.low_deg == 30 and claim.high_deg == 210 and "p = 95 %" in claim.statement


def test_targets_reach_the_workbook_and_the_markdown():
    from budget.report.markdown import render_markdown
    from budget.report.workbook import build_workbook

    doc = merge_doc(_doc("gauge_static.toml"), {"conformity": {"rule": "simple", "angle_tolerance_deg": 0.3}})
    _, res = _run(doc)
    ws = build_workbook(res)["Summary"]
    cells = [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]
    assert any(c.startswith("target: angle P4") and "MISSES" in c for c in cells)
    assert any("simple acceptance" in c for c in cells) and any(c.startswith("conformity: ") for c in cells)
    md = render_markdown(res)
    assert "## Targets, decisions and the claim for the range" in md and "simple acceptance" in md
