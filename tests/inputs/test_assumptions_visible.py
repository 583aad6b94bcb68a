"""Issue 10 item 1: every value the tool supplies is an assumption in every report; a left-out component
is stated as an optimistic omission; a read-back meter needs its specification; numbers outside their
plausible range are warnings naming the field and the likely unit slip."""

from __future__ import annotations

import json
import re

import pytest

from budget.cli import main
from budget.commands.new import STARTERS
from budget.inputs.rig_file import load_rig, parse_rig
from budget.inputs.supplied import OMISSION
from budget.rig.components import build_inputs
from tests.paths import TEMPLATES

GAUGE = TEMPLATES / STARTERS["gauge"]
SWEEP = TEMPLATES / STARTERS["sweep"]


def _edited(tmp_path, template, pattern, replacement, name="rig.toml"):
    text = re.sub(pattern, replacement, template.read_text(encoding="utf-8"), count=1, flags=re.M)
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("kind", sorted(STARTERS))
def test_the_starters_state_every_value(kind):
    """The starter files give every value that changes a budget: nothing is supplied by the tool."""
    rig = load_rig(TEMPLATES / STARTERS[kind])
    assert rig.assumptions == ()
    assert rig.input_warnings == ()


def test_a_rig_without_its_tilt_says_so_in_check_and_in_the_json(tmp_path, capsys):
    path = _edited(tmp_path, GAUGE, r"^tilt_bound_deg = .*$", "")
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "geometry.tilt_bound_deg = 'not given': optimistic omission" in out
    assert main(["run", str(path), "--json", "--trials", "2000", "--seed", "1", "--quiet"]) == 0
    doc = json.loads(capsys.readouterr().out)
    found = [a for a in doc["assumptions"] if a["field"] == "geometry.tilt_bound_deg"]
    assert found and found[0]["value"] == "not given" and found[0]["reason"].startswith(OMISSION)
    assert set(found[0]) == {"field", "value", "reason"}
    assert any("No camera tilt is given" in w for w in doc["warnings"])


@pytest.mark.parametrize(("section", "key"), [("lens", "residual_rms_px"), ("target", "signal_e")])
def test_a_supplied_value_is_not_shown_under_the_users_source(tmp_path, section, key):
    """The term's source note says the value came from the tool, not from the section's own source."""
    rig = load_rig(_edited(tmp_path, GAUGE, rf"^{key} = .*$", ""))
    assert rig.assumed(f"{section}.{key}")
    inputs, _ = build_inputs(rig)
    stem = "resid_x_Z" if key == "residual_rms_px" else "noise_x_Z"
    assert f"{section}.{key} supplied by thetabudget" in inputs[stem].source


def test_a_dmm_without_its_specification_is_refused(tmp_path, capsys):
    path = _edited(tmp_path, SWEEP, r'^readback = "commanded".*$', 'readback = "dmm"')
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "'dmm_pct_reading'" in err[0] and "[source]" in err[0] and ">= 0" in err[0]


@pytest.mark.parametrize(("pattern", "value", "field", "slip"), [
    (r"^tilt_bound_deg = .*$", "tilt_bound_deg = 0.00873", "tilt_bound_deg", "radians"),   # 0.5° typed in rad
    (r"^pointer_radius_mm = .*$", "pointer_radius_mm = 2.5", "pointer_radius_mm", "cm"),  # hypothetical 25 mm gauge
    (r"^exposure_ms = .*$", "exposure_ms = 0.004", "exposure_ms", "seconds"),            # 4 ms typed in s
    (r"^signal_e = .*$", "signal_e = 40", "signal_e", "ke"),                              # 40 ke typed in ke
])
def test_a_likely_unit_slip_is_a_warning_in_check_and_run(tmp_path, capsys, pattern, value, field, slip):
    path = _edited(tmp_path, GAUGE, pattern, value)
    rig = load_rig(path)
    warned = [w for w in rig.input_warnings if f"'{field}'" in w]
    assert len(warned) == 1 and slip in warned[0] and "plausible range" in warned[0]
    if field == "tilt_bound_deg":  # shown by check and carried into the run's warnings (every report)
        assert main(["check", str(path)]) == 0
        assert warned[0] in capsys.readouterr().out
        assert main(["run", str(path), "--json", "--trials", "2000", "--seed", "1", "--quiet"]) == 0
        doc = json.loads(capsys.readouterr().out)
        assert warned[0] in json.dumps(doc, ensure_ascii=False)


def test_conditional_defaults_only_where_they_change_the_budget():
    """A static rig does not list the motion's timestamp or jitter; an uncorrected lens not its residual."""
    doc = {"camera": {"pixels_x": 1000, "pixels_y": 1000, "pitch_um": 5.0},
           "lens": {"focal_length_mm": 25.0, "distortion": "uncorrected"},
           "geometry": {"working_distance_mm": 400.0, "pointer_radius_mm": 20.0},
           "positions": {"angles_deg": [30.0, 60.0]}}
    names = {a.field for a in parse_rig(doc).assumptions}
    assert "motion.jitter_ms" not in names and "lens.residual_rms_px" not in names
    assert {"lens.distortion_edge_pct", "geometry.tilt_bound_deg", "target.signal_e", "pointer.repeatability_deg",
            "camera.prnu_pct", "geometry.mount_shift_um", "pivot.method"} <= names
