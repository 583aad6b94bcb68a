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

from collections.abc import Callable

import numpy as np

from budget.fit import ols_batch
from budget.rig.description import RigDescription, point_labels
from budget.rig.evaluation import as_point_scatter
from budget.rig.geometry import (
    dial_angles_deg,
    image_points,
    principal_point,
    reading_angles_deg,
    reading_image_points,
    true_pivot_image,
)
from budget.rig.source import shared_names

__all__ = ["VirtualRig", "LOCATOR_KINDS"]

_FLOAT = np.dtype(float)
LOCATOR_KINDS = ("quant", "lock", "noise", "fpn", "resid")
"""The located points' own errors along one image axis (px), in the order they are added; inputs
``{kind}_{x|y}_{label}``."""


def _add_rows(arr: np.ndarray, kw: dict, keys: list[tuple[int, str]], scale: float = 1.0) -> None:
    """``arr[row] += kw[key]·scale`` for every (row, key) present (rows are contiguous).

    An input held at exactly zero in every trial (a broadcast view of 0.0, as the linear method
    and the one-component Monte Carlo pass a zero-mean error they do not move) adds nothing and
    is skipped.
    """
    for row, key in keys:
        if key in kw:
            a = kw[key]
            if a.strides == (0,) and a[0] == 0.0:
                continue
            arr[row] += a * scale if scale != 1.0 else a


class VirtualRig:
    """The measurement model of one rig as a vectorized callable.

    Called with keyword arrays named like :func:`budget.rig.components.build_inputs`
    (every array of one length T), it returns ``{"P1": angle_deg, …}`` and, for a
    sweep, ``"gain"`` (deg/V) and ``"intercept"`` (deg). With ``exact_pivot`` the angles are taken about
    the true pivot (what the budget would be with a perfect pivot mark): the attribution of a fitted pivot.

    Inside, arrays over points or readings are (n, T): one contiguous row per point
    (see :mod:`budget.rig.geometry`).
    """

    max_chunk = 4096
    """Most trials per call for the Monte Carlo (:func:`budget.propagation.montecarlo.chunk_trials`), so that
    the (points, trials) arrays of a 52-point sweep stay small (in process its nine one-component runs took
    1.03–1.06 s against 1.36 s at 8192; alternating rounds did not show it again: benchmarks/README.md)."""

    def __init__(self, rig: RigDescription, type_a: dict | None = None, exact_pivot: bool = False) -> None:
        self.rig = rig
        self.exact_pivot = exact_pivot  # the angles about the true pivot, not the one the rig's method finds
        self.labels = point_labels(rig)
        # input name -> (column, unit vector in the image) of the frames' principal axes and drifts
        self.directions: dict[str, tuple[int, float, float]] = {}
        for lab, pt in (type_a or {}).items():
            for name, (ux, uy) in as_point_scatter(lab, pt).directions().items():
                self.directions[name] = (self.labels.index(lab), ux, uy)
        self.n_read = len(rig.nominal_angles_deg)
        self.nominal_deg = np.array(rig.nominal_angles_deg)
        self.dial_deg = dial_angles_deg(rig)
        cam = rig.camera
        self.pitch_mm = cam.pitch_um * 1e-3
        m = rig.motion
        self.rate = m.rate_deg_per_s if m.state == "moving" else 0.0
        self.stamp_offset_s = 0.5 * cam.exposure_ms * 1e-3 if m.timestamp == "start" else 0.0
        readings = range(self.n_read)
        self.per_reading = {name: [(i, f"{name}_P{i + 1}") for i in readings]
                            for name in ("lsb_mv", "inl_mv", "vnoise_mv", "dmm_res_mv", "jitter_ms")}
        self.shared = bool(shared_names(rig))
        self.per_point = {(ax, kind): [(j, f"{kind}_{ax}_{lab}") for j, lab in enumerate(self.labels)]
                          for ax in ("x", "y") for kind in (*LOCATOR_KINDS, "play")}
        self.pointer_rows = {kind: [(i, f"{kind}_deg_P{i + 1}") for i in readings] for kind in ("repeat", "settle")}
        self.mount_px = rig.magnification / self.pitch_mm * 1e-3  # px in the image per µm at the dial
        # Inputs that move the pointer or its pivot on the dial (they shape the image); the fast path of
        # :meth:`_image` holds them at zero only.
        self.pointer_keys = {key for rows in self.pointer_rows.values() for _, key in rows} | {"repeat_deg_Z"} | {
            key for ax in ("x", "y") for _, key in self.per_point[ax, "play"]}
        # Inputs that enter only after the image is formed (locator errors, timing, the meter's
        # readings, the fit's misfit, the zero image's roll and shift), and the reading each per-reading
        # source input moves: what :meth:`_image` may hold when the rest is held.
        located = {key for (_, kind), keys in self.per_point.items() if kind != "play" for _, key in keys}
        self.after_image = located | set(self.directions) | {
            key for name in ("jitter_ms", "dmm_res_mv") for _, key in self.per_reading[name]} | {
            f"misfit_P{i + 1}" for i in readings} | {"misfit_new", "dmm_gain_pct", "dmm_offset_mv", "roll_deg",
                                                     "mount_roll_deg", "mount_shift_x_um", "mount_shift_y_um"}
        self.reading_of = {key: i for name in ("lsb_mv", "inl_mv", "vnoise_mv") for i, key in self.per_reading[name]}
        self._names_checked: frozenset[str] = frozenset()

    # ---- pieces of the chain -------------------------------------------------------
    def _actual_volts(self, kw: dict, t: int, rows: list[int] | None = None) -> np.ndarray:
        """Voltage at the pointer for each set point, (n, T) V; or for the set points ``rows`` only, (k, T)."""
        rig = self.rig
        s = rig.source
        sel = slice(None) if rows is None else rows
        v = np.repeat(np.array(rig.sweep.set_points_v)[sel, None], t, axis=1)
        for name in ("lsb_mv", "inl_mv", "vnoise_mv"):
            keys = self.per_reading[name] if rows is None else [(k, self.per_reading[name][i][1])
                                                                 for k, i in enumerate(rows)]
            _add_rows(v, kw, keys, 1e-3)
        if "source_gain_pct" in kw:
            v *= 1.0 + kw["source_gain_pct"] * 1e-2
        if "source_offset_mv" in kw:
            v += kw["source_offset_mv"] * 1e-3
        if "source_zout_ohm" in kw and s.load_resistance_ohm is not None:
            rl = s.load_resistance_ohm
            v *= rl / (rl + kw["source_zout_ohm"])
        return v

    def _fit_volts(self, kw: dict, t: int, v_actual: np.ndarray) -> np.ndarray:
        """The x values of the user's fit: commanded set points (n,) or the meter's readings (n, T)."""
        rig = self.rig
        if rig.source is None or rig.source.readback == "commanded":
            return np.array(rig.sweep.set_points_v)
        x = v_actual.copy()
        if "dmm_gain_pct" in kw:
            x *= 1.0 + kw["dmm_gain_pct"] * 1e-2
        if "dmm_offset_mv" in kw:
            x += kw["dmm_offset_mv"] * 1e-3
        _add_rows(x, kw, self.per_reading["dmm_res_mv"], 1e-3)
        return x

    def _locator_errors(self, kw: dict, img_x: np.ndarray, img_y: np.ndarray) -> None:
        for ax, arr in (("x", img_x), ("y", img_y)):
            for kind in LOCATOR_KINDS:  # this order of additions per point
                _add_rows(arr, kw, self.per_point[ax, kind])
        for key, (j, ux, uy) in self.directions.items():
            if key in kw:
                img_x[j] += kw[key] * ux
                img_y[j] += kw[key] * uy
        if kw.keys() != self._names_checked:  # once per set of input names (every chunk of a run has one)
            axial = ("noise_major_", "noise_minor_", "drift_")
            unknown = [k for k in kw if k.startswith(axial) and k not in self.directions]
            if unknown:  # an error along an axis the model was not told: never drop it silently
                raise ValueError(f"VirtualRig was built without the Type A data of {unknown}; pass type_a")
            self._names_checked = frozenset(kw)

    def _misfit_deg(self, kw: dict, t: int) -> np.ndarray | None:
        """Per-point discrepancies of the straight line (``misfit_Pj``, deg, (n, T)): they enter the fit
        only; None when there are none."""
        keys = [(i, f"misfit_P{i + 1}") for i in range(self.n_read)]
        if not any(key in kw for _, key in keys):
            return None
        out = np.zeros((self.n_read, t))
        _add_rows(out, kw, keys)
        return out

    # ---- the model ---------------------------------------------------------------
    def __call__(self, **kw: np.ndarray) -> dict[str, np.ndarray]:
        t = len(next(iter(kw.values()))) if kw else 1
        for a in kw.values():  # the engines pass float arrays; anything else is converted, once
            if type(a) is not np.ndarray or a.dtype is not _FLOAT:
                kw = {k: np.asarray(a, dtype=float) for k, a in kw.items()}
                break
        sweep = self.rig.sweep
        volts, img_x, img_y = self._image(kw, t)
        if "roll_deg" in kw or "mount_roll_deg" in kw:  # the camera re-mounted or rolled after the zero image
            r = np.radians(kw.get("roll_deg", 0.0) + kw.get("mount_roll_deg", 0.0))  # counterclockwise, about
            cx, cy = principal_point(self.rig)
            x0, y0 = img_x[0] - cx, cy - img_y[0]
            img_x[0] = cx + np.cos(r) * x0 - np.sin(r) * y0
            img_y[0] = cy - (np.sin(r) * x0 + np.cos(r) * y0)
        if "mount_shift_x_um" in kw:  # the camera shifted after the zero image: the zero image is off by it
            img_x[0] = img_x[0] + kw["mount_shift_x_um"] * self.mount_px
            img_y[0] = img_y[0] + kw["mount_shift_y_um"] * self.mount_px
        self._locator_errors(kw, img_x, img_y)
        pivot = true_pivot_image(self.rig, kw, t) if self.exact_pivot else None
        angle = reading_angles_deg(self.rig, img_x, img_y, pivot)
        if self.rate != 0.0:
            angle += self._timing_deg(kw, t, img_y[1:1 + self.n_read])
        out = {f"P{i + 1}": angle[i] for i in range(self.n_read)}
        if sweep is not None:
            x = self._fit_volts(kw, t, volts)
            misfit = self._misfit_deg(kw, t)
            slope, intercept = ols_batch(x.T, (angle if misfit is None else angle + misfit).T)
            out["gain"] = slope
            out["intercept"] = intercept
            if "misfit_new" in kw:  # a rejected line's discrepancy at a new point, for predictions
                out["line_discrepancy"] = kw["misfit_new"].copy()
            if self.shared:  # what calibration and use share, for predictions (budget.rig.prediction)
                a, c = self._use_map(kw, t)
                out["gain_shared"] = sweep.nominal_gain_deg_per_v * (a - 1.0)
                out["intercept_shared"] = sweep.nominal_gain_deg_per_v * c
        return out

    def _use_map(self, kw: dict, t: int) -> tuple[np.ndarray, np.ndarray]:
        """The straight line V_pointer = a·x + c from the fit's x (commanded or read back) to the voltage at
        the pointer, from the terms shared by every set point (gain, offset, output divider; or the
        meter's ±% and ±counts): the same in calibration and later use, so a prediction cancels them."""
        s = self.rig.source
        a, c = np.ones(t), np.zeros(t)
        if s.readback == "commanded":
            if "source_gain_pct" in kw:
                a = a + kw["source_gain_pct"] * 1e-2
            if "source_offset_mv" in kw:
                c = c + kw["source_offset_mv"] * 1e-3
            if "source_zout_ohm" in kw and s.load_resistance_ohm is not None:
                f = s.load_resistance_ohm / (s.load_resistance_ohm + kw["source_zout_ohm"])
                a, c = a * f, c * f
            return a, c
        g = 1.0 + kw["dmm_gain_pct"] * 1e-2 if "dmm_gain_pct" in kw else np.ones(t)
        mo = kw["dmm_offset_mv"] * 1e-3 if "dmm_offset_mv" in kw else np.zeros(t)
        return 1.0 / g, -mo / g

    def _pointer_deg(self, kw: dict, t: int, true_deg: np.ndarray | None) -> np.ndarray | None:
        """Where the pointer rests for each reading, (n, T) deg from the zero image: the nominal (or the
        sweep's true angle, which this adds to in place) plus its repeatability and settling; None when
        neither is an input."""
        keys = [k for rows in self.pointer_rows.values() for _, k in rows if k in kw]
        if not keys:
            return true_deg
        out = np.repeat(self.nominal_deg[:, None], t, axis=1) if true_deg is None else true_deg
        for rows in self.pointer_rows.values():
            _add_rows(out, kw, rows)
        return out

    def _play_mm(self, kw: dict) -> Callable[[np.ndarray, np.ndarray], None] | None:
        """What adds the pivot's play at every located point (dx, dy in mm, dial x right, y up) into the
        dial-plane points, row by row in place (:func:`budget.rig.geometry.image_points`); None without play."""
        if not any(k in kw for _, k in self.per_point["x", "play"]):
            return None

        def shift(x: np.ndarray, y: np.ndarray) -> None:
            _add_rows(x, kw, self.per_point["x", "play"])
            _add_rows(y, kw, self.per_point["y", "play"])
        return shift

    def _image(self, kw: dict, t: int) -> tuple[np.ndarray | None, np.ndarray, np.ndarray]:
        """The voltages at the pointer (sweep; else None) and the noise-free image points (n, T).

        When every input that shapes the image is held (the same value in every trial: a
        read-only broadcast view, as the linear method's pair stencil and the one-component Monte
        Carlo pass them), the image is formed once and repeated, and only the readings whose own
        source inputs move are projected trial by trial, by the same arithmetic (the
        geometry's one home, :mod:`budget.rig.geometry`). Voltages are then None with commanded
        set points (the fit does not read them).
        """
        sweep = self.rig.sweep
        rows = self._moving_readings(kw, t)
        if rows is None:  # the image varies from trial to trial
            volts = self._actual_volts(kw, t) if sweep is not None else None
            true_deg = self._pointer_deg(kw, t, sweep.nominal_gain_deg_per_v * volts if sweep is not None else None)
            img_x, img_y = image_points(self.rig, kw, t, self.dial_deg, reading_deg=true_deg,
                                        zero_deg=kw.get("repeat_deg_Z"), shift_mm=self._play_mm(kw))
            return volts, img_x, img_y
        kw1 = {k: a[:1] for k, a in kw.items()}
        one = self._actual_volts(kw1, 1) if sweep is not None else None
        x1, y1 = image_points(self.rig, kw1, 1, self.dial_deg,
                              reading_deg=None if one is None else sweep.nominal_gain_deg_per_v * one)
        img_x, img_y = np.repeat(x1, t, axis=1), np.repeat(y1, t, axis=1)
        volts = None
        if sweep is not None:
            dmm = self.rig.source is not None and self.rig.source.readback != "commanded"
            volts = self._actual_volts(kw, t) if dmm else None
            if rows:
                moved = volts[rows] if dmm else self._actual_volts(kw, t, rows)
                x, y = reading_image_points(self.rig, kw1, 1, sweep.nominal_gain_deg_per_v * moved)
                at = [1 + i for i in rows]
                img_x[at], img_y[at] = x, y
        return volts, img_x, img_y

    def costly_inputs(self, names) -> list[str]:
        """The inputs among ``names`` whose movement makes the whole image vary (every input not known
        to enter after the image or through one reading's voltage): the linear method's pair stencil
        tiles them apart (:func:`budget.propagation.stencils.pair_values`)."""
        return [nm for nm in names if nm not in self.after_image and nm not in self.reading_of]

    def additive_inputs(self, names) -> list[dict[str, float]]:
        """Sets of inputs among ``names`` that the rig reads only through their sum, each ``{name: 1.0}``:
        the locator's errors of one point along one image axis (added to that coordinate, px), the
        source's errors at one set point (added to its voltage, mV) and the pointer's repeatability and
        settling at one reading (added to where it rests, deg). The linear method's second-order terms
        count each set as one quantity (:func:`budget.propagation.stencils.paired_inputs`); tests/rig/
        test_additive_inputs.py holds the rig to this."""
        have = set(names)
        sets = [[self.per_point[ax, kind][j][1] for kind in LOCATOR_KINDS]
                for ax in ("x", "y") for j in range(len(self.labels))]
        for i in range(self.n_read):
            sets.append([self.per_reading[name][i][1] for name in ("lsb_mv", "inl_mv", "vnoise_mv")])
            sets.append([self.pointer_rows[kind][i][1] for kind in ("repeat", "settle")])
        return [{key: 1.0 for key in keys if key in have} for keys in sets]

    def additive_apart(self, estimates: dict[str, float]) -> list[tuple[dict[str, float], tuple[str, ...]]]:
        """Sets of inputs the rig reads only through their sum while the source's gain and load impedance
        are held, each ``({name: c_a}, apart)`` with c_a at the ``estimates`` (name: value) of those two.

        At each set point of a sweep whose fit takes the commanded voltages, the source's errors (mV) and the
        pointer's repeatability and settling (deg) enter only the pointer's angle, θ = K·v + offsets with
        v = ((V + e·10⁻³)(1 + g·10⁻²) + o·10⁻³)·R_L/(R_L + Z) (:meth:`_actual_volts`): e weighs
        K·10⁻³(1 + g·10⁻²)·R_L/(R_L + Z) there, the offsets 1. The linear method's second-order terms count
        each set as one quantity in the pairs that move neither g nor Z
        (:mod:`budget.propagation.second_order`). With a read-back meter the fit reads the voltages too:
        no such sets."""
        sweep, s = self.rig.sweep, self.rig.source
        if sweep is None or s is None or s.readback != "commanded":
            return []
        w = sweep.nominal_gain_deg_per_v * 1e-3 * (1.0 + estimates.get("source_gain_pct", 0.0) * 1e-2)
        if "source_zout_ohm" in estimates and s.load_resistance_ohm is not None:
            w *= s.load_resistance_ohm / (s.load_resistance_ohm + estimates["source_zout_ohm"])
        out = []
        for i in range(self.n_read):
            members = {self.per_reading[nm][i][1]: w for nm in ("lsb_mv", "inl_mv", "vnoise_mv")}
            members.update({self.pointer_rows[kind][i][1]: 1.0 for kind in ("repeat", "settle")})
            out.append(({k: c for k, c in members.items() if k in estimates}, ("source_gain_pct", "source_zout_ohm")))
        return out

    def _moving_readings(self, kw: dict, t: int) -> list[int] | None:
        """The readings whose source inputs vary across the trials when nothing else that shapes the
        image does; None when something else does (or T = 1: nothing to save).

        An input varies unless it is a broadcast view (stride 0) of one value; an input this
        class does not know to enter after the image counts as shaping it.
        """
        if t < 2:
            return None
        rows: set[int] = set()
        for key, a in kw.items():
            if key in self.pointer_keys and a.size and a[0] != 0.0:
                return None  # the pointer or its pivot held off its place: the readings' fast path omits it
            if a.strides == (0,) or key in self.after_image:
                continue
            i = self.reading_of.get(key)
            if i is None:
                return None
            rows.add(i)
        return sorted(rows)

    def _timing_deg(self, kw: dict, t: int, img_y: np.ndarray) -> np.ndarray:
        """ω·(timestamp offset + rolling-shutter row delay + jitter) for a moving pointer."""
        if self.rate == 0.0:
            return np.zeros((self.n_read, t))
        cam = self.rig.camera
        delay = np.full((self.n_read, t), self.stamp_offset_s)
        if cam.shutter == "rolling":
            # the row index is the image y (row 0 at the top, read first, at the timestamp)
            delay = delay + img_y * cam.row_time_us * 1e-6
        _add_rows(delay, kw, self.per_reading["jitter_ms"], 1e-3)
        return self.rate * delay
