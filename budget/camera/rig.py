"""The virtual rig: one vectorized function from error sources to the reported numbers.

true pointer angles -> dial-plane target points -> camera projection (tilt,
pivot off-axis, parallax) -> lens distortion -> pixel coordinates -> locator
errors -> the pivot as the user finds it -> atan2 angle about the estimated pivot
relative to the zero image -> timing -> (sweep) straight-line fit of angle against
voltage -> outputs.

The same :class:`VirtualRig` instance is differentiated by the linear method and
sampled by Monte Carlo, so the two methods cannot disagree about the model.
"""

from __future__ import annotations

import math

import numpy as np

from budget.camera.circle import fit_circle
from budget.camera.components import point_labels
from budget.camera.description import RigDescription
from budget.fit import ols_batch

__all__ = ["VirtualRig", "nominal_image_points", "rotate_tilt", "project"]


def rotate_tilt(x: np.ndarray, y: np.ndarray, z: np.ndarray, wx: np.ndarray, wy: np.ndarray):
    """Rotate points by the rotation vector (wx, wy, 0) (radians), Rodrigues' formula.

    The dial plane tilted by β = |w| about the in-plane axis at azimuth
    atan2(wy, wx). In the orthographic limit a dial angle θ is seen at θ′ with
    tan(θ′ − φ) = cos β·tan(θ − φ) [derived].
    """
    beta2 = wx * wx + wy * wy
    beta = np.sqrt(beta2)
    c = np.cos(beta)
    a = np.sinc(beta / np.pi)  # sin β / β, exact at β = 0
    b = 0.5 * np.sinc(beta / (2 * np.pi)) ** 2  # (1 − cos β)/β²
    dot = wx * x + wy * y
    # w × v with w = (wx, wy, 0)
    cx, cy, cz = wy * z, -wx * z, wx * y - wy * x
    return (c * x + a * cx + b * wx * dot,
            c * y + a * cy + b * wy * dot,
            c * z + a * cz)


def project(x, y, z, *, focal_px: float, distance_mm: float, k1=0.0):
    """Pinhole projection of points (mm, z towards the camera) to px about the principal point.

    Radial lens distortion x_d = x(1 + k1·r²) on normalized coordinates
    (Brown–Conrady, first radial term).
    """
    s = focal_px / (distance_mm - z)
    u, v = s * x, s * y
    if np.any(k1 != 0.0):
        r2 = (u * u + v * v) / focal_px**2
        u, v = u * (1 + k1 * r2), v * (1 + k1 * r2)
    return u, v


def _dial_angles_deg(rig: RigDescription) -> np.ndarray:
    """Nominal dial angles (deg, from the dial's x axis) of every located point."""
    g = rig.geometry
    z0 = g.zero_direction_deg
    angles = [z0, *(z0 + a for a in rig.nominal_angles_deg)]
    if rig.pivot.method == "arc":
        mid = rig.pivot.arc_centre_deg
        if mid is None:
            nominal = rig.nominal_angles_deg
            mid = 0.5 * (min(0.0, *nominal) + max(0.0, *nominal))
        half = rig.pivot.arc_half_angle_deg
        angles += list(z0 + mid + np.linspace(-half, half, rig.pivot.arc_points))
    elif rig.pivot.method == "mark":
        angles.append(0.0)  # placeholder: the mark's position is set in the model
    return np.array(angles, dtype=float)


def nominal_image_points(rig: RigDescription) -> tuple[np.ndarray, np.ndarray]:
    """Image coordinates (px from the principal point) of every located point, no errors."""
    rv = VirtualRig(rig)
    x, y = rv._image_points({}, 1)
    return x[0], y[0]


class VirtualRig:
    """The measurement model of one rig as a vectorized callable.

    Called with keyword arrays named like :func:`budget.camera.components.build_inputs`
    (every array of one length T), it returns ``{"P1": angle_deg, …}`` and, for a
    sweep, ``"gain"`` (deg/V) and ``"intercept"`` (deg).
    """

    def __init__(self, rig: RigDescription) -> None:
        self.rig = rig
        self.labels = point_labels(rig)
        self.n_read = len(rig.nominal_angles_deg)
        self.nominal_deg = np.array(rig.nominal_angles_deg)
        self.dial_deg = _dial_angles_deg(rig)
        self.focal_px = rig.focal_px
        cam = rig.camera
        self.pitch_mm = cam.pitch_um * 1e-3
        m = rig.motion
        self.rate = m.rate_deg_per_s if m.state == "moving" else 0.0
        self.stamp_offset_s = 0.5 * cam.exposure_ms * 1e-3 if m.timestamp == "start" else 0.0

    # ---- pieces of the chain -------------------------------------------------------
    def _true_reading_angles(self, kw: dict, t: int) -> np.ndarray:
        """True pointer angles of the readings relative to the zero image, (T, n) deg."""
        rig = self.rig
        if rig.sweep is None:
            return np.broadcast_to(np.array(rig.nominal_angles_deg), (t, self.n_read))
        return rig.sweep.nominal_gain_deg_per_v * self._actual_volts(kw, t)

    def _actual_volts(self, kw: dict, t: int) -> np.ndarray:
        """Voltage at the pointer for each set point, (T, n) V."""
        rig = self.rig
        s = rig.source
        v = np.broadcast_to(np.array(rig.sweep.set_points_v), (t, self.n_read)).copy()
        for name in ("lsb_mv", "inl_mv", "vnoise_mv"):
            for i in range(self.n_read):
                key = f"{name}_P{i + 1}"
                if key in kw:
                    v[:, i] += kw[key] * 1e-3
        if "source_gain_pct" in kw:
            v *= (1.0 + kw["source_gain_pct"] * 1e-2)[:, None]
        if "source_offset_mv" in kw:
            v += (kw["source_offset_mv"] * 1e-3)[:, None]
        if "source_zout_ohm" in kw and s.load_resistance_ohm is not None:
            rl = s.load_resistance_ohm
            v *= (rl / (rl + kw["source_zout_ohm"]))[:, None]
        return v

    def _fit_volts(self, kw: dict, t: int, v_actual: np.ndarray) -> np.ndarray:
        """The x values of the user's fit: commanded set points or the meter's readings."""
        rig = self.rig
        if rig.source is None or rig.source.readback == "commanded":
            return np.array(rig.sweep.set_points_v)
        x = v_actual.copy()
        if "dmm_gain_pct" in kw:
            x *= (1.0 + kw["dmm_gain_pct"] * 1e-2)[:, None]
        if "dmm_offset_mv" in kw:
            x += (kw["dmm_offset_mv"] * 1e-3)[:, None]
        for i in range(self.n_read):
            key = f"dmm_res_mv_P{i + 1}"
            if key in kw:
                x[:, i] += kw[key] * 1e-3
        return x

    def _tilt(self, kw: dict, t: int) -> tuple[np.ndarray, np.ndarray]:
        g = self.rig.geometry
        if "tilt_x_deg" in kw:
            return np.radians(kw["tilt_x_deg"]), np.radians(kw["tilt_y_deg"])
        if g.tilt_deg is not None:
            beta = np.radians(kw.get("tilt_deg", np.full(t, g.tilt_deg)))
            az = np.radians(kw["tilt_azimuth_deg"]) if "tilt_azimuth_deg" in kw \
                else np.full(t, math.radians(g.tilt_azimuth_deg))
            return beta * np.cos(az), beta * np.sin(az)
        return np.zeros(t), np.zeros(t)

    def _image_points(self, kw: dict, t: int, reading_deg: np.ndarray | None = None):
        """Noise-free image coordinates (px) of every located point, each (T, n_points)."""
        rig, g = self.rig, self.rig.geometry
        r_mm = g.pointer_radius_mm
        h = kw.get("target_height_mm", np.full(t, g.target_height_mm))[:, None]
        dial = np.broadcast_to(np.radians(self.dial_deg), (t, self.dial_deg.size)).copy()
        if reading_deg is not None:
            dial[:, 1:1 + self.n_read] = np.radians(g.zero_direction_deg + reading_deg)
        x = r_mm * np.cos(dial)
        y = r_mm * np.sin(dial)
        z = np.broadcast_to(h, dial.shape).copy()
        if rig.pivot.method == "mark":  # the mark sits on the dial at the pivot
            x[:, -1] = kw.get("mark_offset_x_mm", 0.0)
            y[:, -1] = kw.get("mark_offset_y_mm", 0.0)
            z[:, -1] = 0.0
        wx, wy = self._tilt(kw, t)
        xr, yr, zr = rotate_tilt(x, y, z, wx[:, None], wy[:, None])
        xr = xr + g.pivot_offset_x_mm
        yr = yr + g.pivot_offset_y_mm
        k1 = kw["k1"][:, None] if "k1" in kw else 0.0
        return project(xr, yr, zr, focal_px=self.focal_px, distance_mm=g.working_distance_mm, k1=k1)

    def _locator_errors(self, kw: dict, u: np.ndarray, v: np.ndarray) -> None:
        for j, lab in enumerate(self.labels):
            for ax, arr in (("x", u), ("y", v)):
                for kind in ("quant", "lock", "noise", "resid"):
                    key = f"{kind}_{ax}_{lab}"
                    if key in kw:
                        arr[:, j] += kw[key]

    # ---- the model ---------------------------------------------------------------
    def __call__(self, **kw: np.ndarray) -> dict[str, np.ndarray]:
        t = len(next(iter(kw.values()))) if kw else 1
        kw = {k: np.asarray(a, dtype=float) for k, a in kw.items()}
        true_deg = self._true_reading_angles(kw, t)
        u, v = self._image_points(kw, t, reading_deg=true_deg if self.rig.sweep is not None else None)
        u, v = u.copy(), v.copy()
        if "roll_deg" in kw:  # the zero image was taken before the camera was re-mounted
            r = np.radians(kw["roll_deg"])
            u0, v0 = u[:, 0].copy(), v[:, 0].copy()
            u[:, 0] = np.cos(r) * u0 - np.sin(r) * v0
            v[:, 0] = np.sin(r) * u0 + np.cos(r) * v0
        self._locator_errors(kw, u, v)
        xc, yc = self._pivot(u, v)
        rx, ry = u - xc[:, None], v - yc[:, None]
        x0, y0 = rx[:, :1], ry[:, :1]
        xs, ys = rx[:, 1:1 + self.n_read], ry[:, 1:1 + self.n_read]
        angle = np.degrees(np.arctan2(x0 * ys - y0 * xs, x0 * xs + y0 * ys))
        # atan2 answers in (−180°, 180°]; the user's reading is the branch nearest its nominal.
        angle = self.nominal_deg + (angle - self.nominal_deg + 180.0) % 360.0 - 180.0
        angle = angle + self._timing_deg(kw, t, v[:, 1:1 + self.n_read])
        out = {f"P{i + 1}": angle[:, i] for i in range(self.n_read)}
        if self.rig.sweep is not None:
            x = self._fit_volts(kw, t, self._actual_volts(kw, t))
            slope, intercept = ols_batch(x, angle)
            out["gain"] = slope
            out["intercept"] = intercept
        return out

    def _pivot(self, u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        method = self.rig.pivot.method
        if method == "mark":
            return u[:, -1], v[:, -1]
        if method == "arc":
            xc, yc, _ = fit_circle(u[:, 1 + self.n_read:], v[:, 1 + self.n_read:])
            return xc, yc
        xc, yc, _ = fit_circle(u[:, :1 + self.n_read], v[:, :1 + self.n_read])
        return xc, yc

    def _timing_deg(self, kw: dict, t: int, v_px: np.ndarray) -> np.ndarray:
        """ω·(timestamp offset + rolling-shutter row delay + jitter) for a moving pointer."""
        if self.rate == 0.0:
            return np.zeros((t, self.n_read))
        cam = self.rig.camera
        delay = np.full((t, self.n_read), self.stamp_offset_s)
        if cam.shutter == "rolling":
            rows = 0.5 * cam.pixels_y - v_px  # rows counted from the top of the sensor
            delay = delay + rows * cam.row_time_us * 1e-6
        for i in range(self.n_read):
            key = f"jitter_ms_P{i + 1}"
            if key in kw:
                delay[:, i] += kw[key] * 1e-3
        return self.rate * delay
