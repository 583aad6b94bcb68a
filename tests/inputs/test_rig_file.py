"""Input validation: every bad input raises one BudgetInputError with a one-line message
that names the field, its section, what is allowed and the value received."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from budget.commands.new import STARTERS as TEMPLATE_NAMES
from budget.errors import BudgetInputError
from budget.inputs.data_csv import read_rig_data
from budget.inputs.rig_file import load_rig, parse_rig
from budget.rig.evaluation import load_evaluation
from tests.paths import TEMPLATES
from tests.rigdoc import merge_doc

BASE = {
    "title": "config test rig (invented)",
    "camera": {"pixels_x": 4000, "pixels_y": 3000, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 40.0},
    "target": {"sigma_px": 1.0},
    "positions": {"angles_deg": [30.0, 90.0]},
}
SWEEP = {"set_points_v": [1.0, 2.0, 3.0], "nominal_gain_deg_per_v": 10.0}


def _evaluate(rig):
    return load_evaluation(rig, read_rig_data(rig))


def make_doc(over: dict | None = None) -> dict:
    """A minimal valid rig document with ``over`` merged in (a value of None deletes)."""
    return merge_doc(BASE, over)


def error_of(doc: dict, base: Path | None = None) -> str:
    with pytest.raises(BudgetInputError) as info:
        parse_rig(doc, base=base)
    assert isinstance(info.value, ValueError)
    msg = str(info.value)
    assert "\n" not in msg, "the message must be one line"
    return msg


def test_minimal_document_and_templates_are_valid():
    parse_rig(make_doc())
    parse_rig(make_doc({"positions": None, "sweep": SWEEP}))
    for name in TEMPLATE_NAMES.values():  # the rig templates (others serve other commands)
        load_rig(TEMPLATES / name)


def test_missing_section():
    msg = error_of(make_doc({"lens": None}))
    assert "[lens]" in msg and "missing" in msg


def test_missing_required_field():
    msg = error_of(make_doc({"geometry": {"pointer_radius_mm": None}}))
    assert "'pointer_radius_mm'" in msg and "[geometry]" in msg and "missing" in msg
    assert "a number > 0" in msg  # what is allowed


@pytest.mark.parametrize(("section", "typo", "right"), [
    ("camera", "pitch_mu", "pitch_um"),
    ("geometry", "tilt_bound", "tilt_bound_deg"),
    ("source", "gain_error", "gain_error_pct"),
])
def test_unknown_key_suggests_nearest(section, typo, right):
    over = {section: {typo: 1.0}}
    if section == "source":
        over.update({"positions": None, "sweep": SWEEP})
    msg = error_of(make_doc(over))
    assert f"'{typo}'" in msg and f"[{section}]" in msg and f"Did you mean '{right}'?" in msg


def test_unknown_section_suggests_nearest():
    msg = error_of(make_doc({"cameras": {"x": 1}}))
    assert "[cameras]" in msg and "'camera'" in msg


@pytest.mark.parametrize(("key", "value"), [
    ("tilt_bound_deg", 90.0), ("tilt_bound_deg", 120.0), ("tilt_bound_deg", 0.0), ("tilt_bound_deg", -1.0),
])
def test_tilt_bound_out_of_range(key, value):
    msg = error_of(make_doc({"geometry": {key: value}}))
    assert f"'{key}'" in msg and "[geometry]" in msg and "(0, 90)" in msg and f"Got {value!r}" in msg


def test_measured_tilt_of_90_degrees_or_more():
    msg = error_of(make_doc({"geometry": {"tilt_deg": 90.0, "tilt_u_deg": 0.1}}))
    assert "'tilt_deg'" in msg and "[geometry]" in msg and "[0, 90)" in msg and "Got 90.0" in msg


def test_measured_tilt_needs_its_uncertainty():
    msg = error_of(make_doc({"geometry": {"tilt_deg": 1.0}}))
    assert "'tilt_u_deg'" in msg and "[geometry]" in msg


@pytest.mark.parametrize("value", [0.0, -5.0, math.inf, math.nan])
def test_radius_must_be_positive(value):
    msg = error_of(make_doc({"geometry": {"pointer_radius_mm": value}}))
    assert "'pointer_radius_mm'" in msg and "[geometry]" in msg and "> 0" in msg and "Got" in msg


def test_pointer_leaving_the_field_of_view():
    msg = error_of(make_doc({"geometry": {"pointer_radius_mm": 200.0}}))
    assert "field of view" in msg and "pointer_radius_mm" in msg and "px" in msg


def test_pivot_arc_leaving_the_field_of_view():
    """The readings fit on a wide, short sensor but a pivot arc centred 90° away does not."""
    over = {"camera": {"pixels_y": 600}, "geometry": {"zero_direction_deg": 0.0},
            "positions": {"angles_deg": [5.0, 10.0]}}
    parse_rig(make_doc(over))
    msg = error_of(make_doc({**over, "pivot": {"method": "arc", "arc_centre_deg": 90.0, "arc_half_angle_deg": 30.0}}))
    assert "field of view" in msg and "pivot arc" in msg


@pytest.mark.parametrize(("section", "key"), [
    ("camera", "read_noise_e"), ("target", "background_e"), ("source", "noise_uv"), ("source", "offset_mv"),
])
def test_negative_noise(section, key):
    over = {section: {key: -1.0}}
    if section == "source":
        over.update({"positions": None, "sweep": SWEEP})
    msg = error_of(make_doc(over))
    assert f"'{key}'" in msg and f"[{section}]" in msg and ">= 0" in msg and "Got -1.0" in msg


@pytest.mark.parametrize("bits", [0, 33, -4])
@pytest.mark.parametrize(("section", "key"), [("source", "bits"), ("camera", "bit_depth")])
def test_bits_outside_1_to_32(section, key, bits):
    over = {section: {key: bits}, "positions": None, "sweep": SWEEP}
    msg = error_of(make_doc(over))
    assert f"'{key}'" in msg and f"[{section}]" in msg and "[1, 32]" in msg and f"Got {bits}" in msg


def test_bits_must_be_whole():
    msg = error_of(make_doc({"camera": {"bit_depth": 12.0}}))
    assert "'bit_depth'" in msg and "[camera]" in msg and "integer" in msg


@pytest.mark.parametrize("points", [[1.0, 2.0], [1.0, 1.0, 2.0], [3.0, 2.0, 1.0], [1.0, 3.0, 2.0], []])
def test_sweep_needs_three_strictly_increasing_set_points(points):
    msg = error_of(make_doc({"positions": None, "sweep": {"set_points_v": points}}))
    assert "'set_points_v'" in msg and "[sweep]" in msg and "strictly increasing" in msg and "Got" in msg


def test_sweep_set_point_beyond_the_source_span():
    msg = error_of(make_doc({"positions": None, "sweep": {**SWEEP, "set_points_v": [1.0, 2.0, 25.0]},
                             "source": {"span_v": 20.0}}))
    assert "'set_points_v'" in msg and "[sweep]" in msg


def test_positions_and_sweep_together():
    msg = error_of(make_doc({"sweep": SWEEP}))
    assert "[positions]" in msg and "[sweep]" in msg and "exactly one" in msg


def test_neither_positions_nor_sweep():
    msg = error_of(make_doc({"positions": None}))
    assert "[positions]" in msg and "[sweep]" in msg


def test_wrong_kind_is_not_coerced():
    """Nothing is silently repaired: a string where a number belongs is an error."""
    msg = error_of(make_doc({"lens": {"focal_length_mm": "25"}}))
    assert "'focal_length_mm'" in msg and "[lens]" in msg and "Got '25'" in msg


def test_malformed_toml_names_the_line(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text('title = "x"\n[camera]\npixels_x = 4000\npixels_y = = 3000\n', encoding="utf-8")
    with pytest.raises(BudgetInputError) as info:
        load_rig(path)
    msg = str(info.value)
    assert "\n" not in msg and "not valid TOML" in msg and "line 4" in msg and "bad.toml" in msg


def test_missing_file(tmp_path):
    with pytest.raises(BudgetInputError, match="does not exist"):
        load_rig(tmp_path / "nope.toml")


# ---------------------------------------------------------------- evaluation-mode CSV
def _csv_rig(tmp_path: Path, text: str):
    (tmp_path / "pos.csv").write_text(text, encoding="utf-8")
    doc = make_doc({"data": {"readings_csv": "pos.csv"}, "pivot": {"method": "mark"}})
    return parse_rig(doc, base=tmp_path)


def _csv_error(tmp_path: Path, text: str) -> str:
    rig = _csv_rig(tmp_path, text)
    with pytest.raises(BudgetInputError) as info:
        _evaluate(rig)
    msg = str(info.value)
    assert "\n" not in msg
    return msg


def _good_rows() -> list[str]:
    """Four frames per point in image coordinates (y down) about a mark at (0, 0): the zero image up
    (zero direction 90°), readings 30° and 90° counterclockwise on the displayed image."""
    rows = []
    for lab, (x, y) in {"Z": (0.0, -400.0), "P1": (-200.0, -346.4), "P2": (-400.0, 0.0), "M": (0.0, 0.0)}.items():
        rows += [f"{lab},1,{x + 0.01},{y}", f"{lab},2,{x - 0.01},{y + 0.02}", f"{lab},3,{x},{y - 0.01}",
                 f"{lab},4,{x + 0.005},{y - 0.012}"]
    return rows


def test_csv_good_file_is_read(tmp_path):
    ev = _evaluate(_csv_rig(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(_good_rows()) + "\n"))
    assert ev.type_a is not None and set(ev.type_a) == {"Z", "P1", "P2", "M"}


def test_csv_missing_columns(tmp_path):
    msg = _csv_error(tmp_path, "position,frame,x_px\nZ,1,3.0\n")
    assert "y_px" in msg and "pos.csv" in msg


@pytest.mark.parametrize("cell", ["abc", ""])
def test_csv_non_numeric_cell_names_the_row(tmp_path, cell):
    rows = _good_rows()
    rows[4] = f"P1,2,{cell},346.4"  # file row 6 (the header is row 1)
    msg = _csv_error(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(rows) + "\n")
    assert "Row 6" in msg and "'x_px'" in msg and "pos.csv" in msg


@pytest.mark.parametrize("cell", ["nan", "NaN", "inf"])
def test_csv_nan_cell_names_the_row(tmp_path, cell):
    rows = _good_rows()
    rows[2] = f"Z,3,0.0,{cell}"  # file row 4
    msg = _csv_error(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(rows) + "\n")
    assert "Row 4" in msg and "'y_px'" in msg


def test_csv_unknown_position_and_repeated_frame(tmp_path):
    msg = _csv_error(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(_good_rows() + ["P7,1,0,0"]) + "\n")
    assert "P7" in msg and "does not have" in msg
    rows = _good_rows()
    rows[5] = rows[4]  # P1 frame 1 twice
    msg = _csv_error(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(rows) + "\n")
    assert "P1" in msg and "frame 1 twice" in msg


def test_csv_frames_are_taken_in_frame_order(tmp_path):
    """The drift and autocorrelation checks need acquisition order: rows are sorted by 'frame'."""
    from budget.inputs.data_csv import read_positions_csv

    rows = _good_rows()
    (tmp_path / "pos.csv").write_text("position,frame,x_px,y_px\n" + "\n".join(reversed(rows)) + "\n",
                                      encoding="utf-8")
    pts, _ = read_positions_csv(tmp_path / "pos.csv")
    assert pts["Z"][0, 0] == pytest.approx(0.01) and pts["Z"][3, 1] == pytest.approx(-400.012)


def test_csv_missing_position(tmp_path):
    rows = [r for r in _good_rows() if not r.startswith("M,")]
    msg = _csv_error(tmp_path, "position,frame,x_px,y_px\n" + "\n".join(rows) + "\n")
    assert "M" in msg and "lack" in msg


@pytest.mark.parametrize("angles", [[0.0, 0.0], [30.0, 30.0], [0.0, 45.0], [30.0, -330.0]])
def test_readings_pivot_needs_three_distinct_points(angles):
    """A circle through the zero image and readings needs three different points; with
    fewer the fit is undefined (it used to reach the model and return NaN)."""
    msg = error_of(make_doc({"pivot": {"method": "readings"}, "positions": {"angles_deg": angles}}))
    assert "[pivot]" in msg and "readings" in msg and "Got" in msg


@pytest.mark.parametrize("key", ["tilt_u_deg", "tilt_azimuth_deg"])
@pytest.mark.parametrize("bound", [None, 1.0])
def test_tilt_fields_without_a_measured_tilt_are_not_ignored(key, bound):
    """Nothing is silently dropped: a tilt uncertainty or azimuth without 'tilt_deg'
    would have no effect on the budget, so it is an error."""
    msg = error_of(make_doc({"geometry": {key: 2.0, "tilt_bound_deg": bound}}))
    assert f"'{key}'" in msg and "[geometry]" in msg and "'tilt_deg'" in msg and "Got 2.0" in msg


@pytest.mark.parametrize(("polarity", "points", "ok"), [
    ("bipolar", [1.0, 5.0, 9.5], True),     # ±10 V for a 20 V span
    ("bipolar", [1.0, 5.0, 15.0], False),   # 15 V is beyond +10 V
    ("unipolar", [1.0, 5.0, 15.0], True),   # 0 to 20 V
    ("unipolar", [-1.0, 5.0, 9.0], False),  # a unipolar source gives no negative voltage
])
def test_set_points_within_the_source_range(polarity, points, ok):
    doc = make_doc({"positions": None, "sweep": {**SWEEP, "set_points_v": points},
                    "source": {"span_v": 20.0, "polarity": polarity}})
    if ok:
        parse_rig(doc)
    else:
        msg = error_of(doc)
        assert "'set_points_v'" in msg and polarity in msg


@pytest.mark.parametrize(("section", "key", "value"), [
    ("camera", "read_noise_e", 1e300),            # OverflowError traceback
    ("camera", "full_well_e", 1e300),             # "The 'b2' field of com_variance ..."
    ("camera", "full_well_e", 1e15),              # "The model returned nan ..."
    ("lens", "residual_correlation_px", 1e300),   # OverflowError traceback
    ("lens", "residual_rms_px", 1e15),            # "The model returned nan ..."
    ("lens", "focal_length_mm", 1e-300),          # "The model returned nan ..."
    ("geometry", "working_distance_mm", 1e15),    # "The model returned nan ..."
    ("geometry", "target_height_mm", 1e15),       # "The model returned nan ..."
    ("geometry", "target_height_u_mm", 1e300),    # "The model returned nan ..."
    ("target", "sigma_px", 1e-300),               # ZeroDivisionError traceback
    ("target", "signal_e", 1e-300),               # "The 'sd' field of Normal ..."
    ("target", "signal_e", 1e300),                # NaN in the JSON: traceback
    ("target", "background_e", 1e300),            # "The model returned nan ..."
    ("geometry", "pointer_radius_mm", 1e-10),     # "The model returned nan ..."
    ("camera", "pitch_um", 1e-300),               # OverflowError traceback (a disk target)
    ("target", "diameter_mm", 1e300),             # OverflowError traceback
])
def test_absurd_magnitudes_are_refused_naming_the_field(section, key, value):
    """Values far outside any camera, lens or rig (the gauge template with one field changed) used to
    pass validation and then fail inside the engine with a traceback or a message naming an internal
    quantity. They are input errors naming the user's field and its range [the README: one line
    naming the field and the allowed range]."""
    doc = load_rig(TEMPLATES / TEMPLATE_NAMES["gauge"]).raw
    if key in ("pitch_um", "diameter_mm"):
        doc = merge_doc(doc, {"target": {"shape": "disk", "diameter_mm": 2.0, "sigma_px": None}})
    msg = error_of(merge_doc(doc, {section: {key: value}}))
    assert f"'{key}'" in msg and f"[{section}]" in msg


def test_the_new_limits_keep_every_plausible_rig():
    """Edges of the limits that still pass: the engine gives finite results there [derived: probed with
    the gauge template, 2000 trials]."""
    doc = load_rig(TEMPLATES / TEMPLATE_NAMES["gauge"]).raw
    for section, key, value in [("camera", "read_noise_e", 1e4), ("camera", "full_well_e", 1e8),
                                ("lens", "residual_correlation_px", 1e6), ("lens", "residual_rms_px", 100.0),
                                ("lens", "focal_length_mm", 1.0), ("geometry", "working_distance_mm", 1e5),
                                ("geometry", "target_height_mm", 400.0), ("geometry", "target_height_u_mm", 100.0),
                                ("target", "sigma_px", 0.01), ("target", "signal_e", 1.0),
                                ("target", "signal_e", 1e12), ("target", "background_e", 1e9)]:
        parse_rig(merge_doc(doc, {section: {key: value}}))


def test_a_byte_order_mark_is_not_part_of_the_toml(tmp_path):
    """Some editors save UTF-8 with a byte-order mark; TOML (1.0, 'a TOML file must be a valid
    UTF-8 encoded Unicode document') is read from the text after it."""
    src = TEMPLATES / "gauge_static.toml"
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + src.read_bytes())
    assert load_rig(path).title == load_rig(src).title
