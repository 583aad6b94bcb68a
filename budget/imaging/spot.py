"""Locator physics: centroid noise and pixel-locking bias, as pure formulas.

Lengths are in pixels (pixel pitch ``a = 1`` unless given). The sub-pixel phase
``delta`` is the true centre minus the nearest pixel centre, in ``[-1/2, 1/2)``;
the bias is the located position minus the true one. Pixel convention as in
:mod:`budget.imaging.render`: pixel ``j`` covers ``[j - 1/2, j + 1/2]``.

What the derivation found (checked to 1e-14 px against noiseless renders in
``tests/camera/test_locators.py``):

* For a **pixel-integrated** Gaussian spot of standard deviation ``s`` (the
  optical spot before pixel integration) and an unbounded window, the
  centre-of-mass bias is *exactly*
  ``sum_k (1/pi) (-1)^k sin(2 pi k delta) / k * exp(-2 pi^2 k^2 s^2)``.
  By the Poisson summation formula the pixel values sample ``G * rect``, whose
  Fourier transform ``G^(f) sinc(f)`` vanishes at every non-zero integer, so the
  denominator (total signal) is exact and only ``d/df sinc`` at ``f = k``,
  ``(-1)^k / k``, survives in the numerator. The amplitude is
  ``exp(-2 pi^2 s^2)/pi``: 0.054 px at s = 0.3 px, 0.0023 px at s = 0.5 px.
  No "effective sigma" ``sqrt(s^2 + 1/12)`` enters: the sinc factor changes the
  harmonic weights, not the Gaussian width.
* For a **point-sampled** Gaussian the same summation gives
  ``-sum_k 4 pi s^2 k sin(2 pi k delta) E_k / (1 + 2 sum_k cos(2 pi k delta) E_k)``
  with ``E_k = exp(-2 pi^2 k^2 s^2)``; leading amplitude ``4 pi s^2 E_1``, about
  ``4 pi^2 s^2`` times the pixel-integrated one (0.20 px at s = 0.3 px,
  0.023 px at s = 0.5 px).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from budget.errors import field_error
from budget.imaging.special import erf, j1

__all__ = [
    "INTEGER_HALF_WIDTH_PX",
    "adc_variance_e2",
    "com_variance",
    "disk_locking_amplitude",
    "integer_quantization_variance",
    "peak_fraction",
    "window_truncation_max",
    "mortensen_variance",
    "pixel_locking_amplitude",
    "pixel_locking_bias",
    "window_truncation_bias",
]

_PIXELS = ("integrated", "sampled")


def _check_positive(value, field: str, where: str) -> np.ndarray:
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        raise field_error(field, "a number > 0", value, where)
    return v


def _check_non_negative(value, field: str, where: str) -> np.ndarray:
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v < 0):
        raise field_error(field, "a number >= 0", value, where)
    return v


def mortensen_variance(s_px: ArrayLike, a_px: ArrayLike, N: ArrayLike,
                       b2: ArrayLike) -> np.ndarray:
    """Variance of a least-squares Gaussian fit, Mortensen et al. 2010.

    Parameters
    ----------
    s_px : float or array_like
        Standard deviation of the spot, px.
    a_px : float or array_like
        Pixel size (1 when working in px).
    N : float or array_like
        Number of detected photons in the spot.
    b2 : float or array_like
        Expected background photons per pixel (its variance, shot-limited).

    Returns
    -------
    numpy.ndarray or float
        Variance of one coordinate, px^2.

    Notes
    -----
    Mortensen et al. 2010, Nat. Methods 7:377, least-squares fit without
    EM gain: ``var = (sa^2/N) (16/9 + 8 pi sa^2 b^2 / (N a^2))`` with
    ``sa^2 = s^2 + a^2/12``.
    """
    s = _check_positive(s_px, "s_px", "mortensen_variance")
    a = _check_positive(a_px, "a_px", "mortensen_variance")
    n = _check_positive(N, "N", "mortensen_variance")
    b2 = _check_non_negative(b2, "b2", "mortensen_variance")
    sa2 = s**2 + a**2 / 12.0
    return sa2 / n * (16.0 / 9.0 + 8.0 * np.pi * sa2 * b2 / (n * a**2))


def com_variance(s_px: ArrayLike, N: ArrayLike, b2: ArrayLike, window_px: int) -> np.ndarray:
    """Variance of the centre of mass with the background known and subtracted.

    Parameters
    ----------
    s_px : float or array_like
        Standard deviation of the pixel-integrated Gaussian spot, px.
    N : float or array_like
        Photons in the spot.
    b2 : float or array_like
        Background variance per pixel, photons^2 (plus read noise^2 and the
        ADC step g^2/12 if any, see :func:`adc_variance_e2`).
    window_px : int or array_like of int
        Odd side of the square window, centred on the spot.

    Returns
    -------
    numpy.ndarray or float
        Variance of one coordinate, px^2.

    Notes
    -----
    [derived] For a spot centred on a pixel, to first order in the noise:
    ``var = (s^2 + 1/12)/N + b^2 W^2 (W^2 - 1) / (12 N^2)``; the first term is
    the photon term of Thompson et al. 2002 eq. (14), the second grows as W^4,
    so unlike a fit the centre of mass degrades quickly with background.
    """
    s = _check_positive(s_px, "s_px", "com_variance")
    n = _check_positive(N, "N", "com_variance")
    b2 = _check_non_negative(b2, "b2", "com_variance")
    w = np.asarray(window_px)
    if not np.all((w == np.round(w)) & (w >= 1) & (w % 2 == 1)):
        raise field_error("window_px", "an odd integer >= 1", window_px, "com_variance")
    w = w.astype(float)
    return (s**2 + 1.0 / 12.0) / n + b2 * w**2 * (w**2 - 1.0) / (12.0 * n**2)


def adc_variance_e2(gain_e_per_adu: ArrayLike) -> np.ndarray:
    """Noise variance added per pixel by rounding to whole ADU, in electrons^2.

    Parameters
    ----------
    gain_e_per_adu : float or array_like
        Conversion gain g, electrons per ADU.

    Returns
    -------
    numpy.ndarray or float
        ``g^2 / 12``.

    Notes
    -----
    Quantization over a step q has u = q/sqrt(12) (JCGM 100 4.3.7, F.2.2.1).
    """
    g = _check_positive(gain_e_per_adu, "gain_e_per_adu", "adc_variance_e2")
    return g**2 / 12.0


def pixel_locking_bias(delta: ArrayLike, sigma_px: float, k_max: int = 50, *,
                       pixel: str = "integrated") -> np.ndarray:
    """Centre-of-mass bias against the sub-pixel phase, unbounded window.

    Parameters
    ----------
    delta : float or array_like
        Sub-pixel phase: true centre minus nearest pixel centre, px.
    sigma_px : float
        Standard deviation of the Gaussian spot, px (> 0).
    k_max : int
        Number of harmonics kept; the k-th is damped by exp(-2 pi^2 k^2 s^2).
    pixel : {"integrated", "sampled"}
        Pixel-integrated (area) or point-sampled spot.

    Returns
    -------
    numpy.ndarray or float
        Located minus true position, px, same shape as `delta`.

    Notes
    -----
    Poisson summation formula applied to the centre-of-mass sums [derived;
    see the module docstring]. For ``"integrated"`` the series is exact:
    ``sum_k (1/pi)(-1)^k sin(2 pi k delta)/k exp(-2 pi^2 k^2 s^2)``; at
    s -> 0 it becomes the sawtooth ``-delta`` of the integer locator.
    """
    d = np.asarray(delta, dtype=float)
    s = float(_check_positive(sigma_px, "sigma_px", "pixel_locking_bias"))
    if int(k_max) != k_max or k_max < 1:
        raise field_error("k_max", "an integer >= 1", k_max, "pixel_locking_bias")
    if pixel not in _PIXELS:
        raise field_error("pixel", f"one of {_PIXELS}", pixel, "pixel_locking_bias")
    k = np.arange(1, int(k_max) + 1, dtype=float).reshape((-1,) + (1,) * d.ndim)
    e_k = np.exp(-2.0 * np.pi**2 * k**2 * s**2)
    phase = 2.0 * np.pi * k * d
    if pixel == "integrated":
        return np.sum((-1.0) ** k * np.sin(phase) / (np.pi * k) * e_k, axis=0)
    num = -np.sum(4.0 * np.pi * s**2 * k * np.sin(phase) * e_k, axis=0)
    den = 1.0 + 2.0 * np.sum(np.cos(phase) * e_k, axis=0)
    return num / den


def pixel_locking_amplitude(sigma_px: ArrayLike, *, pixel: str = "integrated") -> np.ndarray:
    """Leading-harmonic amplitude of the pixel-locking bias, px.

    Parameters
    ----------
    sigma_px : float or array_like
        Standard deviation of the Gaussian spot, px.
    pixel : {"integrated", "sampled"}
        Pixel-integrated or point-sampled spot.

    Returns
    -------
    numpy.ndarray or float
        ``exp(-2 pi^2 s^2)/pi`` (integrated) or ``4 pi s^2 exp(-2 pi^2 s^2)``
        (sampled).

    Notes
    -----
    First term of :func:`pixel_locking_bias` [derived]. The largest bias over
    delta differs from it by less than 0.03 % for s >= 0.25 px (integrated) and
    less than 1 % for s >= 0.4 px (sampled; 5 % low at s = 0.3 px); at smaller
    s use ``max |pixel_locking_bias|``.
    """
    s = _check_positive(sigma_px, "sigma_px", "pixel_locking_amplitude")
    if pixel not in _PIXELS:
        raise field_error("pixel", f"one of {_PIXELS}", pixel, "pixel_locking_amplitude")
    e1 = np.exp(-2.0 * np.pi**2 * s**2)
    return e1 / np.pi if pixel == "integrated" else 4.0 * np.pi * s**2 * e1


def window_truncation_bias(delta: ArrayLike, sigma_px: float, window_px: int) -> np.ndarray:
    """Extra centre-of-mass bias from a finite window, pixel-integrated Gaussian.

    Parameters
    ----------
    delta : float or array_like
        Sub-pixel phase in ``[-1/2, 1/2]``, px.
    sigma_px : float
        Standard deviation of the spot, px.
    window_px : int
        Odd side of the square window centred on the brightest pixel.

    Returns
    -------
    numpy.ndarray or float
        Windowed bias minus the unbounded bias of :func:`pixel_locking_bias`, px.

    Notes
    -----
    Computed exactly from the noiseless pixel values (erf differences) of one
    axis: the centre of mass of a separable spot in a square window is the 1-D
    centre of mass of the column sums [derived]. It pulls towards the window
    centre. Largest values over delta: at s = 1 px, 0.055 px (W = 5),
    0.0046 px (W = 7), 1.4e-4 px (W = 9), 1.6e-6 px (W = 11); at s = 0.5 px,
    7.9e-5 px (W = 5). A window of about 10 s + 1 px keeps it below 1e-4 px;
    6 s + 1 is not enough.
    """
    d = np.asarray(delta, dtype=float)
    s = float(_check_positive(sigma_px, "sigma_px", "window_truncation_bias"))
    if int(window_px) != window_px or window_px < 1 or window_px % 2 == 0:
        raise field_error("window_px", "an odd integer >= 1", window_px, "window_truncation_bias")
    if not np.all(np.abs(d) <= 0.5):
        raise field_error("delta", "numbers in [-0.5, 0.5]", delta, "window_truncation_bias")
    half = (int(window_px) - 1) // 2
    j = np.arange(-half, half + 1, dtype=float).reshape((-1,) + (1,) * d.ndim)
    u = j - d
    f = 0.5 * (erf((u + 0.5) / (np.sqrt(2.0) * s)) - erf((u - 0.5) / (np.sqrt(2.0) * s)))
    windowed = np.sum(j * f, axis=0) / np.sum(f, axis=0) - d
    return windowed - pixel_locking_bias(d, s)


INTEGER_HALF_WIDTH_PX = 0.5
"""The integer locator's error bound: the located pixel is within half a pixel of the centre."""


def integer_quantization_variance() -> float:
    """Variance per axis of the integer locator over a random sub-pixel phase, px².

    Notes
    -----
    Rectangular on ±1/2 px: (1/2)²/3 = 1/12 (JCGM 100 4.3.7, F.2.2.1).
    """
    return INTEGER_HALF_WIDTH_PX**2 / 3.0


def peak_fraction(sigma_px: ArrayLike) -> np.ndarray:
    """Fraction of a pixel-integrated Gaussian spot's signal in its brightest pixel, centred on it.

    Notes
    -----
    [derived] The central pixel holds erf(1/(2√2σ))² of the signal (separable erf integral).
    """
    s = _check_positive(sigma_px, "sigma_px", "peak_fraction")
    return erf(0.5 / (np.sqrt(2.0) * s)) ** 2


def disk_locking_amplitude(diameter_px: ArrayLike, blur_sigma_px: ArrayLike) -> np.ndarray:
    """Leading pixel-locking harmonic of a uniform disk blurred by a Gaussian, px.

    Notes
    -----
    [derived] As for the Gaussian (Poisson summation over pixel-integrated samples), the k-th
    harmonic of the centre-of-mass bias is (1/πk)·|F(k)/F(0)|, F the Fourier transform of the
    spot's marginal profile. For a uniform disk of radius a blurred by a Gaussian of σ_b:
    F(k)/F(0) = 2J1(2πka)/(2πka)·exp(−2π²k²σ_b²).
    """
    d = _check_positive(diameter_px, "diameter_px", "disk_locking_amplitude")
    b = _check_non_negative(blur_sigma_px, "blur_sigma_px", "disk_locking_amplitude")
    x = np.pi * d
    return np.abs(2 * j1(x) / x) * np.exp(-2 * np.pi**2 * b**2) / np.pi


def window_truncation_max(sigma_px: np.ndarray, window_px: np.ndarray, n_delta: int = 51) -> np.ndarray:
    """Largest extra centre-of-mass bias of a finite window over the sub-pixel phase, px (vectorized).

    Notes
    -----
    Same quantity as :func:`window_truncation_bias` (exact erf pixel
    values of one axis; windowed centre of mass minus the unbounded harmonic series), for arrays
    of σ and window sizes; the bias is odd in δ, so δ runs over [0, 1/2].
    """
    s = np.asarray(sigma_px, dtype=float)
    w = np.asarray(window_px, dtype=int)
    out = np.zeros(s.shape)
    need = w < 12.0 * s + 1.0  # beyond this the truncation is below 1e-8 px
    if not np.any(need):
        return out
    s_n, w_n = s[need], w[need]
    half = (int(w_n.max()) - 1) // 2
    d = np.linspace(0.0, 0.5, n_delta)
    j = np.arange(-half, half + 1, dtype=float)
    inside = (np.abs(j)[None, :] <= ((w_n - 1) // 2)[:, None])[:, None, :]  # (c, 1, J)
    x = j[None, None, :] - d[None, :, None]
    r2s = (math.sqrt(2.0) * s_n)[:, None, None]
    f = 0.5 * (erf((x + 0.5) / r2s) - erf((x - 0.5) / r2s)) * inside
    windowed = np.sum(j * f, axis=2) / np.sum(f, axis=2) - d[None, :]
    kk = np.arange(1, 11, dtype=float)[:, None, None]
    series = np.sum((-1.0) ** kk * np.sin(2 * np.pi * kk * d[None, None, :]) / (np.pi * kk)
                    * np.exp(-2 * np.pi**2 * kk**2 * s_n[None, :, None] ** 2), axis=0)
    out[need] = np.max(np.abs(windowed - series), axis=1)
    return out
