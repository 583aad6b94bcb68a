"""cos, sin and atan2 for the rig's many angles, each near a known value: the virtual rig's hot path.

numpy's double-precision ``cos``, ``sin`` and ``arctan2`` call the C library one value at a time (about
25 ns a value on the 2-core machines here, against under 1 ns for a multiply), and the rig model takes
them for every located point of every trial. The angles it needs lie near values known beforehand (a
reading near its nominal, a node of a table), so both are computed here from a short Taylor series
about such a value, in blocks that stay in the cache:

* :func:`cos_sin_deg`: cos θ and sin θ from a table of cos and sin at every quarter degree and the
  series of the remainder δ (|δ| ≤ 0.125° = 2.2·10⁻³ rad): 1 − cos δ = δ²/2 − δ⁴/24 and sin δ =
  δ − δ³/6 + δ⁵/120, whose first omitted terms (δ⁶/720, δ⁷/5040) are below 2·10⁻¹⁹ (a thousandth of
  the last digit); then cos(b + δ) = cos b − (cos b·(1 − cos δ) + sin b·sin δ), and likewise for sin.
* :func:`screen_angles_near_deg`: the angle from one vector to another, rotated back by a reference
  angle φ per row: atan2(c, d) = φ + atan(t) with t = (c cos φ − d sin φ)/(d cos φ + c sin φ) and
  atan t = t − t³/3 + … − t¹¹/11 for |t| ≤ 1/32 (the first omitted term is below 2⁻⁶⁰·|t|); any value
  farther from its reference (or not finite) is taken by ``np.arctan2`` itself.

Each value is computed by the same arithmetic whatever it is batched with (nothing depends on the
other values in a call), and lies within two units in the last place of the true value, as numpy's
own functions of the angle in extended precision give it (tests/rig/test_trig.py).
"""

from __future__ import annotations

import math

import numpy as np

from budget.scratch import scratch

__all__ = ["cos_sin_deg", "screen_angles_deg", "screen_angles_near_deg"]

_NODES_PER_DEG = 4
_LIMIT_DEG = 720  # the table covers ±2 turns; an angle beyond (or nan) is left to np.cos / np.sin
_OFFSET = _NODES_PER_DEG * _LIMIT_DEG
_BLOCK = 8192  # values a block: its dozen work arrays (budget.scratch, kept between calls) stay in the cache
_ATAN_LIMIT = 1.0 / 32.0


def _table() -> tuple[np.ndarray, np.ndarray]:
    """cos and sin at every node k/4° (|k/4| ≤ 720), each reduced to within 45° of a multiple of 90°
    first, so that the quarter turns are exact (cos 90° = 0, not 6·10⁻¹⁷)."""
    deg = np.arange(-_OFFSET, _OFFSET + 1) / _NODES_PER_DEG
    q = np.round(deg / 90.0)
    r = np.radians(deg - 90.0 * q)  # deg − 90q is exact
    c, s = np.cos(r), np.sin(r)
    turn = q.astype(int) % 4  # cos(r + 90°q), sin(r + 90°q): (c, s), (−s, c), (−c, −s), (s, −c)
    cos = np.choose(turn, (c, -s, -c, s))
    sin = np.choose(turn, (s, c, -s, -c))
    return cos, sin


_COS, _SIN = _table()
_RAD = math.pi / 180.0


def _rows_per_block(shape: tuple[int, ...]) -> int:
    t = shape[-1] if len(shape) > 1 else max(1, shape[0])
    return max(1, _BLOCK // max(1, t))


def cos_sin_deg(angle_deg: np.ndarray, out: tuple[np.ndarray, np.ndarray], scale: float = 1.0) -> None:
    """``out = (scale·cos θ, scale·sin θ)`` for the angles θ = ``angle_deg`` (degrees), written in place.

    ``angle_deg`` and both ``out`` arrays have one shape. An angle beyond ±720° or not finite is taken by
    ``np.cos`` and ``np.sin`` (of the angle in radians) instead.
    """
    a = np.ascontiguousarray(angle_deg, dtype=float).reshape(-1)
    xo, yo = out
    if not (xo.flags.c_contiguous and yo.flags.c_contiguous):  # work on copies, then write them back
        x1, y1 = np.empty(xo.shape), np.empty(yo.shape)
        cos_sin_deg(angle_deg, (x1, y1), scale)
        xo[...], yo[...] = x1, y1
        return
    xf, yf = xo.reshape(-1), yo.reshape(-1)
    for i in range(0, a.size, _BLOCK):
        _cos_sin_block(a[i:i + _BLOCK], xf[i:i + _BLOCK], yf[i:i + _BLOCK], scale)


def _cos_sin_block(a: np.ndarray, xo: np.ndarray, yo: np.ndarray, scale: float) -> None:
    n = a.size
    k, d, d2, sd, cm, cb, sb = (scratch(f"trig{i}", n) for i in range(7))
    idx = scratch("trig_idx", n, np.intp)
    np.multiply(a, float(_NODES_PER_DEG), out=k)
    np.rint(k, out=k)
    beyond = None
    if not (-_OFFSET <= k.min(initial=0.0) and k.max(initial=0.0) <= _OFFSET):  # beyond the table, or nan
        beyond = np.flatnonzero(~(np.abs(k) <= _OFFSET))
        k[beyond] = 0.0
    np.multiply(k, 1.0 / _NODES_PER_DEG, out=d)
    np.subtract(a, d, out=d)  # δ in degrees: exact (a and its node are within a factor 2, or δ = a)
    d *= _RAD
    np.copyto(idx, k, casting="unsafe")
    idx += _OFFSET
    _COS.take(idx, out=cb)
    _SIN.take(idx, out=sb)
    if scale != 1.0:
        cb *= scale
        sb *= scale
    np.multiply(d, d, out=d2)
    np.multiply(d2, 1.0 / 120.0, out=sd)  # sin δ = δ + δ·δ²(−1/6 + δ²/120)
    sd -= 1.0 / 6.0
    sd *= d2
    sd *= d
    sd += d
    np.multiply(d2, -1.0 / 24.0, out=cm)  # 1 − cos δ = δ²(1/2 − δ²/24)
    cm += 0.5
    cm *= d2
    # cos(b + δ) = cos b − (cos b·(1 − cos δ) + sin b·sin δ); sin(b + δ) = sin b − (sin b·(1 − cos δ) − cos b·sin δ)
    np.multiply(cb, cm, out=xo)
    np.multiply(sb, sd, out=d)
    xo += d
    np.subtract(cb, xo, out=xo)
    np.multiply(sb, cm, out=yo)
    np.multiply(cb, sd, out=d)
    yo -= d
    np.subtract(sb, yo, out=yo)
    if beyond is not None:  # the library's functions, value by value
        r = np.radians(a[beyond])
        xo[beyond] = np.cos(r) * scale
        yo[beyond] = np.sin(r) * scale


def screen_angles_deg(x0, y0, x, y) -> np.ndarray:
    """Angle from the vector (x0, y0) to (x, y), both in image coordinates, counterclockwise on screen.

    Notes
    -----
    atan2(r0 × r, r0 · r) with the cross product taken in a y-up frame: with y down it is
    y0·x − x0·y. atan2, never the law of cosines, whose derivative is infinite at zero
    deflection. Result in (−180°, 180°]. The definition; :func:`screen_angles_near_deg` is the fast
    form the rig takes, and falls back on this one.
    """
    return np.degrees(np.arctan2(y0 * x - x0 * y, x0 * x + y0 * y))


def screen_angles_near_deg(x0: np.ndarray, y0: np.ndarray, x: np.ndarray, y: np.ndarray,
                           origin: tuple[np.ndarray, np.ndarray], near_deg: np.ndarray) -> np.ndarray:
    """The angle from the vector (x0, y0) to each (x, y) − ``origin``, in degrees counterclockwise on the
    displayed image (image coordinates, y down), on the branch nearest ``near_deg``: atan2(c, d) with the
    cross product c = y0·x − x0·y taken in a y-up frame and the dot product d = x0·x + y0·y.

    ``x0``, ``y0`` and the two arrays of ``origin`` are (T,); ``x``, ``y`` are (n, T) and ``near_deg`` (n,)
    holds each row's reference. A value within 1.79° (atan 1/32) of its reference is the reference plus
    atan of the remainder by the series; any other is ``np.arctan2``'s, moved by whole turns to the
    branch nearest the reference.
    """
    near = np.ascontiguousarray(near_deg, dtype=float)
    out = np.empty(np.broadcast_shapes(np.shape(x), np.shape(y), np.shape(x0)[-1:], np.shape(y0)[-1:]))
    x0, y0 = np.broadcast_to(x0, out.shape[-1:]), np.broadcast_to(y0, out.shape[-1:])
    step = _rows_per_block(out.shape)
    cos_phi, sin_phi = np.empty((near.size, 1)), np.empty((near.size, 1))
    cos_sin_deg(near, (cos_phi, sin_phi))  # the reference turned to radians exactly, as the readings are
    for i in range(0, out.shape[0], step):
        rows = slice(i, i + step)
        shape = out[rows].shape
        xs, ys = (scratch(name, math.prod(shape)).reshape(shape) for name in ("angle0", "angle1"))
        np.subtract(x[rows], origin[0], out=xs)
        np.subtract(y[rows], origin[1], out=ys)
        _angle_block(x0, y0, xs, ys, cos_phi[rows], sin_phi[rows], near[rows, None], out[rows])
    return out


def _angle_block(x0, y0, x, y, cos_phi, sin_phi, near, out) -> None:
    """One block of :func:`screen_angles_near_deg` (``x``, ``y`` already about the origin)."""
    c, w, d, t = (scratch(f"angle{i}", x.size).reshape(x.shape) for i in range(2, 6))
    np.multiply(y0, x, out=c)  # the cross product y0·x − x0·y
    np.multiply(x0, y, out=w)
    c -= w
    np.multiply(x0, x, out=d)  # the dot product
    np.multiply(y0, y, out=w)
    d += w
    # rotated back by φ: c′ = c cos φ − d sin φ, d′ = d cos φ + c sin φ; then t = c′/d′
    np.multiply(c, cos_phi, out=t)
    np.multiply(d, sin_phi, out=w)
    t -= w
    np.multiply(c, sin_phi, out=w)
    d *= cos_phi
    d += w
    np.divide(t, d, out=t)
    t2 = np.multiply(t, t, out=c)
    p = np.multiply(t2, -1.0 / 11.0, out=w)  # atan t = t + t·t²(−1/3 + t²(1/5 − t²(1/7 − t²(1/9 − t²/11))))
    p += 1.0 / 9.0
    p *= t2
    p -= 1.0 / 7.0
    p *= t2
    p += 1.0 / 5.0
    p *= t2
    p -= 1.0 / 3.0
    p *= t2
    p *= t
    p += t
    np.multiply(p, 180.0 / math.pi, out=out)
    out += near
    # beyond the series' reach, behind the reference (d′ ≤ 0), or not finite: np.arctan2 itself
    np.abs(t, out=t)
    near_enough = np.less_equal(t, _ATAN_LIMIT, out=scratch("angle_ok", t.size, bool).reshape(t.shape))
    near_enough &= np.greater(d, 0.0, out=scratch("angle_ok2", t.size, bool).reshape(t.shape))
    if not near_enough.all():
        far = ~near_enough
        rows, cols = np.nonzero(far)
        a0, b0 = x0[cols], y0[cols]
        xf, yf = x[rows, cols], y[rows, cols]
        dev = screen_angles_deg(a0, b0, xf, yf) - near[rows, 0]
        dev -= 360.0 * np.round(dev / 360.0)
        out[rows, cols] = near[rows, 0] + dev
