"""In-process tests of the choose, verify-locator and frames sub-commands."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
import tifffile
from PIL import Image

from budget.cli import main
from budget.imaging.render import expected_electrons
from budget.inputs.data_csv import read_positions_csv
from tests.paths import TEMPLATES

CHOOSE = str(TEMPLATES / "choose_cameras.toml")


# ------------------------------------------------------------------------------------------ choose


def test_choose_text_json_xlsx_and_plot(tmp_path, capsys):
    assert main(["choose", CHOOSE]) == 0
    out = capsys.readouterr().out
    assert "demo-cam-5MP-global" in out and "least pixels across the field" in out
    xlsx, plots = tmp_path / "choice.xlsx", tmp_path / "plots"
    assert main(["choose", CHOOSE, "--json", "--xlsx", str(xlsx), "--plots", str(plots)]) == 0
    doc = json.loads(capsys.readouterr().out)  # only JSON on stdout
    assert doc["ranking"][0]["meets"] and doc["meeting"] >= 1
    assert (plots / "choice_U_vs_pixels.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    from openpyxl import load_workbook

    book = load_workbook(xlsx)
    assert book["choice"].max_row == 2 + doc["candidates"]  # title, header row, one row per candidate
    # provenance, printing and recalculation as the budget workbook has them (issue 12)
    from budget.inputs.data_csv import sha256_of

    prov = [c.value for row in book["Provenance"].iter_rows() for c in row if c.value is not None]
    assert sha256_of(CHOOSE) in prov and "camera list SHA-256" in prov
    assert book.calculation.fullCalcOnLoad is True
    for ws in book.worksheets:  # one page wide, or (too many columns for 8 pt) full size with A:C repeated
        assert ws.page_setup.orientation == "landscape" and ws.print_title_rows
        fits = ws.sheet_properties.pageSetUpPr.fitToPage and ws.page_setup.fitToWidth == 1
        assert fits or (ws.page_setup.scale == 100 and ws.print_title_cols == "$A:$C"), ws.title
        assert sha256_of(CHOOSE) in ws.oddFooter.left.text and "&P" in ws.oddFooter.center.text
    # never replaced without --force; nothing written on refusal
    before = xlsx.stat().st_mtime_ns
    assert main(["choose", CHOOSE, "--xlsx", str(xlsx)]) == 2
    assert "exists" in capsys.readouterr().err and xlsx.stat().st_mtime_ns == before
    assert main(["choose", CHOOSE, "--xlsx", str(xlsx), "--force"]) == 0


def test_choose_bad_file_exits_2(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text((TEMPLATES / "choose_cameras.toml").read_text(encoding="utf-8")
                   .replace("dial_diameter_mm = 110", "dial_diamter_mm = 110")
                   .replace('"cameras.csv"', f'"{(TEMPLATES / "cameras.csv").as_posix()}"'), encoding="utf-8")
    assert main(["choose", str(bad), "--xlsx", str(tmp_path / "x.xlsx")]) == 2
    err = capsys.readouterr().err
    assert "Did you mean 'dial_diameter_mm'" in err and not (tmp_path / "x.xlsx").exists()


# ---------------------------------------------------------------------------------- verify-locator


def test_verify_locator_text_and_json(capsys):
    rig = str(TEMPLATES / "gauge_static.toml")
    assert main(["verify-locator", rig, "--renders", "300", "--seed", "4"]) == 0
    out = capsys.readouterr().out
    assert "seed 4" in out and "supported" in out
    assert main(["verify-locator", rig, "--renders", "300", "--seed", "4", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["seed"] == 4 and doc["renders"] == 300


# ------------------------------------------------------------------------------------------ frames


def _frames(tmp_path, kind: str, n: int = 6):
    """Noiseless spots at known centres, written as 8-bit PNG or 16-bit TIFF."""
    rng = np.random.default_rng(8)
    centres = np.column_stack([20.3 + rng.uniform(-0.3, 0.3, n), 14.6 + rng.uniform(-0.3, 0.3, n)])
    top = 250.0 if kind == "png" else 60000.0
    paths = []
    for k, c in enumerate(centres):
        img = expected_electrons(shape=(32, 40), centre_xy=c, sigma_px=1.2, signal_e=top * 2 * np.pi * 1.44 * 0.9,
                                 background_e=5.0)
        arr = np.rint(img)
        if kind == "png":
            p = tmp_path / f"f{k}.png"
            Image.fromarray(arr.astype(np.uint8), mode="L").save(p)
        else:
            p = tmp_path / f"f{k}.tif"
            tifffile.imwrite(p, arr.astype(np.uint16))
        paths.append(str(p))
    return paths, centres


@pytest.mark.parametrize("kind", ["png", "tif"])
def test_frames_round_trip_to_csv_and_centroids(tmp_path, capsys, kind):
    # [derived] centre of mass of a pixel-integrated Gaussian with sigma = 1.2 px in a 20 x 20 ROI: the
    # pixel-locking amplitude exp(-2 pi^2 1.44)/pi is 1e-13 px and the truncation at 8 sigma is
    # negligible; rounding to integer ADU leaves about 1e-3 px (8-bit) -- tolerance 0.01 px.
    paths, centres = _frames(tmp_path, kind)
    out = tmp_path / "pos.csv"
    assert main(["frames", "--roi", "10,5,20,20", "--position", "P2", *paths, "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "6 frames" in text and "drift" in text.lower()
    data, images = read_positions_csv(out)
    assert list(data) == ["P2"]
    np.testing.assert_allclose(data["P2"], centres, atol=0.01)
    # every row names its image (relative to the CSV) and that file's SHA-256
    assert [img for img, _ in images["P2"]] == [Path(p).name for p in paths]
    assert [sha for _, sha in images["P2"]] == [hashlib.sha256(Path(p).read_bytes()).hexdigest() for p in paths]
    assert main(["frames", "--roi", "10,5,20,20", "--position", "P2", *paths, "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)["positions"][0]
    assert doc["n"] == 6 and doc["mean_x_px"] == pytest.approx(centres[:, 0].mean(), abs=0.01)


def test_frames_many_positions_in_one_call_find_their_targets(tmp_path, capsys):
    """Two positions, no --roi: each position's target is found and a window centred on it."""
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    pa, ca = _frames(tmp_path / "a", "tif")
    pb, cb = _frames(tmp_path / "b", "tif")
    out = tmp_path / "pos.csv"
    assert main(["frames", "--window", "11", "--position", "Z", *pa, "--position", "P1", *pb,
                 "--out", str(out)]) == 0
    data, images = read_positions_csv(out)
    assert list(data) == ["Z", "P1"]
    np.testing.assert_allclose(data["Z"], ca, atol=0.01)
    np.testing.assert_allclose(data["P1"], cb, atol=0.01)
    assert images["P1"][0][0] == "b/f0.tif"


def test_frames_errors_exit_2_and_write_nothing(tmp_path, capsys):
    paths, _ = _frames(tmp_path, "png", n=4)
    out = tmp_path / "pos.csv"
    cases = [
        (["--roi", "10,5,20", "--position", "Z", *paths], "--roi"),
        (["--roi", "30,20,20,20", "--position", "Z", *paths], "roi"),
        (["--roi", "0,0,6,6", "--position", "Z", *paths], "no target found"),
        (["--position", "Z", *paths[:3]], "Position 'Z' has 3 frames"),
        (["--window", "8", "--position", "Z", *paths], "--window"),
        ([], "--position"),
    ]
    for extra, what in cases:
        assert main(["frames", *extra, "--out", str(out)]) == 2
        err = capsys.readouterr().err
        assert what in err and len(err.strip().splitlines()) == 1
        assert not out.exists()
    broken = tmp_path / "broken.png"
    broken.write_bytes(b"not an image")
    assert main(["frames", "--position", "P3", str(broken), *paths, "--roi", "10,5,20,20", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "broken.png" in err and "Position 'P3'" in err and not out.exists()
    assert main(["frames", "--position", "Z", str(tmp_path / "nope.png"), *paths, "--roi", "10,5,20,20"]) == 2
    assert "nope.png" in capsys.readouterr().err
    out.write_text("keep\n", encoding="utf-8")
    assert main(["frames", "--position", "Z", *paths, "--roi", "10,5,20,20", "--out", str(out)]) == 2
    assert out.read_text(encoding="utf-8") == "keep\n"


@pytest.mark.parametrize("label", ["=cmd|' /C calc'!A0", "+1", "-1", "@SUM(1)"])
def test_frames_refuses_a_formula_like_position(tmp_path, capsys, label):
    """The --position label went verbatim into the first cell of every CSV row, where a spreadsheet
    runs it as a formula (CWE-1236; OWASP CSV injection): refused, exit 2, nothing written."""
    paths, _ = _frames(tmp_path, "png", n=4)
    out = tmp_path / "pos.csv"
    assert main(["frames", "--roi", "10,5,20,20", "--position", label, *paths, "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "--position" in err and len(err.strip().splitlines()) == 1
    assert not out.exists()
