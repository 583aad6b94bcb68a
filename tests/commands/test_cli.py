"""The thetabudget command, in process: exit codes, the JSON contract, templates, errors."""

from __future__ import annotations

import contextlib
import csv
import io
import json
import math

import numpy as np
import pytest

from budget import __version__
from budget.cli import main
from budget.commands.new import STARTERS
from budget.inputs.rig_file import load_rig
from budget.rig.description import point_labels
from budget.rig.geometry import nominal_image_points
from tests.paths import TEMPLATES as TEMPLATE_DIR

RUN = ("--trials", "20000", "--seed", "1")


def _reject_constant(name: str):
    raise ValueError(f"non-standard JSON constant {name}")


def strict_json(text: str) -> dict:
    """json.loads that refuses NaN, Infinity and -Infinity (RFC 8259 has none of them)."""
    return json.loads(text, parse_constant=_reject_constant)


def run_cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def json_runs(tmp_path_factory):
    """`run --json` of every rig template (20 000 trials, seed 1), each run once."""
    out = {}  # capsys is function-scoped, so capture by hand
    for kind, name in STARTERS.items():
        buf, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(err):
            code = main(["run", str(TEMPLATE_DIR / name), *RUN, "--json"])
        out[kind] = (code, buf.getvalue(), err.getvalue())
    return out


# ---------------------------------------------------------------- the JSON contract
def _is_num(x) -> bool:
    return isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x)


def _check_linear(block: dict, s: str) -> None:
    for key in (f"estimate{s}", f"u{s}", "k", f"U{s}"):
        assert _is_num(block[key]), key
    assert block["nu_eff"] is None or (_is_num(block["nu_eff"]) and block["nu_eff"] > 0)
    assert block[f"U{s}"] == pytest.approx(block["k"] * block[f"u{s}"], rel=1e-12)


def _check_mc(block: dict, s: str) -> None:
    assert _is_num(block[f"estimate{s}"]) and _is_num(block[f"u{s}"])
    for key in (f"interval{s}", f"shortest{s}"):
        lo, hi = block[key]
        assert _is_num(lo) and _is_num(hi) and lo < hi
    assert isinstance(block["trials"], int) and block["trials"] == 20000


def _check_components(rows: list, key: str) -> None:
    assert rows
    for c in rows:
        assert isinstance(c["name"], str) and _is_num(c[key]) and _is_num(c["percent"])


def check_contract(doc: dict, sweep: bool) -> None:
    """The documented JSON contract (README): keys, kinds and finite numbers."""
    assert doc["tool"] == {"name": "thetabudget", "version": __version__}
    assert isinstance(doc["input"]["path"], str) and len(doc["input"]["sha256"]) == 64
    assert doc["mode"] in ("design", "evaluation") and isinstance(doc["input"]["data"], list)
    assert (doc["mode"] == "design") == (doc["input"]["data"] == [] and doc["measured_data"] is None)
    assert doc["seed"] == 1 and doc["p"] == 0.95
    assert isinstance(doc["warnings"], list) and all(isinstance(w, str) for w in doc["warnings"])
    assert doc["angles"]
    for a in doc["angles"]:
        assert a["position"].startswith("P") and _is_num(a["nominal_deg"])
        _check_linear(a["linear"], "_deg")
        _check_mc(a["monte_carlo"], "_deg")
        assert isinstance(a["validated"], bool)
        _check_components(a["components"], "u_deg")
    if not sweep:
        assert "gain" not in doc
        return
    g = doc["gain"]
    assert g["unit"] == "deg/V"
    _check_linear(g["linear"], "")
    _check_mc(g["monte_carlo"], "")
    assert isinstance(g["validated"], bool)
    _check_components(g["components"], "u")
    assert _is_num(g["intercept"]["estimate_deg"]) and _is_num(g["intercept"]["u_deg"])
    assert -1 <= g["correlation_slope_intercept"] <= 1
    assert _is_num(g["nonlinearity_percent_span"])
    assert g["chi2"] is None or _is_num(g["chi2"])  # design mode: nothing measured, null
    assert g["dof"] == len(doc["angles"]) - 2
    assert g["lack_of_fit"] is None or {"chi2", "dof", "p_value", "significant"} <= set(g["lack_of_fit"])


@pytest.mark.parametrize("kind", sorted(STARTERS))
def test_every_template_runs_and_matches_the_contract(json_runs, kind):
    code, out, err = json_runs[kind]
    assert code == 0, err
    doc = strict_json(out)  # stdout is only JSON, and strict JSON
    check_contract(doc, sweep=(kind in ("sweep", "bench")))
    assert doc["input"]["path"] == STARTERS[kind]


def test_strict_json_rejects_nan_and_infinity():
    """The checker itself: Python's json writes NaN/Infinity unless told not to."""
    for bad in ('{"a": NaN}', '{"a": Infinity}', '{"a": -Infinity}'):
        with pytest.raises(ValueError):
            strict_json(bad)


def test_same_seed_gives_identical_numbers(json_runs, capsys):
    code, out, _ = run_cli(capsys, "run", str(TEMPLATE_DIR / STARTERS["gauge"]), *RUN, "--json")
    assert code == 0
    first, second = strict_json(json_runs["gauge"][1]), strict_json(out)
    first.pop("created"), second.pop("created")  # the wall-clock time of the run
    assert first == second


def test_other_seed_gives_other_monte_carlo(json_runs, capsys):
    code, out, _ = run_cli(capsys, "run", str(TEMPLATE_DIR / STARTERS["gauge"]), "--trials", "20000",
                           "--seed", "2", "--json")
    assert code == 0
    a, b = strict_json(json_runs["gauge"][1]), strict_json(out)
    assert a["angles"][0]["linear"] == b["angles"][0]["linear"]
    assert a["angles"][0]["monte_carlo"]["u_deg"] != b["angles"][0]["monte_carlo"]["u_deg"]


def test_console_report(capsys):
    code, out, err = run_cli(capsys, "run", str(TEMPLATE_DIR / STARTERS["gauge"]), *RUN)
    assert code == 0, err
    assert "JCGM 100" in out and "JCGM 101" in out and "seed 1" in out


# ---------------------------------------------------------------- other sub-commands
@pytest.mark.parametrize("kind", sorted(STARTERS))
def test_check_templates(capsys, kind):
    code, out, err = run_cli(capsys, "check", str(TEMPLATE_DIR / STARTERS[kind]))
    assert code == 0, err
    assert "valid" in out and "input quantities" in out


@pytest.mark.parametrize("kind", sorted(STARTERS))
def test_new_writes_a_file_check_accepts(tmp_path, capsys, kind):
    path = tmp_path / f"{kind}.toml"
    code, _, err = run_cli(capsys, "new", kind, str(path))
    assert code == 0, err
    assert path.read_text(encoding="utf-8") == (TEMPLATE_DIR / STARTERS[kind]).read_text(encoding="utf-8")
    code, out, err = run_cli(capsys, "check", str(path))
    assert code == 0, err


def test_new_refuses_to_overwrite(tmp_path, capsys):
    path = tmp_path / "mine.toml"
    path.write_text("# my own notes\n", encoding="utf-8")
    code, out, err = run_cli(capsys, "new", "gauge", str(path))
    assert code == 2
    assert path.read_text(encoding="utf-8") == "# my own notes\n"
    assert len(err.strip().splitlines()) == 1 and "exists" in err


def test_bad_input_exits_2_with_one_line(tmp_path, capsys):
    text = (TEMPLATE_DIR / STARTERS["gauge"]).read_text(encoding="utf-8")
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace("pitch_um = 3.45", "pitch_mu = 3.45"), encoding="utf-8")
    md = tmp_path / "out.md"
    for cmd in (["run", str(bad), *RUN, "--md", str(md)], ["check", str(bad)]):
        code, out, err = run_cli(capsys, *cmd)
        assert code == 2
        lines = err.strip().splitlines()
        assert len(lines) == 1 and "pitch_mu" in lines[0] and "[camera]" in lines[0] and "pitch_um" in lines[0]
        assert out == ""
    assert not md.exists()  # nothing written


def test_missing_file_exits_2(tmp_path, capsys):
    code, out, err = run_cli(capsys, "run", str(tmp_path / "none.toml"))
    assert code == 2 and len(err.strip().splitlines()) == 1


def test_bad_option_exits_2(capsys):
    code, _, err = run_cli(capsys, "run", str(TEMPLATE_DIR / STARTERS["gauge"]), "--trials", "0")
    assert code == 2 and "trials" in err


def test_selftest(capsys):
    code, out, err = run_cli(capsys, "selftest")
    assert code == 0, out + err
    assert "0 failed" in out


def test_version(capsys):
    code, out, _ = run_cli(capsys, "--version")
    assert code == 0 and out.strip() == f"thetabudget {__version__}"


# ---------------------------------------------------------------- evaluation mode through the CLI
def test_run_in_evaluation_mode(tmp_path, capsys):
    """A gauge rig with measured positions (invented: nominal points plus 0.02 px scatter,
    5 frames each) runs, its JSON shows Type A noise rows with finite dof, and `check`
    lists the t inputs with n − 1 = 4 dof."""
    src = (TEMPLATE_DIR / STARTERS["gauge"]).read_text(encoding="utf-8")
    rig_path = tmp_path / "measured.toml"
    rig_path.write_text(src + '\n[data]\nreadings_csv = "positions.csv"\n', encoding="utf-8")
    design = load_rig(TEMPLATE_DIR / STARTERS["gauge"])
    x, y = nominal_image_points(design)
    rng = np.random.default_rng(8)
    with open(tmp_path / "positions.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["position", "frame", "x_px", "y_px"])
        for j, lab in enumerate(point_labels(design)):
            for k in range(5):
                w.writerow([lab, k + 1, x[j] + rng.normal(loc=0.0, scale=0.02), y[j] + rng.normal(loc=0.0, scale=0.02)])
    code, out, err = run_cli(capsys, "run", str(rig_path), *RUN, "--json")
    assert code == 0, err
    doc = strict_json(out)
    check_contract(doc, sweep=False)
    for a in doc["angles"]:
        noise = next(c for c in a["components"] if c["name"] == "centroid noise")
        # a component pools several t inputs of 4 dof: Welch–Satterthwaite gives at least 4
        assert noise["type"] == "A" and noise["dof"] is not None and noise["dof"] >= 4
    code, out, err = run_cli(capsys, "check", str(rig_path))
    assert code == 0, err
    assert "4 dof" in out and "repeated frames, n = 5" in out


# ---------------------------------------------------------------- options checked before any work
@pytest.mark.parametrize("cmd", [
    ["run", str(TEMPLATE_DIR / STARTERS["gauge"]), "--quiet"],
    ["predict", str(TEMPLATE_DIR / STARTERS["sweep"]), "--angle", "10"],
    ["verify-locator", str(TEMPLATE_DIR / STARTERS["gauge"])],
])
def test_negative_seed_is_an_option_error(capsys, cmd):
    """numpy's SeedSequence takes non-negative integers only [numpy documentation]: a negative
    --seed is bad input (exit 2, the option named), not a traceback."""
    code, out, err = run_cli(capsys, *cmd, "--seed", "-1")
    assert code == 2 and out == ""
    assert "--seed" in err.strip().splitlines()[-1] and ">= 0" in err


@pytest.mark.parametrize("option, value", [
    ("--angle", "nan"), ("--angle", "inf"), ("--angle", "1e308"), ("--angle", "360"),
    ("--volts", "nan"), ("--volts", "-inf"), ("--volts", "1e300"), ("--volts", "10.5"),
])
def test_predict_refuses_values_outside_the_range(capsys, option, value):
    """--angle is an angle in (-360, 360) as in [positions]; --volts must be a voltage the
    template's source can give (bipolar, span 20 V: [-10, 10] V) [derived from the template].
    Refused with exit 2 before the budget runs, no traceback, the option named."""
    code, out, err = run_cli(capsys, "predict", str(TEMPLATE_DIR / STARTERS["sweep"]), option, value,
                             "--seed", "1")
    assert code == 2 and out == ""
    last = err.strip().splitlines()[-1]
    assert option in last, err
