"""The one coordinate convention: image x right, y down, origin at the centre of the top-left pixel;
directions counterclockwise on the displayed image from +x; readings travelled in the rig's
``travel`` direction; offsets along image x and y; rolling-shutter rows from the top; tilt sign.

Each check is a derivation written out in its docstring [derived]; the rigs are invented.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.inputs.rig_file import parse_rig
from budget.rig.geometry import nominal_image_points, principal_point, screen_angles_deg
from budget.rig.model import VirtualRig
from tests.rigdoc import merge_doc

BASE = {
    "title": "convention test rig (invented)",
    "camera": {"pixels_x": 1001, "pixels_y": 801, "pitch_um": 5.0},
    "lens": {"focal_length_mm": 25.0, "distortion": "uncorrected"},
    "geometry": {"working_distance_mm": 500.0, "pointer_radius_mm": 30.0, "zero_direction_deg": 0.0},
    "target": {"sigma_px": 1.0},
    "locator": {"method": "fit"},
    "pivot": {"method": "mark"},
    "positions": {"angles_deg": [90.0, 180.0]},
}


def rig_of(over: dict | None = None):
    return parse_rig(merge_doc(BASE, over))


def test_principal_point_is_the_centre_of_the_image_in_pixel_centres():
    """[derived] Pixel centres run 0 … W − 1 and 0 … H − 1: the middle is ((W − 1)/2, (H − 1)/2)."""
    assert principal_point(rig_of()) == (500.0, 400.0)


@pytest.mark.parametrize("travel, up", [("counterclockwise", True), ("clockwise", False)])
def test_directions_and_travel_on_the_displayed_image(travel, up):
    """[derived] The zero image points right (0°): its target is right of the pivot, on the pivot's
    row. A reading of 90° travelled counterclockwise on the displayed image points up, so its y is
    smaller (y grows downwards); travelled clockwise it points down. 180° is left either way."""
    rig = rig_of({"geometry": {"travel": travel}})
    x, y = nominal_image_points(rig)
    xm, ym = x[-1], y[-1]  # the mark is the pivot
    r = rig.radius_px
    assert x[0] == pytest.approx(xm + r, rel=1e-12) and y[0] == pytest.approx(ym, abs=1e-9)
    assert x[1] == pytest.approx(xm, abs=1e-9)
    assert y[1] == pytest.approx(ym - r if up else ym + r, rel=1e-12)
    assert x[2] == pytest.approx(xm - r, rel=1e-12)
    out = VirtualRig(rig)()
    assert out["P1"][0] == pytest.approx(90.0, abs=1e-9) and out["P2"][0] == pytest.approx(180.0, abs=1e-9)


def test_screen_angle_is_counterclockwise_with_y_down():
    """[derived] From pointing right (1, 0) to pointing up (0, −1) in image coordinates is +90°
    counterclockwise on the displayed image; to pointing down (0, 1) is −90°."""
    assert screen_angles_deg(1.0, 0.0, 0.0, -1.0) == pytest.approx(90.0)
    assert screen_angles_deg(1.0, 0.0, 0.0, 1.0) == pytest.approx(-90.0)


def test_pivot_offset_follows_image_axes():
    """[derived] An offset of +y mm (down the image) puts the pivot's image below the principal point
    by m·y/pitch px; +x puts it to the right."""
    rig = rig_of({"geometry": {"pivot_offset_x_mm": 2.0, "pivot_offset_y_mm": 3.0}})
    x, y = nominal_image_points(rig)
    cx, cy = principal_point(rig)
    px_per_mm = rig.focal_px / rig.geometry.working_distance_mm
    assert x[-1] - cx == pytest.approx(2.0 * px_per_mm, rel=1e-12)
    assert y[-1] - cy == pytest.approx(3.0 * px_per_mm, rel=1e-12)


def test_rolling_shutter_rows_count_from_the_top():
    """[derived] Row i is read i·t_row after row 0 (the top row, at the timestamp). A reading imaged
    at row y on a pointer moving at ω (deg/s, in the travel direction) reads ω·y·t_row too far:
    a pointer pointing down (larger y) errs more than one pointing up."""
    over = {"camera": {"shutter": "rolling", "row_time_us": 10.0},
            "motion": {"state": "moving", "rate_deg_per_s": 100.0},
            "positions": {"angles_deg": [90.0, 270.0]}}
    rig = rig_of(over)
    x, y = nominal_image_points(rig)
    out = VirtualRig(rig)()
    for i, want in ((1, 90.0), (2, 270.0)):
        assert out[f"P{i}"][0] - want == pytest.approx(100.0 * y[i] * 10e-6, rel=1e-9)
    assert y[1] < y[2]  # counterclockwise: 90° points up, 270° down


def test_positive_tilt_lifts_the_side_ninety_degrees_counterclockwise_of_its_axis():
    """[derived] Rodrigues: a rotation by +β about a = (cos φ, sin φ, 0) takes the in-plane point at
    φ + 90° to height R sin β towards the camera, where the pinhole magnifies it by D/(D − z) > 1.
    Axis along +x (φ = 0): the point up on the image (zero direction 90°) images farther from the
    pivot (smaller y), the one down nearer."""
    rig = rig_of({"geometry": {"zero_direction_deg": 90.0}, "positions": {"angles_deg": [180.0, 90.0]}})
    from budget.rig.geometry import dial_angles_deg, image_points

    beta = 2.0
    x, y = image_points(rig, {"tilt_x_deg": np.array([beta]), "tilt_y_deg": np.array([0.0])}, 1,
                        dial_angles_deg(rig))
    x0, y0 = nominal_image_points(rig)
    ym = y0[-1]
    up, down = 0, 1  # Z points up; P1 (180° counterclockwise) points down
    assert ym - y[up, 0] > ym - y0[up]  # farther up (image_points: points first, one trial)
    assert y[down, 0] - ym < y0[down] - ym  # nearer below
    d, r = rig.geometry.working_distance_mm, rig.geometry.pointer_radius_mm
    b = math.radians(beta)
    want = rig.focal_px * r * math.cos(b) / (d - r * math.sin(b))
    assert ym - y[up, 0] == pytest.approx(want, rel=1e-12)
