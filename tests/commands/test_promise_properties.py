"""Property-based tests of the README's promise (Hypothesis): random arguments to every sub-command, and
random and mutated rig files, choose files, camera lists, data files and frames, run in process.

For every call: the exit status is 0, 1 or 2; a refusal (2) is one line on stderr and writes nothing; no
traceback and no internal error; no temporary file is left; no existing file is replaced without
``--force`` and an input never; a written workbook opens and has no formula made from input text, and a
written CSV has no cell that a spreadsheet would run.

The tests are repeatable: ``derandomize=True`` fixes the examples (a seed derived from each test), and no
example database is read or written.

Source of the expectations: the README's section "What the tool promises" (the project's own
contract, not an outside reference); the one outside reference is the spreadsheet formula rule
(a cell whose text starts with =, +, -, @, tab or CR is run as a formula: common practice, from memory).
A failure found here becomes an ``@example`` beside its test (see
``test_mutated_rig_files_keep_the_promise``). Example counts keep the file to about a minute on 2 cores.
"""

from __future__ import annotations

import copy
import itertools
import json
import os
import re
import shutil
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, event, example, given, settings
from hypothesis import strategies as st

from budget.inputs.toml_text import dumps_toml
from tests.paths import TEMPLATES
from tests.promise import call, check_promise
from tests.workspace import make_workspace

PROFILE = dict(derandomize=True, database=None, deadline=None, print_blob=True,
               suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                      HealthCheck.data_too_large])
INPUTS = ("rig.toml", "positions.csv", "bench.toml", "choose.toml", "cameras.csv", "frames/Z_01.png",
          "frames/Z_02.png", "frames/Z_03.png", "frames/Z_04.png", "frames/P1_01.png", "frames/P1_02.png",
          "frames/P1_03.png", "frames/P1_04.png", "tiny.toml")
_counter = itertools.count()


@pytest.fixture(scope="module")
def base(tmp_path_factory) -> Path:
    """One workspace of inputs per module (never changed: every call checks that), and a tiny rig to render."""
    folder = tmp_path_factory.mktemp("promise")
    make_workspace(folder)
    doc = tomllib.loads((TEMPLATES / "bench_sweep.toml").read_text(encoding="utf-8"))
    doc["camera"].update(pixels_x=200, pixels_y=150, pitch_um=19.2)
    (folder / "tiny.toml").write_text(dumps_toml(doc), encoding="utf-8")
    return folder


def _scratch(base: Path) -> Path:
    """A fresh folder for one example's outputs, with an existing file, a folder and a dangling link."""
    d = base / f"ex{next(_counter)}"
    d.mkdir()
    (d / "exists.md").write_text("keep me", encoding="utf-8")
    (d / "folder").mkdir()
    (d / "dangling.md").symlink_to(d / "nowhere")
    return d


def _promise(argv: list, base: Path, scratch: Path):
    """Call in the example's own folder (a relative path lands there) and check the promise."""
    here = os.getcwd()
    os.chdir(scratch)
    try:
        o = call(argv, base)
    finally:
        os.chdir(here)
    event(f"{argv[0]} exit {o.code}")
    check_promise(o, inputs=INPUTS)
    shutil.rmtree(scratch)
    return o


# ------------------------------------------------------------------ random arguments
IN = {"rig": "rig.toml", "bench": "bench.toml", "tiny": "tiny.toml", "choose": "choose.toml",
      "cameras": "cameras.csv", "data": "positions.csv", "frame": "frames/Z_01.png", "missing": "none.toml",
      "folder": "frames", **{f"Z{k}": f"frames/Z_0{k + 1}.png" for k in range(4)}}
OUT = ["new.md", "new.csv", "new.xlsx", "new.toml", "plots", "exists.md", "folder", "dangling.md", "no/such/x.md"]
VALUES = ["2000", "0", "-1", "1e3", "x", "nan", "inf", "-inf", "1" + "0" * 20, "0.95", "1.5", "30", "-30", "400",
          "9", "4", "3", "com", "gauss", "Z", "P1", "=1+2", "10,10,8,8", "0,0,2,2", "é\u202e", ""]
OPTIONS = ["--trials", "--seed", "--p", "--json", "--quiet", "--force", "--xlsx", "--md", "--csv", "--plots",
           "--angle", "--volts", "--renders", "--frames", "--window", "--method", "--roi", "--out", "--position",
           "--rig-out", "--all", "--verify", "--costs", "--help"]
NEEDS_VALUE = {"--trials", "--seed", "--p", "--angle", "--volts", "--renders", "--frames", "--window", "--method",
               "--roi"}
NEEDS_PATH = {"--xlsx", "--md", "--csv", "--plots", "--out", "--rig-out", "--costs"}


VALID = {
    "run": [("in", "rig"), "--trials", "2000", "--seed", "1", "--quiet", "--md", ("out", "new.md")],
    "check": [("in", "rig")],
    "new": ["gauge", ("out", "new.toml")],
    "selftest": [],
    "predict": [("in", "bench"), "--angle", "30", "--trials", "2000", "--seed", "1"],
    "choose": [("in", "choose"), "--xlsx", ("out", "new.xlsx")],
    "verify-locator": [("in", "bench"), "--renders", "60", "--seed", "1"],
    "frames": ["--window", "9", "--out", ("out", "new.csv"), "--position", "Z", *[("in", f"Z{k}") for k in range(4)]],
    "render": [("in", "tiny"), ("out", "shots"), "--frames", "4", "--seed", "1"],
    "advise": [("in", "bench"), "--trials", "2000", "--seed", "1"],
}
"""A call of each sub-command that succeeds (advise: refused at once, the bench rig has no [goal])."""


@st.composite
def arguments(draw) -> list:
    """A valid call of a sub-command with 0 to 3 random changes (paths symbolic until materialized)."""
    command = draw(st.sampled_from(sorted(VALID)))
    argv: list = [command, *VALID[command]]
    for _ in range(draw(st.sampled_from([0, 0, 1, 1, 2, 3]))):
        kind = draw(st.sampled_from(["add", "add", "replace", "delete"]))
        if kind == "delete" and len(argv) > 1:
            del argv[draw(st.integers(1, len(argv) - 1))]
        elif kind == "replace" and len(argv) > 1:
            i = draw(st.integers(1, len(argv) - 1))
            argv[i] = draw(st.one_of(st.sampled_from(VALUES), st.sampled_from([("in", k) for k in IN]),
                                     st.sampled_from([("out", k) for k in OUT])))
        else:
            opt = draw(st.sampled_from(OPTIONS))
            if opt in NEEDS_PATH:
                argv += [opt, draw(st.sampled_from([("out", k) for k in OUT] + [("in", k) for k in IN]))]
            elif opt == "--position":
                argv += ["--position", draw(st.sampled_from(["Z", "P1", "=X", "P1,2"]))]
                argv += [("in", draw(st.sampled_from(["frame", "missing", "data", "Z1"])))
                         for _ in range(draw(st.integers(0, 5)))]
            elif opt in NEEDS_VALUE:
                argv += [opt, draw(st.sampled_from(VALUES))]
            else:
                argv.append(opt)
    if command in ("run", "predict", "advise", "choose") and "--trials" in argv:
        i = argv.index("--trials")  # keep each call short: a valid but large count only makes it slow
        if i + 1 < len(argv) and argv[i + 1] == "1e3":
            argv[i + 1] = "2000"
    if command == "render":
        argv = [("in", "tiny") if isinstance(a, tuple) and a[0] == "in" and a[1] in ("rig", "bench") else a
                for a in argv]
    return argv


def _materialize(argv: list, base: Path, scratch: Path) -> list[str]:
    out = []
    for a in argv:
        if isinstance(a, tuple):
            out.append(str(base / IN[a[1]]) if a[0] == "in" else str(scratch / a[1]))
        else:
            out.append(a)
    for opt, most in (("--frames", 4), ("--trials", 5000), ("--renders", 200)):
        if opt in out and out.index(opt) + 1 < len(out) and out[out.index(opt) + 1].isdigit() \
                and int(out[out.index(opt) + 1]) > most and int(out[out.index(opt) + 1]) < 10 ** 7:
            out[out.index(opt) + 1] = str(most)  # valid but slow: the limits themselves are tested elsewhere
    return out


@settings(max_examples=120, **PROFILE)
@given(argv=arguments())
def test_random_arguments_keep_the_promise(base, argv):
    scratch = _scratch(base)
    _promise(_materialize(argv, base, scratch), base, scratch)


# ------------------------------------------------------------------ mutated rig files
TEMPLATE_DOCS = {name: tomllib.loads((TEMPLATES / name).read_text(encoding="utf-8"))
                 for name in ("gauge_static.toml", "gain_sweep.toml", "moving_pointer.toml", "bench_sweep.toml")}
TEXTS = st.sampled_from(["", "=1+2", "+A1", "-2", "@SUM(1)", "\t=x", "a\r=HYPERLINK(\"x\")", "line\nbreak",
                         "x" * 5000, "é", "\u202e", "[l](javascript:x)", "<b>", "|", "clockwise", "readings",
                         "spot", "global", "rolling", "mark", "arc", "fit", "integer", "moving", "static",
                         "positions.csv", "bipolar", "dmm", "simple", "guarded", "table", "linear", "\x1b[2J"])
NUMBERS = st.one_of(st.floats(allow_nan=False, allow_infinity=False, width=64),
                    st.sampled_from([0, 1, -1, 0.5, 2, 3, 4, 16, 255, 1e-9, 1e9, 1e300, -1e300, 89.99, 90, 359.9]),
                    st.integers(min_value=-(2 ** 63), max_value=2 ** 63 - 1))
VALUES_TOML = st.one_of(NUMBERS, TEXTS, st.booleans(), st.lists(NUMBERS, max_size=6),
                        st.just([[1.0]]), st.just({"a": 1}), st.just(float("nan")), st.just(float("inf")))


@st.composite
def rig_documents(draw) -> dict:
    doc = copy.deepcopy(TEMPLATE_DOCS[draw(st.sampled_from(sorted(TEMPLATE_DOCS)))])
    for _ in range(draw(st.sampled_from([1, 1, 1, 2, 3]))):
        sections = sorted(k for k, v in doc.items() if isinstance(v, dict))
        kind = draw(st.sampled_from(["set", "set", "scale", "scale", "scale", "scale", "delete", "unknown",
                                     "section"]))
        sec = draw(st.sampled_from(sections))
        keys = sorted(doc[sec])
        if kind == "set" and keys:
            doc[sec][draw(st.sampled_from(keys))] = draw(VALUES_TOML)
        elif kind == "scale" and keys:
            key = draw(st.sampled_from(keys))
            f = 10 ** draw(st.one_of(st.floats(min_value=-4, max_value=4), st.floats(min_value=-0.5, max_value=0.5)))
            v = doc[sec][key]
            if isinstance(v, int | float) and not isinstance(v, bool):
                doc[sec][key] = type(v)(v * f) if isinstance(v, float) or abs(v * f) < 2 ** 62 else v
            elif isinstance(v, list) and all(isinstance(x, int | float) for x in v):
                doc[sec][key] = [x * f for x in v]
        elif kind == "delete":
            if keys and draw(st.booleans()):
                del doc[sec][draw(st.sampled_from(keys))]
            else:
                del doc[sec]
        elif kind == "unknown":
            doc[sec]["no_such_key"] = 1
        else:
            doc[draw(st.sampled_from(["goal", "reference", "data", "pivot", "range_claim", "conformity"]))] = {
                "angle_U_deg": 0.01, "p": 0.95, "readings_csv": "positions.csv", "method": "arc", "form": "table",
                "rule": "guarded", "angles_deg": [30.0], "U_deg": [0.01]}
    if draw(st.booleans()):
        doc["title"] = draw(TEXTS)
    return doc


def _toml_bytes(doc: dict, draw_bytes: bytes) -> bytes:
    """The document as TOML (a raw fallback where the writer refuses a value), sometimes damaged."""
    try:
        data = dumps_toml(doc).encode("utf-8")
    except Exception:  # NaN, tables in lists: written by hand, still something a user could type
        data = "\n".join(f"{k} = {v!r}" for k, v in doc.items()).encode("utf-8", "replace")
    if draw_bytes:
        kind, payload = draw_bytes[0] % 4, draw_bytes[1:]
        if kind == 1:
            data = b"\xef\xbb\xbf" + data
        elif kind == 2:
            data = data[: len(data) * (payload[0] if payload else 1) // 256]
        elif kind == 3:
            cut = len(data) // 2
            data = data[:cut] + payload + data[cut:]
    return data


@settings(max_examples=50, **PROFILE)
@given(doc=rig_documents(), damage=st.binary(max_size=8),
       command=st.sampled_from(["run", "run", "run", "check", "predict", "verify-locator", "advise"]))
@example(doc={**TEMPLATE_DOCS["bench_sweep.toml"],
              "sweep": {"set_points_v": [0.001, 0.003, 0.005, 0.007, 0.009], "nominal_gain_deg_per_v": 12.0}},
         damage=b"", command="run")  # an arc too short to find the pivot: once an engine message
def test_mutated_rig_files_keep_the_promise(base, doc, damage, command):
    scratch = _scratch(base)
    rig = scratch / "mutated.toml"
    rig.write_bytes(_toml_bytes(doc, damage))
    (scratch / "positions.csv").write_bytes((base / "positions.csv").read_bytes())
    argv = {"run": ["run", rig, "--trials", "2000", "--seed", "1", "--quiet", "--md", scratch / "b.md",
                    "--csv", scratch / "b.csv", "--xlsx", scratch / "b.xlsx"],
            "check": ["check", rig],
            "predict": ["predict", rig, "--angle", "30", "--trials", "2000", "--seed", "1"],
            "verify-locator": ["verify-locator", rig, "--renders", "60", "--seed", "1"],
            "advise": ["advise", rig, "--trials", "2000", "--seed", "1"]}[command]
    if command == "advise" and "goal" in doc:
        argv = ["check", rig]  # advise runs many full budgets: a few seconds each
    _promise(argv, base, scratch)


# ------------------------------------------------------------------ mutated data files, camera lists, frames
def _mutate_text(data: bytes, ops: list[tuple[int, int, bytes]]) -> bytes:
    """Insert, delete or overwrite bytes, repeat rows, or nudge one number (kind 4: a valid file, mostly)."""
    for where, kind, payload in ops:
        i = where % (len(data) + 1)
        if kind == 5:  # one line's first cell (CSV) or value (TOML) becomes the payload, as text
            lines = data.split(b"\n")
            k = where % len(lines)
            text = payload.decode("utf-8", "replace")
            if b" = " in lines[k]:
                lines[k] = lines[k].split(b" = ")[0] + b" = " + json.dumps(text).encode()
            elif b"," in lines[k]:
                lines[k] = b'"' + text.replace('"', '""').encode() + b'"' + lines[k][lines[k].index(b","):]
            data = b"\n".join(lines)
        elif kind == 4:
            numbers = list(re.finditer(rb"-?\d+\.\d+", data))
            if numbers:
                m = numbers[where % len(numbers)]
                nudged = float(m.group()) * (1 + (len(payload) % 7 - 3) * 1e-4)
                data = data[:m.start()] + repr(nudged).encode() + data[m.end():]
        elif kind == 0:
            data = data[:i] + payload + data[i:]
        elif kind == 1:
            data = data[:i] + data[i + len(payload) + 1:]
        elif kind == 2:
            data = data[:i] + payload + data[i + len(payload):]
        else:
            lines = data.split(b"\n")
            data = b"\n".join(lines + lines[1 + where % max(1, len(lines) - 1):][:3])
    return data


CELLS = st.sampled_from([b"", b",", b"\n", b"\r", b"\"", b"nan", b"inf", b"-1e308", b"1e999", b"=1+2", b"\x00",
                         b"@SUM(A1)", b"-cam", b"+cam", b"cam\r=2+3", b"=HYPERLINK(\"http://x.invalid\")",
                         b"\xff\xfe", b"\xef\xbb\xbf", b"Z", b"P9", b"C1", b"M", b"0", b"1.5", b"x" * 300])
FORMULAS = st.sampled_from([b"=1+2", b"+cam", b"-cam", b"@SUM(A1)", b"cam\r=2+3", b"\tcam",
                            b"=HYPERLINK(\"http://x.invalid\")", b"\xef\xbc\x9d1", b"plain cam"])
OPS = st.lists(st.tuples(st.integers(0, 10 ** 6), st.sampled_from([0, 1, 2, 3, 4, 4, 5, 5]), CELLS), min_size=1,
               max_size=2)


@settings(max_examples=60, **PROFILE)
@given(ops=OPS, which=st.sampled_from(["data", "cameras", "choose"]), force=st.booleans(),
       out=st.sampled_from(["exists.md", "new.out"]), line=st.integers(0, 40), text=FORMULAS)
def test_mutated_data_and_camera_files_keep_the_promise(base, ops, which, force, out, line, text):
    """The file is damaged by ``ops``; a camera's name or a choose file's text value is also set to ``text``."""
    if which != "data":
        lines = (base / ("cameras.csv" if which == "cameras" else "choose.toml")).read_bytes().split(b"\n")
        rows = [i for i, r in enumerate(lines) if (r[:1].isalnum() and b"," in r if which == "cameras"
                                                   else b' = "' in r)][1 if which == "cameras" else 0:]
        ops = [(rows[line % len(rows)], 5, text), *ops]
    scratch = _scratch(base)
    for name in ("rig.toml", "positions.csv", "choose.toml", "cameras.csv"):
        (scratch / name).write_bytes((base / name).read_bytes())
    target = scratch / {"data": "positions.csv", "cameras": "cameras.csv", "choose": "choose.toml"}[which]
    target.write_bytes(_mutate_text(target.read_bytes(), ops))
    (scratch / "frames").symlink_to(base / "frames")
    extra = ["--force"] if force else []
    if which == "data":
        argv = ["run", scratch / "rig.toml", "--trials", "2000", "--seed", "1", "--quiet", "--csv",
                scratch / out, *extra]
    else:
        argv = ["choose", scratch / "choose.toml", "--xlsx", scratch / "c.xlsx", "--rig-out", scratch / out, *extra]
    o = _promise(argv, base, scratch)
    assert o.code in (0, 2)


@settings(max_examples=25, **PROFILE)
@given(ops=OPS, frame=st.integers(0, 3))
def test_mutated_frames_keep_the_promise(base, ops, frame):
    scratch = _scratch(base)
    frames = [scratch / f"Z_{k}.png" for k in range(4)]
    for k, f in enumerate(frames):
        f.write_bytes((base / f"frames/Z_0{k + 1}.png").read_bytes())
    frames[frame].write_bytes(_mutate_text(frames[frame].read_bytes(), ops))
    _promise(["frames", "--window", "9", "--out", scratch / "f.csv", "--position", "Z", *frames], base, scratch)
