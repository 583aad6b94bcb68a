"""Tests of the camera choice (budget.choice); each check names its source or says [derived]."""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
from scipy.optimize import minimize_scalar
from scipy.special import j1

from budget.choice.model import design_geometry, predict_candidates
from budget.choice.rank import _model_candidates, choose, equivalent_rig
from budget.errors import BudgetInputError
from budget.imaging import spot
from budget.imaging.optics import spot_sigma_px
from budget.imaging.spot import window_truncation_max
from budget.inputs.choose_file import load_choose, parse_choose
from budget.rig.budget import run_budget
from budget.rig.pivot import fit_circle
from tests.paths import TEMPLATES


def _doc() -> dict:
    doc = tomllib.loads((TEMPLATES / "choose_cameras.toml").read_text(encoding="utf-8"))
    doc["candidates"]["cameras_csv"] = str(TEMPLATES / "cameras.csv")
    return doc


@pytest.fixture(scope="module")
def spec():
    return load_choose(TEMPLATES / "choose_cameras.toml")


@pytest.fixture(scope="module")
def result(spec):
    return choose(spec)


def _index(res, camera, lens):
    names = [res.spec.cameras.name[i] for i in res.camera_index]
    return next(i for i in range(len(names)) if names[i] == camera and res.lens_label[i] == lens)


def test_one_camera_meets_the_goal_and_another_does_not(result):
    # [derived] demo scenario: 5 MP global camera with a 35 mm f/5.6 lens meets U <= 0.02 deg; the
    # 0.4 MP camera with a 16 mm lens has 187 px of radius and does not (pixel-locking and distortion / R).
    good = _index(result, "demo-cam-5MP-global", "35 mm f/5.6")
    bad = _index(result, "demo-cam-0.4MP-global", "16 mm f/8")
    p = result.pred
    assert p.meets[good] and p.U_angle_deg[good] <= 0.02
    assert not p.meets[bad] and p.U_angle_deg[bad] > 0.02
    # ranking: every meeting candidate before every other one, then by price
    meets = p.meets[result.order]
    assert np.all(meets[: meets.sum()]) and not np.any(meets[meets.sum():])
    assert np.all(np.diff(result.price[result.order][: meets.sum()]) >= 0)


def test_predicted_U_falls_monotonically_with_pixels_across_the_field(spec):
    # [derived] continuous sensor model of the demo (fixed sensor width, automatic lens): locking falls as
    # exp(-2 pi^2 sigma^2), distortion residual and quantization scale as 1/R_px; the tilt floor stays.
    curve = choose(spec).curve
    assert curve is not None
    assert np.all(np.diff(curve[1]) < 0)


def test_least_pixels_meets_and_one_percent_fewer_does_not(spec, result):
    # [derived] definition of the least pixel count in the continuous model.
    lp = result.least
    assert lp is not None and lp.pixels is not None
    geo = design_geometry(spec)
    goal = spec.goal["angle_U_deg"]
    at = predict_candidates(spec, _model_candidates(spec, np.array([lp.pixels])), geo)
    fewer = predict_candidates(spec, _model_candidates(spec, np.array([0.99 * lp.pixels])), geo)
    assert at.meets[0] and at.U_angle_deg[0] <= goal
    assert not fewer.meets[0] and fewer.U_angle_deg[0] > goal


@pytest.mark.parametrize("pivot", ["readings", "arc", "mark"])
def test_closed_form_agrees_with_run_budget_linear(pivot):
    # Cross-check of the closed form against the full virtual rig through run_budget's linear method
    # (JCGM 100 eq. 13 with numerical sensitivities). Tolerance 2 %: both are first-order; they differ
    # only by the finite-difference step of the engine and the 51- vs 101-point phase grid of the
    # window-truncation maximum, both far below 1 %; 2 % leaves room and still catches a missing factor.
    doc = _doc()
    doc["scene"]["tilt_bound_deg"] = 0.3
    doc["pivot"] = {"method": pivot, "arc_half_angle_deg": 60.0, "arc_points": 7, "mark_offset_bound_mm": 0.02}
    doc["locator"]["window_px"] = 7  # a narrow window: truncation enters
    s = parse_choose(doc)
    res = choose(s)
    rng = np.random.default_rng(np.random.SeedSequence(7))
    picks = [("demo-cam-0.4MP-global", "25 mm f/8")]
    if pivot == "readings":
        picks.append(("demo-cam-5MP-global", "35 mm f/5.6"))
    for i in (_index(res, cam, lens) for cam, lens in picks):
        rig = equivalent_rig(s, res.cand, res.pred, i)
        run = run_budget(rig, rng=rng, trials=2000)
        u_lin = max(a.linear.u for a in run.angles)
        assert res.pred.u_angle_deg[i] == pytest.approx(u_lin, rel=0.02)


def test_gain_closed_form_agrees_with_run_budget_linear():
    # As above, for the gain of a sweep (OLS slope, DESIGN.md section 4); 2 % for the same reasons.
    doc = _doc()
    doc["measurement"] = {"set_points_v": [1.0, 2.0, 3.0, 4.0, 5.0], "nominal_gain_deg_per_v": 27.0}
    doc["goal"] = {"gain_U_pct": 0.1}
    s = parse_choose(doc)
    res = choose(s)
    i = _index(res, "demo-cam-1.6MP-global", "16 mm f/8")
    run = run_budget(equivalent_rig(s, res.cand, res.pred, i), rng=np.random.default_rng(3), trials=2000)
    u_gain_pct = 100 * run.gain.linear.u / 27.0
    assert res.pred.u_gain_pct[i] == pytest.approx(u_gain_pct, rel=0.02)


def test_pivot_sensitivities_match_finite_differences_through_fit_circle(spec):
    # [derived] the Chernov (2010, ch. 7) linearization (J^T J)^-1 J^T against central differences
    # through the package's circle fit, for the readings pivot; tolerance 1e-6 (difference step 1e-7).
    geo = design_geometry(spec)
    z0 = math.radians(spec.scene["zero_direction_deg"])
    phi = np.array([z0, *(z0 + np.radians(spec.measurement["angles_deg"]))])
    pts = np.stack([np.cos(phi), np.sin(phi)], axis=1)

    def angle(p):
        xc, yc, _ = fit_circle(p[:, 0], p[:, 1])
        r0, r = p[0] - (xc, yc), p[1] - (xc, yc)
        return math.atan2(r0[0] * r[1] - r0[1] * r[0], r0 @ r)

    h = 1e-7
    for i in range(phi.size):
        for ax in range(2):
            up, dn = pts.copy(), pts.copy()
            up[i, ax] += h
            dn[i, ax] -= h
            assert (angle(up) - angle(dn)) / (2 * h) == pytest.approx(geo.grad[0, i, ax], abs=1e-6)


def test_airy_gaussian_sigma_through_the_spot_size_function():
    # Zhang, Zerubia & Olivo-Marin 2007, Appl. Opt. 46:1819, paraxial 2-D wide-field PSF:
    # sigma = 0.21 lambda / NA (value from memory). Checked two ways: the spot-size function equals
    # 0.21 lambda/NA with NA = 1/(2 N(1+m)) to rounding, and a least-squares Gaussian fit (peak held) to
    # the Airy intensity (2 J1(v)/v)^2 gives 0.21 lambda/NA within 1 % (the paper's two digits).
    lam_nm, n, m, pitch = 550.0, 8.0, 0.1, 3.45
    na = 1.0 / (2 * n * (1 + m))
    s = spot_sigma_px(lam_nm, n, m, pitch)
    assert s * pitch == pytest.approx(0.21 * lam_nm * 1e-3 / na, rel=1e-12)
    r = np.linspace(1e-6, 1.2, 600)  # radius in units of lambda/NA, up to about the first zero
    v = 2 * np.pi * r
    airy = (2 * j1(v) / v) ** 2

    def cost(sig):
        return np.sum(r * (airy - np.exp(-(r**2) / (2 * sig**2))) ** 2)

    fit = minimize_scalar(cost, bounds=(0.1, 0.4), method="bounded").x
    assert fit == pytest.approx(0.21, rel=0.01)


def test_vectorized_locator_terms_equal_spot_theory():
    # [derived] the choice's vectorized window truncation is spot_theory.window_truncation_bias's maximum
    # (101-point phase grid there, 51 here: agreement to 1 % of the value or 1e-9 px).
    for s, w in ((0.6, 5), (1.0, 7), (1.4, 9)):
        ref = np.max(np.abs(spot.window_truncation_bias(np.linspace(-0.5, 0.5, 101), s, w)))
        got = window_truncation_max(np.array([s]), np.array([w]))[0]
        assert got == pytest.approx(ref, rel=0.01, abs=1e-9)


@pytest.mark.parametrize(("section", "key", "value", "message"), [
    ("scene", "pointer_radius_mm", -1, "'pointer_radius_mm' field of [scene] must be a number > 0"),
    ("scene", "working_distanse_max_mm", 700, "Did you mean 'working_distance_max_mm'"),
    ("locator", "window_px", 4, "'window_px' field of [locator] must be an odd integer"),
    ("goal", "p", 1.5, "'p' field of [goal] must be a number in (0, 1)"),
    ("candidates", "lenses", [{"focal_length_mm": -5}], "lenses[0].focal_length_mm"),
])
def test_bad_input_raises_one_line(section, key, value, message):
    doc = _doc()
    doc[section][key] = value
    with pytest.raises(BudgetInputError) as exc:
        parse_choose(doc)
    assert message in str(exc.value) and "\n" not in str(exc.value)


def test_bad_camera_csv_names_row_and_column(tmp_path):
    bad = tmp_path / "cams.csv"
    bad.write_text("name,pixels_x,pixels_y,pitch_um,bit_depth,read_noise_e,full_well_e,max_frame_rate_hz,shutter,"
                   "price\ndemo-cam-a,1000,800,-3,12,2,10000,30,global,100\n", encoding="utf-8")
    doc = _doc()
    doc["candidates"]["cameras_csv"] = str(bad)
    with pytest.raises(BudgetInputError, match=r"Row 2 of .*'pitch_um' cell must be a number in \(0, 100\]"):
        parse_choose(doc)
    doc["candidates"]["cameras_csv"] = str(tmp_path / "missing.csv")
    with pytest.raises(BudgetInputError, match="cannot be read"):
        parse_choose(doc)


def test_thousands_of_candidates_in_one_call(spec):
    # [derived] shape and finiteness of a large vectorized call (speed is measured in benchmarks/).
    n = 2_000
    rng = np.random.default_rng(5)
    cand = _model_candidates(spec, rng.uniform(300, 5000, n))
    p = predict_candidates(spec, cand)
    assert p.U_angle_deg.shape == (n,) and np.all(np.isfinite(p.U_angle_deg))


_HEADER = "name,pixels_x,pixels_y,pitch_um,bit_depth,read_noise_e,full_well_e,max_frame_rate_hz,shutter,price\n"


@pytest.mark.parametrize(("column", "row"), [
    ("read_noise_e", "demo-cam-a,1000,800,3.45,12,1e300,10000,30,global,100"),  # TypeError traceback in the table
    ("full_well_e", "demo-cam-a,1000,800,3.45,12,2,1e300,30,global,100"),       # TypeError traceback in the table
])
def test_absurd_camera_cells_are_refused(tmp_path, column, row):
    """Cells far outside any sensor passed the check and crashed the ranking's table; the limits are the
    rig file's [the README: bad input is one line naming the field and the allowed range]."""
    bad = tmp_path / "cams.csv"
    bad.write_text(_HEADER + row + "\n", encoding="utf-8")
    doc = _doc()
    doc["candidates"]["cameras_csv"] = str(bad)
    with pytest.raises(BudgetInputError, match=rf"Row 2 of .*'{column}' cell must be"):
        parse_choose(doc)


def test_camera_csv_that_is_not_utf8_is_one_line(tmp_path):
    """A cameras file saved in a legacy code page raised UnicodeDecodeError (a traceback)."""
    bad = tmp_path / "cams.csv"
    bad.write_bytes((_HEADER + "demo-cam-µ,1000,800,3.45,12,2,10000,30,global,100\n").encode("latin-1"))
    doc = _doc()
    doc["candidates"]["cameras_csv"] = str(bad)
    with pytest.raises(BudgetInputError, match="UTF-8") as exc:
        parse_choose(doc)
    assert "\n" not in str(exc.value) and "cams.csv" in str(exc.value)


def test_square_brackets_in_a_camera_name_are_printed_as_written(tmp_path):
    """A camera named with '[/]' crashed the text table (a markup error) [common practice: user text
    is printed verbatim]."""
    from budget.report.choice import render_choice

    cams = tmp_path / "cams.csv"
    cams.write_text(_HEADER + "demo [/] cam [bold]b[/bold],2448,2048,3.45,12,2.4,10500,75,global,100\n",
                    encoding="utf-8")
    doc = _doc()
    doc["candidates"]["cameras_csv"] = str(cams)
    doc["title"] = "choice [/] (invented)"
    text = render_choice(choose(parse_choose(doc)))
    assert "choice [/] (invented)" in text and "demo [/] cam [bold]b[/bold]" in text


def test_camera_csv_with_a_byte_order_mark_is_read(tmp_path):
    """Spreadsheets save "CSV UTF-8" with a byte-order mark; the first column was then reported
    missing ('lacks name') [common practice: UTF-8 readers accept the BOM, Python's 'utf-8-sig']."""
    cams = tmp_path / "cams.csv"
    cams.write_text(_HEADER + "demo-cam-a,2448,2048,3.45,12,2.4,10500,75,global,100\n", encoding="utf-8-sig")
    doc = _doc()
    doc["candidates"]["cameras_csv"] = str(cams)
    assert parse_choose(doc).cameras.name == ("demo-cam-a",)
