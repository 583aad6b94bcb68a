"""The rig's cos, sin and atan2 about known values (budget/rig/trig.py) against numpy's own functions.

References: numpy's ``cos``, ``sin`` and ``arctan2`` evaluated in x86 extended precision (``np.longdouble``,
64-bit significand, errors near 1e-19), rounded to double, stand for the true values; in double precision
``np.cos(np.radians(a))`` itself is off by up to about 1e-15 near ±720° (the rounding of the angle in
radians), so the faster functions are held to the extended-precision values, not to it. The series are
those of Abramowitz & Stegun, Handbook of Mathematical Functions (1964), 4.3.65–4.3.66 (sin, cos) and
4.4.42 (arctan) (clause numbers cited from memory); their error bounds, the first omitted terms, are in the
module's notes. Each check says beside it which of these it rests on, or that it is internal consistency.
"""

from __future__ import annotations

import numpy as np
import pytest

from budget.rig.trig import cos_sin_deg, screen_angles_deg, screen_angles_near_deg

EXTENDED = np.finfo(np.longdouble).precision >= 18
needs_extended = pytest.mark.skipif(not EXTENDED, reason="np.longdouble is not wider than double here")


def _true_cos_sin(a_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    r = a_deg.astype(np.longdouble) * (4 * np.arctan(np.longdouble(1))) / 180
    return np.cos(r).astype(float), np.sin(r).astype(float)


def _angles() -> np.ndarray:
    rng = np.random.default_rng(2026)
    nodes = np.arange(-2880, 2881) / 4.0
    return np.concatenate([rng.uniform(-720.0, 720.0, 100_000), nodes, nodes[:-1] + 0.125, nodes[1:] - 0.125,
                           rng.normal(0.0, 1e-3, 1000), [0.0, 1e-300, -1e-300]])


@needs_extended
def test_cos_sin_agree_with_extended_precision_to_the_last_digits():
    # Reference: numpy's cos and sin in x86 extended precision (np.longdouble), rounded to double.
    a = _angles()
    x, y = np.empty_like(a), np.empty_like(a)
    cos_sin_deg(a, (x, y))
    c, s = _true_cos_sin(a)
    assert np.abs(x - c).max() <= 2.3e-16
    assert np.abs(y - s).max() <= 2.3e-16
    # in units in the last place of the true value, away from its zeros (there the absolute error above is
    # the measure: the angle's own last digit moves the value by about as much)
    for got, true in ((x, c), (y, s)):
        big = np.abs(true) >= 0.1
        assert (np.abs(got - true)[big] / np.spacing(np.abs(true[big]))).max() <= 2.0


def test_quarter_turns_are_exact_and_scale_multiplies():
    # Reference: the exact values of cos and sin at multiples of 90° (their definition); the scale, internal
    # consistency (the same values times 40 to the last digit).
    a = np.array([0.0, 90.0, 180.0, 270.0, -90.0, 360.0, 720.0, -720.0])
    x, y = np.empty_like(a), np.empty_like(a)
    cos_sin_deg(a, (x, y))
    np.testing.assert_array_equal(x, [1, 0, -1, 0, 0, 1, 1, 1])
    np.testing.assert_array_equal(y, [0, 1, 0, -1, -1, 0, 0, 0])
    b = np.array([12.34, -200.5])
    xs, ys = np.empty(2), np.empty(2)
    cos_sin_deg(b, (xs, ys), scale=40.0)
    x1, y1 = np.empty(2), np.empty(2)
    cos_sin_deg(b, (x1, y1))
    np.testing.assert_allclose(xs, 40.0 * x1, rtol=2e-16, atol=0)
    np.testing.assert_allclose(ys, 40.0 * y1, rtol=2e-16, atol=0)


def test_beyond_the_table_or_not_finite_falls_back_to_numpy():
    # Reference: numpy's np.cos and np.sin themselves, bit for bit, for the values the table does not cover;
    # the others, internal consistency (the same values computed alone).
    a = np.array([[1000.0, 3.0], [np.nan, -5000.5], [7.0, 9.0]])
    x, y = np.empty_like(a), np.empty_like(a)
    cos_sin_deg(a, (x, y), scale=2.0)
    far = np.array([[True, False], [True, True], [False, False]])
    np.testing.assert_array_equal(x[far], np.cos(np.radians(a[far])) * 2.0)  # numpy's values, value by value
    np.testing.assert_array_equal(y[far], np.sin(np.radians(a[far])) * 2.0)
    assert np.isnan(x[1, 0]) and np.isnan(y[1, 0])
    x1, y1 = np.empty(3), np.empty(3)
    cos_sin_deg(a[~far], (x1, y1), scale=2.0)  # the others as if alone
    np.testing.assert_array_equal(x[~far], x1)
    np.testing.assert_array_equal(y[~far], y1)


def test_a_value_does_not_depend_on_what_it_is_computed_with():
    # Internal consistency: the same angles in other batches and layouts, bit for bit.
    rng = np.random.default_rng(7)
    a = rng.uniform(-400.0, 400.0, (37, 3001))
    x, y = np.empty_like(a), np.empty_like(a)
    cos_sin_deg(a, (x, y))
    for row in (0, 18, 36):
        xr, yr = np.empty(3001), np.empty(3001)
        cos_sin_deg(a[row].copy(), (xr, yr))
        np.testing.assert_array_equal(xr, x[row])
        np.testing.assert_array_equal(yr, y[row])
    col = a[:, 5:6]  # a strided column, written into strided outputs
    xc, yc = np.empty((37, 2))[:, :1], np.empty((37, 2))[:, :1]
    cos_sin_deg(col, (xc, yc))
    np.testing.assert_array_equal(xc[:, 0], x[:, 5])
    np.testing.assert_array_equal(yc[:, 0], y[:, 5])


def _screen_case(seed: int):
    """Vectors about a random origin in image coordinates (y down): a zero direction z per trial and readings
    at nominal + deviation from it (deg, counterclockwise on screen), with some deviations far off."""
    rng = np.random.default_rng(seed)
    n, t = 23, 4000
    nominal = rng.uniform(-179.0, 179.0, n)
    dev = rng.normal(0.0, 0.5, (n, t))
    dev[0, :300] = rng.uniform(-179.9, 179.9, 300)  # far from the reference: np.arctan2 takes these
    dev[1, :10] = 1.79 + rng.uniform(-0.02, 0.02, 10)  # about the series' reach
    z = rng.uniform(-180.0, 180.0, t)
    r0, r = rng.uniform(30.0, 900.0, t), rng.uniform(30.0, 900.0, (n, t))
    ox, oy = rng.uniform(0.0, 2000.0, t), rng.uniform(0.0, 2000.0, t)
    x0, y0 = r0 * np.cos(np.radians(z)), -r0 * np.sin(np.radians(z))
    ang = z + nominal[:, None] + dev
    x, y = ox + r * np.cos(np.radians(ang)), oy - r * np.sin(np.radians(ang))
    return x0, y0, x, y, (ox, oy), nominal


def _nearest(a: np.ndarray, near: np.ndarray) -> np.ndarray:
    d = a - near
    d -= 360.0 * np.round(d / 360.0)
    return near + d


@needs_extended
def test_screen_angles_agree_with_extended_precision_arctan2():
    # Reference: numpy's arctan2 in x86 extended precision (np.longdouble) of the same vectors; and no worse
    # than twice the double-precision definition's own error (screen_angles_deg).
    x0, y0, x, y, (ox, oy), nominal = _screen_case(1)
    got = screen_angles_near_deg(x0, y0, x, y, (ox, oy), nominal)
    L = np.longdouble
    xs, ys = x.astype(L) - ox.astype(L), y.astype(L) - oy.astype(L)
    a0, b0 = x0.astype(L), y0.astype(L)
    true = np.degrees(np.arctan2(b0 * xs - a0 * ys, a0 * xs + b0 * ys)).astype(float)
    want = _nearest(true, nominal[:, None])
    # the inputs' own rounding (the vectors' differences, in double on the tested side) bounds the agreement
    np.testing.assert_allclose(got, want, rtol=0, atol=2e-12)
    plain = screen_angles_deg(x0, y0, x - ox, y - oy)
    assert np.abs(got - want).max() <= 2.0 * np.abs(_nearest(plain, nominal[:, None]) - want).max() + 1e-13


def test_screen_angles_far_values_and_nan_take_arctan2():
    # Reference: the definition (screen_angles_deg, numpy's arctan2) bit for bit where the series does not
    # reach; elsewhere within 1e-12° of it.
    x0, y0, x, y, (ox, oy), nominal = _screen_case(2)
    x[2, 7] = np.nan
    got = screen_angles_near_deg(x0, y0, x, y, (ox, oy), nominal)
    plain = _nearest(screen_angles_deg(x0, y0, x - ox, y - oy), nominal[:, None])
    far = np.abs(plain - nominal[:, None]) > 1.8
    assert far.sum() > 250
    np.testing.assert_array_equal(got[far], plain[far])  # taken by arctan2 itself
    assert np.isnan(got[2, 7])
    ok = ~far & ~np.isnan(plain)
    np.testing.assert_allclose(got[ok], plain[ok], rtol=0, atol=1e-12)


def test_screen_angles_do_not_depend_on_batching():
    # Internal consistency: one trial alone and one row alone, bit for bit.
    x0, y0, x, y, origin, nominal = _screen_case(3)
    got = screen_angles_near_deg(x0, y0, x, y, origin, nominal)
    one = screen_angles_near_deg(x0[:1], y0[:1], x[:, :1], y[:, :1], (origin[0][:1], origin[1][:1]), nominal)
    np.testing.assert_array_equal(one[:, 0], got[:, 0])
    row = screen_angles_near_deg(x0, y0, x[4:5], y[4:5], origin, nominal[4:5])
    np.testing.assert_array_equal(row[0], got[4])
