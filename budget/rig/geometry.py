"""Geometry of the rig, dial to image: the ONE home of the tilt and projection model and of the angle.

The one convention (README, "Coordinates and directions"):

* **Image coordinates** are those of the image file: x to the right along a row, y down along a
  column, in px, with the origin at the centre of the top-left pixel (pixel row i, column j has
  its centre at x = j, y = i). Located positions, data files and this module's outputs use them.
  The principal point is the centre of the sensor, ((pixels_x − 1)/2, (pixels_y − 1)/2).
* **Directions** on the displayed image (``zero_direction_deg``, ``tilt_azimuth_deg``) are in
  degrees counterclockwise from the image's +x axis as the image is displayed: 0° right, 90° up.
* **Offsets** in the dial plane (``pivot_offset_x_mm``, ``pivot_offset_y_mm``) are along the
  image's x (right) and y (down) axes.
* **Readings** are angles travelled from the zero image in the rig's ``travel`` direction
  ("clockwise" or "counterclockwise" as seen on the displayed image), positive that way.

Internally the dial frame has x to the right, y up and z towards the camera (right-handed), so
a direction on the displayed image is a dial angle; the dial is tilted by the rotation vector
(wx, wy, 0) (Rodrigues: a positive tilt about an axis at azimuth φ lifts the dial's side at
φ + 90° towards the camera), shifted by the pivot's offset from the optical axis, projected by a
pinhole at the working distance with first-order radial distortion (Brown–Conrady k1), and the
projection's y (up) is turned into the image's y (down) about the principal point. The virtual
rig (:mod:`budget.rig.model`) calls these functions for every trial; nothing else in the package
projects a point.

Arrays of points have the points on the first axis and the trials on the last, shape
(n_points, T): each point's values are one contiguous row, so a sum over the points is a few
vector additions and a point's coordinate is a contiguous slice.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from budget.rig.description import RigDescription
from budget.rig.pivot import fit_circle
from budget.rig.trig import cos_sin_deg, screen_angles_deg, screen_angles_near_deg

__all__ = ["rotate_tilt", "project", "dial_angles_deg", "tilt_vector", "image_points", "reading_image_points",
           "principal_point",
           "travel_sign", "nominal_image_points", "estimate_pivot", "reading_angles_deg",
           "screen_angles_deg", "true_pivot_image"]


def travel_sign(rig: RigDescription) -> float:
    """+1 for a pointer travelling counterclockwise on the displayed image, −1 for clockwise."""
    return 1.0 if rig.geometry.travel == "counterclockwise" else -1.0


def principal_point(rig: RigDescription) -> tuple[float, float]:
    """Image coordinates of the principal point: the sensor's centre, ((W − 1)/2, (H − 1)/2)."""
    return 0.5 * (rig.camera.pixels_x - 1), 0.5 * (rig.camera.pixels_y - 1)


def rotate_tilt(x: np.ndarray, y: np.ndarray, z: np.ndarray, wx: np.ndarray, wy: np.ndarray):
    """Rotate points by the rotation vector (wx, wy, 0) (radians), Rodrigues' formula.

    The dial plane tilted by β = |w| about the in-plane axis at azimuth
    atan2(wy, wx). In the orthographic limit a dial angle θ is seen at θ′ with
    tan(θ′ − φ) = cos β·tan(θ − φ) [derived].

    Notes
    -----
    R = cos β·I + (sin β/β)[w]× + ((1 − cos β)/β²) w wᵀ; its entries are formed once per
    rotation (the shape of ``wx``) and applied to every point, e.g. x′ = R00 x + R01 y + R02 z.
    """
    beta = np.sqrt(wx * wx + wy * wy)
    c = np.cos(beta)
    a = np.sinc(beta / np.pi)  # sin β / β, exact at β = 0
    b = 0.5 * np.sinc(beta / (2 * np.pi)) ** 2  # (1 − cos β)/β²
    bxy = b * wx * wy
    awx, awy = a * wx, a * wy
    # Accumulated in place, left to right as written: x′ = (R00 x + R01 y) + R02 z, etc.
    xr = (c + b * wx * wx) * x
    tmp = np.multiply(bxy, y)
    xr += tmp
    xr += awy * z
    yr = bxy * x
    yr += np.multiply(c + b * wy * wy, y, out=tmp)
    yr -= awx * z
    zr = awx * y
    zr -= np.multiply(awy, x, out=tmp)
    zr += c * z
    return xr, yr, zr


def project(x, y, z, *, focal_px: float, distance_mm: float, k1=0.0):
    """Pinhole projection of points (mm, z towards the camera) to px about the principal point.

    Radial lens distortion x_d = x(1 + k1·r²) on normalized coordinates
    (Brown–Conrady, first radial term).
    """
    s = np.subtract(distance_mm, z)
    np.divide(focal_px, s, out=s)
    u, v = s * x, s * y
    if np.any(k1 != 0.0):
        r2 = (u * u + v * v) / focal_px**2
        u, v = u * (1 + k1 * r2), v * (1 + k1 * r2)
    return u, v


def dial_angles_deg(rig: RigDescription) -> np.ndarray:
    """Nominal directions on the displayed image (deg, counterclockwise from +x) of every located point.

    A reading θ points at zero_direction ± θ (+ counterclockwise travel, − clockwise); the
    pivot arc is centred on the readings' mid-range (or ``arc_centre_deg``, a reading angle).
    """
    g = rig.geometry
    z0, s = g.zero_direction_deg, travel_sign(rig)
    angles = [z0, *(z0 + s * a for a in rig.nominal_angles_deg)]
    if rig.pivot.method == "arc":
        mid = rig.pivot.arc_centre_deg
        if mid is None:
            nominal = rig.nominal_angles_deg
            mid = 0.5 * (min(0.0, *nominal) + max(0.0, *nominal))
        half = rig.pivot.arc_half_angle_deg
        angles += list(z0 + s * (mid + np.linspace(-half, half, rig.pivot.arc_points)))
    elif rig.pivot.method == "mark":
        angles.append(0.0)  # placeholder: the mark's position is set in the model
    return np.array(angles, dtype=float)


def nominal_image_points(rig: RigDescription) -> tuple[np.ndarray, np.ndarray]:
    """Image coordinates (x right, y down, px) of every located point, no errors."""
    x, y = image_points(rig, {}, 1, dial_angles_deg(rig))
    return x[:, 0], y[:, 0]


def tilt_vector(rig: RigDescription, kw: dict, t: int) -> tuple[np.ndarray, np.ndarray]:
    """The tilt of the dial as a rotation vector (wx, wy) in radians, each (T,).

    A bound gives the two components as inputs; a measured tilt gives β and the azimuth φ
    of the tilt axis: (wx, wy) = β(cos φ, sin φ).
    """
    g = rig.geometry
    if "tilt_x_deg" in kw:
        return np.radians(kw["tilt_x_deg"]), np.radians(kw["tilt_y_deg"])
    if g.tilt_deg is not None:
        beta = np.radians(kw.get("tilt_deg", np.full(t, g.tilt_deg)))
        az = np.radians(kw["tilt_azimuth_deg"]) if "tilt_azimuth_deg" in kw \
            else np.full(t, math.radians(g.tilt_azimuth_deg))
        return beta * np.cos(az), beta * np.sin(az)
    return np.zeros(t), np.zeros(t)


def image_points(rig: RigDescription, kw: dict, t: int, dial_deg: np.ndarray,
                 reading_deg: np.ndarray | None = None, zero_deg: np.ndarray | None = None,
                 shift_mm: Callable[[np.ndarray, np.ndarray], None] | None = None
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Noise-free image coordinates (x right, y down, px) of every located point, each (n_points, T).

    ``dial_deg`` are the points' nominal directions (:func:`dial_angles_deg`); ``reading_deg``
    (n_readings, T), if given, replaces the readings (angles travelled from the zero image);
    ``zero_deg`` (T,), if given, is where the pointer rests in the zero image (travelled from its
    nominal); ``shift_mm(x, y)``, if given, adds to the points' dial-plane x, y (mm, x right, y up;
    each (n_points, T)) in place how far each has moved (the pivot's play). ``kw`` holds the trial
    values (T,) of the geometric inputs (tilt, target height, mark offset, k1).

    Every row is written once: the readings' (and the zero image's) from their angles, the others
    from the nominal directions.
    """
    g = rig.geometry
    n_read = len(rig.nominal_angles_deg)
    r_mm = g.pointer_radius_mm
    h = kw.get("target_height_mm", np.full(t, g.target_height_mm))
    n = len(dial_deg)
    x = np.empty((n, t))
    y = np.empty((n, t))
    fixed = np.ones(n, dtype=bool)  # rows at their nominal direction
    if reading_deg is not None:  # only the readings move from trial to trial
        _reading_dial_xy(rig, reading_deg, out=(x[1:1 + n_read], y[1:1 + n_read]))
        fixed[1:1 + n_read] = False
    if zero_deg is not None:  # the pointer's rest in the zero image (its repeatability)
        _reading_dial_xy(rig, zero_deg, out=(x[0], y[0]))
        fixed[0] = False
    if fixed.any():  # by the readings' arithmetic, so that a row is the same value either way
        fx, fy = np.empty(fixed.sum()), np.empty(fixed.sum())
        cos_sin_deg(np.asarray(dial_deg, dtype=float)[fixed], (fx, fy), scale=r_mm)
        x[fixed] = fx[:, None]
        y[fixed] = fy[:, None]
    if shift_mm is not None:
        shift_mm(x, y)
    z = h  # one height per trial, the same for every target point
    if rig.pivot.method == "mark":  # the mark sits on the dial at the pivot
        x[-1] = kw.get("mark_offset_x_mm", 0.0)
        y[-1] = kw.get("mark_offset_y_mm", 0.0)
        z = np.broadcast_to(h, x.shape).copy()
        z[-1] = 0.0
    return _dial_to_image(rig, kw, t, x, y, z)


def reading_image_points(rig: RigDescription, kw: dict, t: int, reading_deg: np.ndarray
                         ) -> tuple[np.ndarray, np.ndarray]:
    """Image coordinates of some readings alone, (k, T) each, for reading angles ``reading_deg`` (k, T).

    Row for row the same arithmetic as the readings' rows of :func:`image_points` with the same
    ``kw`` (the virtual rig uses it to project only the readings that move when the geometric
    inputs are held: ``kw`` then holds one trial, t = 1, and broadcasts over the readings' T).
    """
    x, y = _reading_dial_xy(rig, reading_deg)
    h = kw.get("target_height_mm", np.full(t, rig.geometry.target_height_mm))
    return _dial_to_image(rig, kw, t, x, y, h)


def _reading_dial_xy(rig: RigDescription, reading_deg: np.ndarray,
                     out: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Dial-plane x, y (mm) of the pointer tip at reading angles ``reading_deg`` (into ``out`` if given)."""
    g = rig.geometry
    # zero direction ± reading (the travel's sign), in degrees
    moved = np.add(reading_deg, g.zero_direction_deg) if travel_sign(rig) > 0 \
        else np.subtract(g.zero_direction_deg, reading_deg)
    if out is None:
        out = (np.empty_like(moved), np.empty_like(moved))
    cos_sin_deg(moved, out, scale=g.pointer_radius_mm)
    return out


def _dial_to_image(rig: RigDescription, kw: dict, t: int, x: np.ndarray, y: np.ndarray, z: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Dial points (mm) tilted, offset, projected and distorted into image coordinates (px)."""
    g = rig.geometry
    wx, wy = tilt_vector(rig, kw, t)
    xr, yr, zr = rotate_tilt(x, y, z, wx, wy)
    xr += g.pivot_offset_x_mm
    yr -= g.pivot_offset_y_mm  # the offset is along the image's y (down); the dial frame's y is up
    k1 = kw["k1"] if "k1" in kw else 0.0
    u, v = project(xr, yr, zr, focal_px=rig.focal_px, distance_mm=g.working_distance_mm, k1=k1)
    cx, cy = principal_point(rig)
    u += cx
    np.subtract(cy, v, out=v)
    return u, v


def estimate_pivot(rig: RigDescription, img_x: np.ndarray, img_y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The pivot as the user finds it from the located points, each (T,).

    Rows of ``img_x``, ``img_y`` (n_points, T) follow :func:`point_labels`. A mark is the
    pivot; otherwise a circle is fitted (:func:`budget.rig.pivot.fit_circle`) to the zero
    image and the readings, or to the pivot-arc points.
    """
    method = rig.pivot.method
    if method == "mark":
        return img_x[-1], img_y[-1]
    n_read = len(rig.nominal_angles_deg)
    rows = slice(1 + n_read, None) if method == "arc" else slice(0, 1 + n_read)
    xc, yc, _ = fit_circle(img_x[rows], img_y[rows], axis=0)
    return xc, yc


def true_pivot_image(rig: RigDescription, kw: dict, t: int) -> tuple[np.ndarray, np.ndarray]:
    """Image coordinates of the true pivot, each (T,): the dial's origin, which the tilt (a rotation about
    it) leaves in place, projected with the trial's distortion. The pivot a perfect mark would give."""
    g = rig.geometry
    x = np.full(t, g.pivot_offset_x_mm)
    y = np.full(t, -g.pivot_offset_y_mm)
    u, v = project(x, y, np.zeros(t), focal_px=rig.focal_px, distance_mm=g.working_distance_mm,
                   k1=kw["k1"] if "k1" in kw else 0.0)
    cx, cy = principal_point(rig)
    return u + cx, cy - v


def reading_angles_deg(rig: RigDescription, img_x: np.ndarray, img_y: np.ndarray,
                       pivot: tuple[np.ndarray, np.ndarray] | None = None) -> np.ndarray:
    """The readings' angles about the estimated pivot relative to the zero image, (n, T) deg.

    Rows of ``img_x``, ``img_y`` (n_points, T; image coordinates) follow :func:`point_labels`. The angle
    travelled from the zero image in the rig's ``travel`` direction (the screen angle of
    :func:`screen_angles_deg`, taken by :func:`budget.rig.trig.screen_angles_near_deg` near the nominal,
    times :func:`travel_sign`), on the branch nearest the nominal reading. ``pivot`` (each (T,)), if given,
    replaces the pivot the rig's method finds (:func:`true_pivot_image` for an exact pivot).
    """
    xc, yc = estimate_pivot(rig, img_x, img_y) if pivot is None else pivot
    n_read = len(rig.nominal_angles_deg)
    x0, y0 = img_x[0] - xc, img_y[0] - yc
    sign = travel_sign(rig)
    angle = screen_angles_near_deg(x0, y0, img_x[1:1 + n_read], img_y[1:1 + n_read], (xc, yc),
                                   sign * np.array(rig.nominal_angles_deg))
    if sign < 0:
        np.negative(angle, out=angle)
    return angle
