"""The error function and the Bessel function J1 for the spot formulas, without importing scipy.special.

``scipy.special`` costs 0.3–0.8 s to import on the 2-core machine, more than a whole ``choose`` over
10^4 candidates; the formulas of :mod:`budget.imaging.spot` evaluate erf on arrays of at most a few
thousand values, where the C library's double-precision ``math.erf`` applied element by element is as
fast. Rendered images (:mod:`budget.imaging.render`) keep scipy's vectorized erf. J1 (the disk
target's pixel-locking harmonic) is Bessel's integral by the trapezoidal rule, vectorized.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["erf", "erf_vec", "j1", "phi_cdf", "phi_coarse", "phi_coarse_into"]

_ERF = np.frompyfunc(math.erf, 1, 1)


def erf(x: ArrayLike) -> np.ndarray | float:
    """The error function erf(x) = (2/√π)∫₀ˣ e^(−t²) dt, element by element (C99 ``erf``).

    Tested against ``scipy.special.erf`` (tests/imaging/test_special.py).
    """
    a = np.asarray(x, dtype=float)
    if a.ndim == 0:
        return math.erf(float(a))
    return _ERF(a).astype(float)


_J1_VALUES = 1 << 20
"""Values of the integrand formed at once (8 MB) when J1 is taken of many arguments."""


def j1(x: ArrayLike) -> np.ndarray:
    """The Bessel function of the first kind of order one, element by element.

    Notes
    -----
    Bessel's integral J1(x) = (1/2π)∫ cos(θ − x sin θ) dθ over one period (DLMF 10.9.2),
    by the trapezoidal rule on M equally spaced nodes, which converges geometrically for a
    periodic analytic integrand (Trefethen and Weideman 2014, *SIAM Review* 56, 385-458):
    the error is the aliased J_{M±1}(x), negligible once M exceeds |x| by 20·|x|^(1/3) + 30
    (|x|^(1/3) is the width of the Bessel functions' turning-point region). Tested against
    ``scipy.special.j1`` (tests/imaging/test_special.py).
    """
    a = np.asarray(x, dtype=float)
    flat = a.reshape(-1)
    out = np.empty(flat.shape)
    if flat.size:
        big = float(np.max(np.abs(flat)))
        m = int(math.ceil(big + 20.0 * (big + 1.0) ** (1.0 / 3.0))) + 30
        theta = 2.0 * np.pi * np.arange(m) / m
        sin_t = np.sin(theta)
        step = max(1, _J1_VALUES // m)
        for s in range(0, flat.size, step):
            part = flat[s:s + step, None]
            out[s:s + step] = np.cos(theta - part * sin_t).sum(axis=1) / m
    return out.reshape(a.shape)


_SERIES_TERMS = 40
_FRACTION_DEPTH = 50
_SERIES_BELOW = 2.5
_ONE_FROM = 6.0  # erf(6) = 1 − 2e-17: 1 in double precision


def erf_vec(x: ArrayLike) -> np.ndarray:
    """The error function on whole arrays with numpy operations only (no element-by-element calls).

    Notes
    -----
    For |x| < 2.5 the series erf(x) = (2/√π)·e^(−x²)·Σ 2ⁿx^(2n+1)/(1·3···(2n+1)) (DLMF 7.6.2), whose
    terms are all positive (no cancellation; 40 terms leave less than 1e-16 at |x| = 2.5); for
    2.5 ≤ |x| < 6 the continued fraction erfc(x) = (e^(−x²)/√π)·1/(x + (1/2)/(x + 1/(x + (3/2)/(x + …))))
    (DLMF 7.9.2) evaluated from depth 50 backwards; beyond, ±1. Each branch works on its own elements
    only. Tested against ``scipy.special.erf`` to 2e-15 (tests/imaging/test_special.py).
    """
    a = np.asarray(x, dtype=float)
    ax = np.abs(a).ravel()
    out = np.ones(ax.shape)
    small = np.flatnonzero(ax < _SERIES_BELOW)
    if small.size:
        xs = ax[small]
        x2 = xs * xs
        term = xs.copy()
        total = xs.copy()
        for n in range(1, _SERIES_TERMS):
            term *= 2.0 * x2 / (2 * n + 1)
            total += term
        out[small] = (2.0 / math.sqrt(math.pi)) * np.exp(-x2) * total
    mid = np.flatnonzero((ax >= _SERIES_BELOW) & (ax < _ONE_FROM))
    if mid.size:
        xl = ax[mid]
        frac = xl.copy()
        for k in range(_FRACTION_DEPTH, 0, -1):
            frac = xl + (0.5 * k) / frac
        out[mid] = 1.0 - np.exp(-xl * xl) / (math.sqrt(math.pi) * frac)
    out[np.isnan(ax)] = np.nan
    return np.copysign(out.reshape(a.shape), a)


_AS = (0.254829592, -0.284496736, 1.421413741, -1.453152027, 1.061405429)
_AS_P = 0.3275911


def phi_coarse(z: ArrayLike) -> np.ndarray:
    """Φ(z) to an absolute error below 1e-7, fast: Abramowitz & Stegun 7.1.26 for erf (|error| <= 1.5e-7).

    For the probabilities of the ADC's thresholds and of the brightest pixel, where 1e-7 is far below
    what a located position can show; :func:`phi_cdf` is the accurate one.
    """
    z = np.asarray(z, dtype=float)
    flat = z.reshape(-1)
    out = np.empty(flat.shape)
    phi_coarse_into(flat, out, np.empty(flat.shape), np.empty(flat.shape))
    return out.reshape(z.shape)


def phi_coarse_into(z: np.ndarray, out: np.ndarray, work1: np.ndarray, work2: np.ndarray) -> None:
    """:func:`phi_coarse` of the 1-D array ``z`` written to ``out``, with two scratch arrays of its size.

    Every step works in place, in the same order of operations as t·(a1 + t·(a2 + …)) and ½·poly·e^(−x²):
    no array is allocated (a loop over many thresholds allocates nothing; fresh arrays of 2^16 values
    cost more in page faults than the arithmetic).
    """
    x = np.abs(z, out=work1)
    x /= math.sqrt(2.0)
    t = np.multiply(x, _AS_P, out=work2)
    t += 1.0
    np.reciprocal(t, out=t)
    poly = np.multiply(t, _AS[4], out=out)
    for a in _AS[3::-1]:
        poly += a
        poly *= t
    np.multiply(x, x, out=x)
    np.negative(x, out=x)
    np.exp(x, out=x)
    poly *= 0.5
    poly *= x  # (1 − erf(|z|/√2))/2
    np.subtract(1.0, poly, out=poly, where=z >= 0)


def phi_cdf(z: ArrayLike) -> np.ndarray:
    """The standard normal distribution function Φ(z) = (1 + erf(z/√2))/2, vectorized (:func:`erf_vec`)."""
    return 0.5 * (1.0 + erf_vec(np.asarray(z, dtype=float) / math.sqrt(2.0)))
