"""Every reader (rig TOML, choose TOML, costs TOML, cameras CSV, data CSV, images) takes a byte-order mark,
and refuses in one line, naming the file: bytes that are not UTF-8, absurd nesting (RecursionError in the
TOML parser), NUL bytes and oversized fields in a CSV, broken or oversized images, and files past their
size limits (the limit in the message). Common practice for input hardening; the promise of the README.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import budget.imaging.frames as frames_mod
import budget.inputs.cameras_csv as cameras_csv
import budget.inputs.data_csv as data_csv
import budget.inputs.schema as schema
from budget.errors import BudgetInputError
from tests.paths import TEMPLATES
from tests.promise import call, check_promise
from tests.workspace import frames_args, make_workspace

RUN = ["--trials", "2000", "--seed", "1", "--quiet"]


@pytest.fixture()
def ws(tmp_path) -> dict[str, Path]:
    return make_workspace(tmp_path)


def _refused(argv, folder: Path, *says: str) -> None:
    o = call(argv, folder)
    check_promise(o)
    assert o.code == 2, o.err
    for s in says:
        assert s in o.err, o.err


# ------------------------------------------------------------------ TOML: rig, choose, costs
@pytest.mark.parametrize("name", ["gauge_static.toml", "choose_cameras.toml"])
def test_a_toml_file_with_a_byte_order_mark_is_read(tmp_path, name):
    (tmp_path / "cameras.csv").write_bytes(b"\xef\xbb\xbf" + (TEMPLATES / "cameras.csv").read_bytes())
    f = tmp_path / name
    f.write_bytes(b"\xef\xbb\xbf" + (TEMPLATES / name).read_bytes())
    o = call(["check", f], tmp_path)
    check_promise(o)
    assert o.code == 0, o.err


@pytest.mark.parametrize("content, says", [
    (b"title = \"caf\xe9\"\n", "not UTF-8 text (byte 12)"),
    (b"a = " + b"[" * 5000 + b"]" * 5000 + b"\n", "too deeply"),
    (b"x = {" + b"y = {" * 3000 + b"}" * 3001 + b"\n", "too deeply"),
    (b"[camera\n", "not valid TOML"),
    (b"\x00\x01\x02", "not valid TOML"),
], ids=["latin-1", "nested arrays", "nested tables", "broken", "binary"])
def test_a_bad_toml_file_is_one_line(tmp_path, content, says):
    f = tmp_path / "in.toml"
    f.write_bytes(content)
    for argv in (["check", f], ["run", f, *RUN], ["choose", f], ["predict", f, "--angle", "10"],
                 ["verify-locator", f], ["render", f, tmp_path / "shots"], ["advise", f]):
        _refused(argv, tmp_path, "in.toml", says)


def test_a_costs_file_is_read_as_strictly(tmp_path):
    costs = tmp_path / "costs.toml"
    costs.write_bytes(b"a = " + b"[" * 5000 + b"]" * 5000)
    _refused(["advise", TEMPLATES / "gauge_static.toml", "--costs", costs], tmp_path, "costs file", "too deeply")


def test_an_oversized_or_missing_toml_file_is_one_line(tmp_path, monkeypatch):
    f = tmp_path / "big.toml"
    f.write_text("title = 'x'\n" + "# padding\n" * 200, encoding="utf-8")
    monkeypatch.setattr(schema, "MAX_INPUT_BYTES", 1000)
    _refused(["check", f], tmp_path, "at most 1,000")
    _refused(["check", tmp_path / "none.toml"], tmp_path, "does not exist")
    _refused(["check", tmp_path], tmp_path, "is a folder")


def test_a_nul_in_a_path_is_one_line(tmp_path):
    _refused(["check", "rig\x00.toml"], tmp_path, "cannot be read")
    _refused(["run", TEMPLATES / "gauge_static.toml", "--md", "b\x00.md"], tmp_path, "NUL")


# ------------------------------------------------------------------ cameras CSV
@pytest.mark.parametrize("edit, says", [
    (lambda b: b.replace(b"demo-cam", b"demo\xff-cam", 1), "not UTF-8"),
    (lambda b: b.replace(b"demo-cam", b"demo\x00-cam", 1), "control characters"),
    (lambda b: b.replace(b"demo-cam", b'"' + b"x" * 200_000 + b'"', 1), "not a readable CSV"),
    (lambda b: b.decode().encode("utf-16"), "not UTF-8"),
], ids=["latin-1", "NUL", "huge field", "UTF-16"])
def test_a_bad_cameras_file_is_one_line(ws, tmp_path, edit, says):
    ws["cameras"].write_bytes(edit(ws["cameras"].read_bytes()))
    _refused(["choose", ws["choose"]], tmp_path, "cameras.csv", says)
    _refused(["check", ws["choose"]], tmp_path, "cameras.csv", says)


def test_the_cameras_file_has_a_row_limit(ws, tmp_path, monkeypatch):
    monkeypatch.setattr(cameras_csv, "MAX_CAMERAS", 3)
    _refused(["choose", ws["choose"]], tmp_path, "more than 3 cameras")


def test_a_cameras_file_with_a_byte_order_mark_is_read(ws, tmp_path):
    ws["cameras"].write_bytes(b"\xef\xbb\xbf" + ws["cameras"].read_bytes())
    assert call(["choose", ws["choose"]], tmp_path).code == 0


# ------------------------------------------------------------------ data CSV
def test_a_data_file_with_a_byte_order_mark_is_read(ws, tmp_path):
    ws["data"].write_bytes(b"\xef\xbb\xbf" + ws["data"].read_bytes())
    o = call(["run", ws["rig"], *RUN, "--json"], tmp_path)
    check_promise(o)
    assert o.code == 0, o.err


@pytest.mark.parametrize("edit, says", [
    (lambda b: b.replace(b"Z,1,", b"Z\xe9,1,", 1), "not UTF-8 text"),
    (lambda b: b.replace(b"Z,1,", b"Z\x00,1,", 1), "control characters"),
    (lambda b: b.replace(b"Z,1,", b'"' + b"Z" * 200_000 + b'",1,', 1), "not a readable CSV"),
    (lambda b: b.replace(b"Z,1,", b"Z\x1b,1,", 1), "control characters"),
    (lambda b: b.decode().encode("utf-16"), "not UTF-8 text"),
    (lambda b: b"", "lacks the column"),
    (lambda b: b.replace(b",2,", b",1e999,", 1), "must be finite"),
], ids=["latin-1", "NUL", "huge field", "ESC", "UTF-16", "empty", "infinite"])
def test_a_bad_data_file_is_one_line(ws, tmp_path, edit, says):
    ws["data"].write_bytes(edit(ws["data"].read_bytes()))
    for argv in (["run", ws["rig"], *RUN], ["check", ws["rig"]]):
        _refused(argv, tmp_path, "positions.csv", says)


def test_the_data_file_has_row_and_size_limits(ws, tmp_path, monkeypatch):
    monkeypatch.setattr(data_csv, "MAX_DATA_ROWS", 10)
    _refused(["run", ws["rig"], *RUN], tmp_path, "more than 10 rows")
    monkeypatch.setattr(data_csv, "MAX_DATA_BYTES", 100)
    _refused(["run", ws["rig"], *RUN], tmp_path, "at most 100 are read")


def test_many_frames_of_one_position_are_read(tmp_path):
    """A duplicate-frame check that compared each row with every earlier one took minutes here;
    the reader's time against the number of frames is measured by benchmarks/bench_render.py."""
    f = tmp_path / "d.csv"
    rows = "\n".join(f"Z,{k},1.0,2.0" for k in range(1, 20_001))
    f.write_text("position,frame,x_px,y_px\n" + rows + "\nZ,7,1.0,2.0\n", encoding="utf-8")
    with pytest.raises(BudgetInputError, match="frame"):
        data_csv.read_positions_csv(f)          # the duplicate at the end is still found
    f.write_text("position,frame,x_px,y_px\n" + rows + "\n", encoding="utf-8")
    points, _ = data_csv.read_positions_csv(f)
    assert points["Z"].shape == (20_000, 2)


# ------------------------------------------------------------------ images
@pytest.mark.parametrize("content, says", [
    (b"not a png", "readable image"),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00", "readable image"),
    (b"II*\x00garbage", "readable image"),
], ids=["text", "truncated png", "garbage tiff"])
def test_a_broken_image_is_one_line_without_library_chatter(ws, tmp_path, content, says):
    bad = ws["frames_Z"][1].with_suffix(".tif" if content.startswith(b"II") else ".png")
    bad.write_bytes(content)
    argv = ["frames", "--window", "9", "--position", "Z", *map(str, ws["frames_Z"][:1]), bad,
            *map(str, ws["frames_Z"][2:])]
    _refused(argv, tmp_path, bad.name, says)


def test_an_oversized_image_is_refused_from_its_header(ws, tmp_path, monkeypatch):
    monkeypatch.setattr(frames_mod, "MAX_IMAGE_PIXELS", 100)
    _refused(["frames", *frames_args(ws)], tmp_path, "at most 100 pixels")
    monkeypatch.setattr(frames_mod, "MAX_IMAGE_PIXELS", 10**8)
    monkeypatch.setattr(frames_mod, "MAX_STACK_PIXELS", 2000)
    _refused(["frames", *frames_args(ws)], tmp_path, "at most 2,000 pixels in all")


def test_a_colour_or_mixed_depth_frame_is_refused(ws, tmp_path):
    from PIL import Image

    colour = tmp_path / "colour.png"
    Image.fromarray(np.zeros((32, 32, 3), np.uint8)).save(colour)
    eight = tmp_path / "eight.png"
    Image.fromarray((np.asarray(Image.open(ws["frames_Z"][0])) // 256).astype(np.uint8)).save(eight)
    z = list(map(str, ws["frames_Z"]))
    _refused(["frames", "--window", "9", "--position", "Z", *z[:3], colour], tmp_path, "grayscale")
    _refused(["frames", "--window", "9", "--position", "Z", *z[:3], eight], tmp_path, "mixed size or bit depth")
    p1 = list(map(str, ws["frames_P1"]))
    for k in range(4):  # a whole position at another depth
        Image.fromarray((np.asarray(Image.open(p1[k])) // 16).astype(np.uint8)).save(tmp_path / f"p{k}.png")
    _refused(["frames", "--window", "9", "--position", "Z", *z, "--position", "P1",
              *(str(tmp_path / f"p{k}.png") for k in range(4))], tmp_path, "mixed size or bit depth")
