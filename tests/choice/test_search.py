"""Camera choice over the whole design (issue 11): the distance search, the top pick against run, the rig file."""

from __future__ import annotations

import dataclasses
import json
import tomllib

import numpy as np
import pytest

from budget.choice.equivalent import equivalent_rig, rig_to_doc
from budget.choice.model import truncation_by_window
from budget.choice.rank import choose
from budget.cli import main
from budget.imaging.spot import window_truncation_max
from budget.inputs.choose_file import parse_choose
from budget.inputs.rig_file import parse_rig
from budget.inputs.supplied import OMISSION
from budget.inputs.toml_text import dumps_toml
from budget.rig.claim import linear_claims
from tests.paths import TEMPLATES

HEADER = "name,pixels_x,pixels_y,pitch_um,bit_depth,read_noise_e,full_well_e,max_frame_rate_hz,shutter,price\n"


def _doc(**over) -> dict:
    doc = tomllib.loads((TEMPLATES / "choose_cameras.toml").read_text(encoding="utf-8"))
    doc["candidates"]["cameras_csv"] = str(TEMPLATES / "cameras.csv")
    for section, table in over.items():
        doc.setdefault(section, {}).update(table)
    return doc


def test_search_beats_the_shortest_distance_on_a_case_built_for_it(tmp_path):
    # [derived] built case (invented demo data): a camera tilt bound of 0.3 deg with the pivot 20 mm off the
    # optical axis makes the first-order tilt terms ~ (R + |o|)/D dominate; a longer working distance shrinks
    # them faster than the smaller image costs, so the search must move away from the shortest distance.
    cams = tmp_path / "cams.csv"
    cams.write_text(HEADER + "demo-cam-12MP,4096,3000,3.45,12,2.3,10500,30,global,1890\n", encoding="utf-8")
    doc = _doc(scene={"tilt_bound_deg": 0.3, "pivot_offset_x_mm": 20.0, "working_distance_max_mm": 1500.0},
               goal={"angle_U_deg": 0.05})
    doc["candidates"].update(cameras_csv=str(cams), lenses=[{"focal_length_mm": 25.0, "f_number": 8.0}])
    ch = choose(parse_choose(doc))
    p, s = ch.pred, ch.shortest
    assert p.working_distance_mm[0] > 1.5 * s.working_distance_mm[0]
    assert p.U_angle_deg[0] < 0.9 * s.U_angle_deg[0]
    assert p.meets[0] and not s.meets[0]
    # and the rig model agrees that the chosen setting is better (first order, the surrogate's own order)
    at = {k: v for k, v in linear_claims(equivalent_rig(ch.spec, ch.cand, p, 0), p=0.95).items()}
    short = linear_claims(equivalent_rig(ch.spec, ch.cand, s, 0), p=0.95)
    assert max(at.values()) < max(short.values())


def test_template_choice_meets_more_often_than_at_the_shortest_distance():
    ch = choose(parse_choose(_doc()))
    assert int(ch.pred.meets.sum()) > int(ch.shortest.meets.sum())
    assert np.all(ch.pred.working_distance_mm >= ch.shortest.working_distance_mm - 1e-9)


def test_top_pick_of_choose_matches_run_on_its_rig_file(tmp_path, capsys):
    # The "Done when" of issue 11: choose --verify budgets the top pick with the rig model; run on the file that
    # --rig-out writes, with the same seed and trials, gives the same U (same model, same inputs: exact).
    rig_file = tmp_path / "top.toml"
    assert main(["choose", str(TEMPLATES / "choose_cameras.toml"), "--verify", "--seed", "9", "--trials", "20000",
                 "--rig-out", str(rig_file), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    top = doc["top_pick"]["rig_model"]
    assert main(["run", str(rig_file), "--seed", "9", "--trials", "20000", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    worst = max(a["goal"]["U"] for a in out["angles"])
    assert worst == pytest.approx(top["U_angle_deg"], rel=1e-12)
    assert all(a["goal"]["meets"] for a in out["angles"]) == top["meets"]
    # the surrogate's figure for the same pick agrees with the rig model to its tested tolerance (2 %, first
    # order against Monte Carlo with a 0.1 deg tilt bound)
    assert doc["top_pick"]["U_angle_deg"] == pytest.approx(top["U_angle_deg"], rel=0.05)


def test_equivalent_rig_file_reads_back_equal():
    # [derived] every field is written, so reading the file supplies no default: the descriptions are equal;
    # what a choose file cannot give (the pointer, the mount's drift, the fixed pattern) is listed as an
    # optimistic omission when the file is read (issue 10).
    doc = _doc(motion={"rate_deg_per_s": 30.0, "jitter_ms": 0.02}, goal={"gain_U_pct": 0.5})
    doc["measurement"] = {"set_points_v": [1.0, 2.0, 3.0, 4.0], "nominal_gain_deg_per_v": 20.0}
    spec = parse_choose(doc)
    ch = choose(spec)
    for i in (int(ch.order[0]), int(ch.order[-1])):
        rig = equivalent_rig(spec, ch.cand, ch.pred, i)
        back = parse_rig(tomllib.loads(dumps_toml(rig_to_doc(rig))))
        assert dataclasses.replace(back, assumptions=()) == rig and back.input_warnings == ()
        assert back.assumptions and all(a.reason.startswith(OMISSION) for a in back.assumptions)


def test_rolling_shutter_offset_of_the_surrogate_equals_the_rig_model():
    # The surrogate's rolling-shutter term is the virtual rig's known offset omega*(H/2 - y_j)*t_row: a moving
    # pointer with a rolling camera, compared with the rig model's linear claim (U + |offset|), 2 % as the
    # existing closed-form cross-checks.
    spec = parse_choose(_doc(motion={"rate_deg_per_s": 40.0, "jitter_ms": 0.01, "sample_step_deg": 1.0}))
    ch = choose(spec)
    names = [spec.cameras.name[k] for k in ch.camera_index]
    i = next(j for j in range(len(names)) if names[j] == "demo-cam-5MP-rolling" and ch.pred.fits[j])
    assert ch.pred.bias_angle_deg[i] != 0
    rig = equivalent_rig(spec, ch.cand, ch.pred, i)
    assert rig.camera.shutter == "rolling"
    claims = linear_claims(rig, p=0.95)
    assert ch.pred.U_angle_deg[i] == pytest.approx(max(claims[k] for k in claims if k.startswith("P")), rel=0.02)


def test_truncation_once_per_window_equals_the_direct_evaluation():
    # [derived] the memoised per-window table against spot.window_truncation_max: within 1 % of the value
    # (log-linear interpolation between sigma nodes 2.2 % apart) or 1e-7 px.
    rng = np.random.default_rng(2)
    sig, w = rng.uniform(0.2, 4.0, 2000), rng.choice([3, 5, 7, 9, 11, 15, 21], 2000)
    got, ref = truncation_by_window(sig, w), window_truncation_max(sig, w)
    assert np.all(np.abs(got - ref) <= np.maximum(0.01 * ref, 1e-7))


def test_f_number_search_keeps_the_lens_limit():
    spec = parse_choose(_doc(search={"f_numbers": [4.0, 5.6, 8.0, 11.0]}))
    ch = choose(spec)
    listed = np.array([spec.lenses.f_number[i % len(spec.lenses.f_number)] for i in range(len(ch.order))])
    assert np.all(ch.cand.f_number >= listed - 1e-12)
    plain = choose(parse_choose(_doc()))
    assert np.all(ch.pred.margin[ch.pred.meets] >= -1e-12) and int(ch.pred.meets.sum()) >= int(plain.pred.meets.sum())


def test_choose_says_how_many_rows_are_not_shown_and_all_shows_them(capsys):
    assert main(["choose", str(TEMPLATES / "choose_cameras.toml")]) == 0
    out = capsys.readouterr().out
    assert "7 not shown (--all shows every one)" in out and "margin" in out and "top pick:" in out
    assert main(["choose", str(TEMPLATES / "choose_cameras.toml"), "--all", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["shown"] == doc["candidates"] == 32 and doc["not_shown"] == 0


def test_new_choose_writes_a_starter_that_check_and_choose_accept(tmp_path, capsys):
    path = tmp_path / "choice.toml"
    assert main(["new", "choose", str(path)]) == 0
    assert (tmp_path / "cameras.csv").is_file()
    assert main(["check", str(path)]) == 0
    assert "valid choose file" in capsys.readouterr().out
    assert main(["choose", str(path)]) == 0
    assert main(["new", "choose", str(path)]) == 2  # never replaces
    bad = tmp_path / "bad.toml"
    bad.write_text(path.read_text(encoding="utf-8").replace("pointer_radius_mm = 42", "pointer_radius_mm = -4"),
                   encoding="utf-8")
    capsys.readouterr()
    assert main(["check", str(bad)]) == 2
    assert "'pointer_radius_mm' field of [scene]" in capsys.readouterr().err
