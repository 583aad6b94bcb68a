"""The ADC's rounding of a normal pixel value exactly: sums over the thresholds, or the dither series.

A pixel reads R = round(X) clipped to [0, top], X normal (x, s²) in counts. Where the noise is below
:data:`budget.imaging.pixels.EXACT_BELOW` counts the locator model takes R's mean and variance exactly
(:func:`exact_moments`), by one of two routes that agree to 1e-11 count where both apply:

* the sums over the thresholds k − ½ (:func:`threshold_sums`), any noise and either clip;
* the Fourier (dither) series of the rounding error (:func:`dither_series`), where the noise is at
  least :data:`SERIES_FROM` counts and both clips lie :data:`CLIP_REACH` sd or more from x: three
  terms, some thirty array passes per pixel against five to nine evaluations of Φ.

The work arrays are kept between calls (:func:`budget.scratch.scratch`, re-exported here): fresh arrays of
some 10^4–10^5 values are mapped from the system on each allocation, and their page faults cost more than
the arithmetic on them (``choose`` over 10^4 options: 3.6·10^5 faults, about a second, without them); each
thread has its own.
"""

from __future__ import annotations

import math

import numpy as np

from budget.imaging.special import phi_coarse_into
from budget.scratch import scratch

__all__ = ["CLIP_REACH", "SERIES_FROM", "SERIES_TERMS", "SUM_REACH", "dither_series", "exact_moments",
           "exact_moments_into", "moments_at", "scratch", "split", "threshold_sums"]

SERIES_FROM = 0.3
"""Noise (counts) from which the dither series is used: its fourth term, e^(−32π²s²)·(4s² + 1/16π²), is
below 2e-13 there (three terms kept)."""
SERIES_TERMS = 3
CLIP_REACH = 7.0
"""The series needs both clips (at −½ and top + ½ counts) at least this many sd from x: Φ(−7) = 1.3e-12."""
SUM_REACH = 6.5
"""The threshold sums take the thresholds within this many sd of x (Φ(−6.5) = 4e-11); those below are passed,
those above not, for certain (the former bands of 1–4 counts left out thresholds from 5.3 sd on)."""


def dither_series(x: np.ndarray, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean and variance (counts, counts²) of round(X), X normal (x, s²), unclipped, by the dither series.

    Notes
    -----
    The rounding error e(u) = u − round(u) is a sawtooth of period 1 with the Fourier series
    e(u) = Σ_{k≥1} (−1)^(k+1) sin(2πku)/(πk), and e(u)² = 1/12 + Σ_{k≥1} (−1)^k cos(2πku)/(π²k²).
    For X normal, E[e^(2πikX)] = e^(2πikx)·G_k with G_k = e^(−2π²k²s²), and Stein's identity
    E[X·f(X)] = x·E[f(X)] + s²·E[f'(X)] gives E[X·sin 2πkX] = G_k·(x sin 2πkx + 2πks² cos 2πkx). With
    R = X − e(X) and a = Σ (−1)^(k+1) G_k sin(2πkx)/(πk):

        E[R] = x − a,   Var R = s² + 1/12 − a² + Σ_{k≥1} (−1)^k G_k cos(2πkx)·(4s² + 1/(π²k²))   [derived].

    Without the G_k terms these are Sheppard's corrections (the rounding as 1/12 count² of added
    noise, JCGM 100 F.2.2.1); the G_k terms are the periodic remainder of the classical theory of
    the quantization of a Gaussian (B. Widrow and I. Kollár, *Quantization Noise*, Cambridge UP 2008,
    chs. 4–5; cited from memory). Terms k ≤ :data:`SERIES_TERMS` are kept: for s ≥ 0.3 the first left
    out is below 2e-13 count² (variance) and 4e-14 count (mean). The sines and cosines are of
    u = x − round(x) (exact in floating point), k = 2, 3 by the double- and triple-angle formulas.
    Tested against the threshold sums and scipy's normal CDF (tests/imaging/test_rounding.py).
    """
    x, s = np.asarray(x, dtype=float).ravel(), np.asarray(s, dtype=float).ravel()
    mean, var = np.empty(x.size), np.empty(x.size)
    _series_into(x, s, mean, var)
    return mean, var


def _series_into(x, s, mean, var) -> None:
    n = x.size
    u, s1, c1, g1, g2, g3, a, t = (scratch(f"ser{i}", n) for i in range(8))
    q = np.multiply(s, s, out=var)  # var holds s² until the end
    np.round(x, out=u)
    np.subtract(x, u, out=u)
    u *= 2.0 * math.pi
    np.sin(u, out=s1)
    np.cos(u, out=c1)
    np.multiply(q, -2.0 * math.pi**2, out=g1)
    np.exp(g1, out=g1)
    np.multiply(g1, g1, out=g2)
    g2 *= g2  # G_2 = G_1^4
    np.multiply(g2, g2, out=g3)
    g3 *= g1  # G_3 = G_1^9
    # a = (G1 sin θ − G2 sin 2θ / 2 + G3 sin 3θ / 3)/π, sin 2θ = 2 sin θ cos θ, sin 3θ = sin θ (3 − 4 sin² θ)
    np.multiply(s1, s1, out=u)  # sin² θ
    np.multiply(u, -4.0 / 3.0, out=a)
    a += 1.0
    a *= g3
    np.multiply(g2, c1, out=t)
    a -= t
    a += g1
    a *= s1
    a *= 1.0 / math.pi
    np.subtract(x, a, out=mean)
    # var = s² + 1/12 − a² − G1 cos θ (4s² + 1/π²) + G2 cos 2θ (4s² + 1/4π²) − G3 cos 3θ (4s² + 1/9π²)
    np.multiply(q, 4.0, out=s1)  # sin θ is no longer needed: s1 holds 4s²
    np.add(s1, 1.0 / math.pi**2, out=t)
    g1 *= c1
    g1 *= t
    u *= -2.0
    u += 1.0  # cos 2θ = 1 − 2 sin² θ
    np.add(s1, 1.0 / (4.0 * math.pi**2), out=t)
    g2 *= u
    g2 *= t
    np.multiply(c1, c1, out=u)
    u *= 4.0
    u -= 3.0
    u *= c1  # cos 3θ = cos θ (4 cos² θ − 3)
    np.add(s1, 1.0 / (9.0 * math.pi**2), out=t)
    g3 *= u
    g3 *= t
    a *= a
    var += 1.0 / 12.0
    var -= a
    var -= g1
    var += g2
    var -= g3


def threshold_sums(x: np.ndarray, s: np.ndarray, top) -> tuple[np.ndarray, np.ndarray]:
    """Mean and variance (counts, counts²) of round(X) clipped to [0, top], by the sums over the thresholds.

    Notes
    -----
    E[R] = Σ_{k=1}^{top} P(X ≥ k − ½) and, with b the thresholds passed for certain below those summed,
    E[(R − b)²] = Σ_k (2(k − b) − 1)·P(X ≥ k − ½) (as (R − b)² = Σ_{j=1}^{R−b} (2j − 1)), so that
    Var R = E[(R − b)²] − (E[R] − b)² without the cancellation of E[R²] − E[R]² [derived]. The
    thresholds k − ½, 1 ≤ k ≤ top, within :data:`SUM_REACH` sd of x are summed (Φ by
    :func:`budget.imaging.special.phi_coarse_into`). The pixels are ordered by how many thresholds they
    need, so that each pass works on a leading slice of the arrays.
    """
    x = np.asarray(x, dtype=float).ravel()
    s = np.array(s, dtype=float).ravel()  # a copy: the sums work on it in place
    top = np.asarray(top, dtype=float)
    mean, var = np.empty(x.size), np.empty(x.size)
    _sums_into(x, s, top if top.ndim == 0 else top.ravel(), mean, var)
    return mean, var


def _sums_into(x, s, top, mean, var) -> None:
    """:func:`threshold_sums` into ``mean`` and ``var``; ``s`` is overwritten."""
    n = x.size
    np.maximum(s, 1e-9, out=s)
    r, lo, hi = (scratch(f"sum{i}", n) for i in range(3))
    np.multiply(s, SUM_REACH, out=r)
    np.add(x, 0.5, out=lo)
    np.add(lo, r, out=hi)
    lo -= r
    np.ceil(lo, out=lo)
    np.maximum(lo, 1.0, out=lo)  # the first threshold summed, k − ½ ≥ x − reach
    np.floor(hi, out=hi)
    np.minimum(hi, top, out=hi)  # the last
    np.subtract(lo, 1.0, out=mean)
    np.minimum(mean, top, out=mean)  # the thresholds passed for certain (lo − 1 ≥ 0 wherever one is summed)
    hi -= lo
    np.maximum(hi, -1.0, out=hi)
    count = hi.astype(np.int8)
    count += 1
    var.fill(0.0)
    counts = np.bincount(count, minlength=1)
    if counts.size == 1:  # every threshold passed or not for certain
        return
    left = n - np.cumsum(counts)  # left[i]: pixels with more than i thresholds
    head = np.argsort(count, kind="stable")[::-1][:left[0]]  # most thresholds first
    m = head.size
    so, base, d1, d2, z, p, w1, w2 = (scratch(f"sum{i}", m) for i in range(3, 11))
    np.take(s, head, out=so, mode="clip")
    np.take(x, head, out=base, mode="clip")
    np.take(lo, head, out=z, mode="clip")
    base -= z
    base += 0.5  # x − k + ½ for the first threshold summed
    d1.fill(0.0)
    d2.fill(0.0)
    for i in range(counts.size - 1):
        c = left[i]
        np.subtract(base[:c], i, out=z[:c])
        np.divide(z[:c], so[:c], out=z[:c])
        phi_coarse_into(z[:c], p[:c], w1[:c], w2[:c])
        d1[:c] += p[:c]
        p[:c] *= 2.0 * i + 1.0
        d2[:c] += p[:c]
    np.take(mean, head, out=z, mode="clip")
    z += d1
    mean[head] = z
    d1 *= d1
    d2 -= d1
    np.maximum(d2, 0.0, out=d2)
    var[head] = d2


def exact_moments(x: np.ndarray, s: np.ndarray, top) -> tuple[np.ndarray, np.ndarray]:
    """Mean and variance (counts, counts²) of round(X) clipped to [0, top]: the dither series where the
    noise is at least :data:`SERIES_FROM` and both clips are :data:`CLIP_REACH` sd away, the threshold
    sums elsewhere."""
    x = np.asarray(x, dtype=float).ravel()
    s = np.array(s, dtype=float).ravel()
    top = np.asarray(top, dtype=float)
    mean, var = np.empty(x.size), np.empty(x.size)
    exact_moments_into(x, s, top if top.ndim == 0 else top.ravel(), mean, var)
    return mean, var


def exact_moments_into(x, s, top, mean, var) -> None:
    """:func:`exact_moments` of 1-D arrays (``top`` a 0-d array or of x's size) into ``mean`` and ``var``."""
    series, sums = split(x, s, top)
    moments_at(x, s, top, series, sums, mean, var)


def split(x: np.ndarray, s: np.ndarray, top: np.ndarray, within: np.ndarray | None = None
          ) -> tuple[np.ndarray, np.ndarray]:
    """Indices of the pixels (1-D arrays; of those ``within``, a mask) for the dither series and for the sums."""
    n = x.size
    a, b = scratch("split0", n), scratch("split1", n)
    np.multiply(s, CLIP_REACH, out=a)
    np.add(x, 0.5, out=b)
    far = b >= a  # the clip at 0 out of reach
    np.subtract(top, x, out=b)
    b += 0.5
    far &= b >= a  # and the clip at the top
    far &= s >= SERIES_FROM
    near = ~far
    if within is not None:
        far &= within
        near &= within
    return np.flatnonzero(far), np.flatnonzero(near)


def moments_at(x, s, top, series, sums, mean, var) -> None:
    """The exact moments of the pixels ``series`` (by the dither series) and ``sums`` (by the threshold sums)
    of the 1-D arrays x, s, top (or a 0-d top), put into ``mean`` and ``var`` at those indices."""
    for idx, sum_route in ((series, False), (sums, True)):
        if not idx.size:
            continue
        m = idx.size
        xs, ss, ms, vs = (scratch(f"at{i}", m) for i in range(4))
        np.take(x, idx, out=xs, mode="clip")
        np.take(s, idx, out=ss, mode="clip")
        if sum_route:
            ts = top if top.ndim == 0 else np.take(top, idx, out=scratch("at4", m), mode="clip")
            _sums_into(xs, ss, ts, ms, vs)
        else:
            _series_into(xs, ss, ms, vs)
        mean[idx] = ms
        var[idx] = vs
