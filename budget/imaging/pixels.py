"""Expected pixel values of a target and what the ADC makes of them, for the locator model.

Pixel convention as :mod:`budget.imaging.render`: pixel j covers [j − ½, j + ½]. Derivations are in
:mod:`budget.imaging.pixel_model` (module notes); the renderer draws the same targets independently
(erf differences, a tabulated blurred-disk profile on sub-pixels, sub-exposures for a streak), and the
tests compare the two.
"""

from __future__ import annotations

import math

import numpy as np

from budget.imaging.rounding import moments_at, scratch, split
from budget.imaging.special import phi_cdf

__all__ = ["EXACT_BELOW", "adu_moments", "clipped_moments", "image_2d", "profile_1d", "spot_adu_moments",
           "spot_profiles"]

EXACT_BELOW = 0.75
"""Noise (ADC counts) below which the rounding is modelled exactly rather than as g²/12 added."""
_CLIP_WITHIN = 6.0
"""Pixels whose mean is within this many sd of 0 are read through the ADC's clip at 0 (linear form)."""



def _cdf_gauss_streak(u: np.ndarray, sigma: np.ndarray, streak: np.ndarray) -> np.ndarray:
    """CDF of a Gaussian (σ) convolved with a uniform segment of length L (L = 0: the Gaussian)."""
    z = u / sigma
    plain = phi_cdf(z)
    if not np.any(streak > 0):
        return plain
    half = 0.5 * streak
    L = np.where(streak > 0, streak, 1.0)

    def integral(v):  # ∫ Φ(v/σ) dv
        return v * phi_cdf(v / sigma) + sigma * np.exp(-0.5 * (v / sigma) ** 2) / math.sqrt(2.0 * math.pi)

    smeared = (integral(u + half) - integral(u - half)) / L
    return np.where(streak > 1e-3 * sigma, smeared, plain)


def profile_1d(offsets: np.ndarray, phase: np.ndarray, *, shape: str, sigma: np.ndarray, disk: np.ndarray,
               streak: np.ndarray) -> np.ndarray:
    """Fraction of the signal in each pixel column ``offsets`` for a centre at ``phase``.

    ``sigma``, ``disk``, ``streak`` have the leading shape of ``phase`` (broadcast); pixel j covers
    [j − ½, j + ½]; the result has ``phase``'s shape plus the offsets' axis.
    """
    j = offsets.reshape((1,) * phase.ndim + (-1,))
    ph = phase[..., None]
    s, d, L = sigma[..., None], disk[..., None], streak[..., None]
    if shape == "disk":  # ∫ K(x)·2h(x) dx/(πa²) over the disk's width, as in :func:`image_2d`
        a = 0.5 * d
        q = int(np.clip(np.ceil(8.0 * np.max(a / s)), 48, 600))
        tq, wq = np.polynomial.legendre.leggauss(q)
        theta = 0.5 * math.pi * tq
        u = (j - ph)[..., None] - a[..., None] * np.sin(theta)
        sq, lq = s[..., None], L[..., None]
        k = _cdf_gauss_streak(u + 0.5, sq, lq) - _cdf_gauss_streak(u - 0.5, sq, lq)
        h = np.cos(theta)
        return np.sum(k * (0.5 * math.pi * wq * 2.0 * h * h), axis=-1) / math.pi
    if offsets.size > 1 and np.all(np.diff(offsets) == 1.0):  # consecutive pixels share their edges
        edges = np.append(offsets - 0.5, offsets[-1] + 0.5).reshape((1,) * phase.ndim + (-1,))
        cdf = _cdf_gauss_streak(edges - ph, s, L)
        return cdf[..., 1:] - cdf[..., :-1]
    hi = _cdf_gauss_streak(j + 0.5 - ph, s, L)
    lo = _cdf_gauss_streak(j - 0.5 - ph, s, L)
    return hi - lo


def spot_profiles(sigma: np.ndarray, streak: np.ndarray, ph: np.ndarray, half: int) -> tuple[np.ndarray, np.ndarray]:
    """A spot's column (streaked) and row profiles, (C, P, J) each, on the pixels −half … half at the phases
    ``ph``: the factors of :func:`image_2d` for a spot (the same array twice for a still spot)."""
    j = np.arange(-half, half + 1, dtype=float)
    grid = np.broadcast_to(ph, (sigma.size, ph.size))
    zero = np.zeros((sigma.size, 1))
    px = profile_1d(j, grid, shape="spot", sigma=sigma[:, None], disk=zero, streak=streak[:, None])
    if not np.any(streak):
        return px, px
    return px, profile_1d(j, grid, shape="spot", sigma=sigma[:, None], disk=zero, streak=zero)


def spot_adu_moments(px: np.ndarray, py: np.ndarray, signal_e, background_e, read_e, gain, top
                     ) -> tuple[np.ndarray, np.ndarray]:
    """:func:`adu_moments` of a spot's pixels (C, Px, Py, Jy, Jx) from its column and row profiles (C, P, J).

    The image is py·px as :func:`image_2d` forms it. For a still spot (``py is px``) the image at the phases
    (a, b) is the transpose of that at (b, a), the same products, so only the pairs a ≤ b are computed
    (10 of 16 for 4 × 4 phases) and the others are their transposes: the same values.
    """
    e4, e5 = (slice(None), None, None, None), (slice(None), None, None, None, None)
    if py is not px:
        mu = signal_e[e5] * (py[:, None, :, :, None] * px[:, :, None, None, :]) + background_e[e5]
        mean, var, _ = adu_moments(mu, read_e[e5], gain[e5], top[e5])
        return mean, var
    c, p, n = px.shape
    pa, pb = np.triu_indices(p)
    mu = signal_e[e4] * (px[:, pb, :, None] * px[:, pa, None, :]) + background_e[e4]  # (C, pairs, Jy, Jx)
    m_pairs, v_pairs, _ = adu_moments(mu, read_e[e4], gain[e4], top[e4])
    mean, var = np.empty((c, p, p, n, n)), np.empty((c, p, p, n, n))
    mean[:, pb, pa], var[:, pb, pa] = m_pairs.swapaxes(-1, -2), v_pairs.swapaxes(-1, -2)
    mean[:, pa, pb], var[:, pa, pb] = m_pairs, v_pairs
    return mean, var


def _phi_integral(v: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """∫ Φ(u/σ) du = v·Φ(v/σ) + σ·φ(v/σ)."""
    return v * phi_cdf(v / sigma) + sigma * np.exp(-0.5 * (v / sigma) ** 2) / math.sqrt(2.0 * math.pi)


def image_2d(j: np.ndarray, phx: np.ndarray, phy: np.ndarray, *, shape: str, sigma: np.ndarray, disk: np.ndarray,
             streak: np.ndarray) -> np.ndarray:
    """Fraction of the signal on each pixel (jy, jx) of the grid ``j`` around the nearest pixel.

    Arrays ``sigma``, ``disk``, ``streak`` are (C,), the phases (P,); the result is (C, Px, Py, Jy, Jx).

    Notes
    -----
    A spot is the product of its two projections. A disk is not separable, but its blur and the
    pixel's area are: a pixel's share is ∫∫_disk K_x(x)·K_y(y) dx dy with K the pixel's box
    convolved with the Gaussian (and, along x, the streak). Along y the chord [−h(x), h(x)],
    h = √(a² − x²), integrates in closed form (∫Φ = vΦ(v/σ) + σφ(v/σ)); along x, Gauss–Legendre
    in θ with x = a·sin θ (smooth at the disk's edge) [derived].
    """
    c, p = sigma.size, phx.size
    if shape != "disk":
        px = profile_1d(j, np.broadcast_to(phx, (c, p)), shape=shape, sigma=sigma[:, None], disk=disk[:, None],
                        streak=streak[:, None])
        if not np.any(streak) and np.array_equal(phx, phy):  # the same profile along y
            py = px
        else:
            py = profile_1d(j, np.broadcast_to(phy, (c, phy.size)), shape=shape, sigma=sigma[:, None],
                            disk=disk[:, None], streak=np.zeros((c, 1)))
        return py[:, None, :, :, None] * px[:, :, None, None, :]
    a = 0.5 * disk
    q = int(np.clip(np.ceil(8.0 * np.max(a / sigma)), 48, 600))
    tq, wq = np.polynomial.legendre.leggauss(q)
    theta = 0.5 * math.pi * tq
    xq = a[:, None] * np.sin(theta)[None, :]  # (C, Q)
    hq = a[:, None] * np.cos(theta)[None, :]
    wgt = (0.5 * math.pi * wq)[None, :] * hq  # dx = a cos θ dθ
    e4 = (slice(None), None, None, None)
    s4, L4 = sigma[e4], streak[e4]
    # K_x: (C, Px, Jx, Q), centre at phase δx, node x_q
    u = j[None, None, :, None] - phx[None, :, None, None] - xq[:, None, None, :]
    kx = _cdf_gauss_streak(u + 0.5, s4, L4) - _cdf_gauss_streak(u - 0.5, s4, L4)
    # L_y: (C, Py, Jy, Q) = ∫_{−h}^{h} [Φ((jy + ½ − δy − y)/σ) − Φ((jy − ½ − δy − y)/σ)] dy
    cy = j[None, None, :, None] - phy[None, :, None, None]
    h4 = hq[:, None, None, :]
    ly = (_phi_integral(cy + 0.5 + h4, s4) - _phi_integral(cy + 0.5 - h4, s4)
          - _phi_integral(cy - 0.5 + h4, s4) + _phi_integral(cy - 0.5 - h4, s4))
    img = np.einsum("cxjq,cyiq,cq->cxyij", kx, ly, wgt, optimize=True)
    return img / (math.pi * a * a)[e4 + (None,)]


def clipped_moments(x: np.ndarray, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean and variance (ADU) of round(X) clipped at 0, X normal (x, s²) with s ≥ ``EXACT_BELOW``: see
    :func:`adu_moments`."""
    z = x / s
    cdf, dens = phi_cdf(z), np.exp(-0.5 * z * z) / math.sqrt(2.0 * math.pi)
    m1 = s * dens + x * cdf - dens / (24.0 * s)
    return m1, np.maximum((x * x + s * s) * cdf + x * s * dens + cdf / 12.0 - m1 * m1, 0.0)


def adu_moments(mu_e: np.ndarray, read_e: np.ndarray, gain: np.ndarray, top: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mean and variance (ADU, ADU²) of a pixel's reading; and where the rounding was exact.

    Notes
    -----
    See the module notes: the rounding exactly where the noise is below ``EXACT_BELOW`` counts (the
    dither series or the sums over the thresholds, :mod:`budget.imaging.rounding`), the linear form
    (μ/g, (μ + r²)/g² + 1/12) elsewhere, except within 6 sd of 0, where the clip at 0 is taken with the
    rounding as a midpoint rule over the thresholds:
    E[R] = Σ_{k≥1} P(X ≥ k − ½) ≈ ∫₀^∞ P(X ≥ t) dt − φ(z)/(24s) = s·φ(z) + x·Φ(z) − φ(z)/(24s) and
    E[R²] ≈ E[max(X, 0)²] + Φ(z)/12 = (x² + s²)·Φ(z) + x·s·φ(z) + Φ(z)/12, z = x/s (the midpoint rule's
    error term, h²/24·f'(0), on each sum) [derived].
    """
    # per-candidate arrays broadcast against the pixels without being copied to their size; the work arrays
    # kept between calls (budget.imaging.rounding: fresh ones cost more in page faults than in arithmetic)
    mu_e, read_e, gain, top = (np.asarray(a, dtype=float) for a in (mu_e, read_e, gain, top))
    shape = np.broadcast(mu_e, read_e, gain, top).shape
    n = math.prod(shape)
    x, s = scratch("adu0", n), scratch("adu1", n)
    np.divide(mu_e, gain, out=x.reshape(shape))
    np.add(mu_e, read_e**2, out=s.reshape(shape))
    np.sqrt(s, out=s)
    np.divide(s.reshape(shape), gain, out=s.reshape(shape))
    mean = np.minimum(x.reshape(shape), top).reshape(-1)
    var = np.multiply(s, s)
    var += 1.0 / 12.0
    exact = s < EXACT_BELOW
    work = scratch("adu2", n)
    np.multiply(s, _CLIP_WITHIN, out=work)
    low = np.flatnonzero((x < work) & ~exact)
    if low.size:  # the ADC's clip at 0 (a dark pixel without background reads ≥ 0: its mean is lifted)
        mean[low], var[low] = clipped_moments(x[low], s[low])
    # the exact pixels: the dither series or the sums over the thresholds (budget.imaging.rounding)
    if exact.any():
        if top.size == 1:
            flat_top = top.reshape(())
        else:
            flat_top = work
            np.copyto(work.reshape(shape), top)
        series, sums = split(x, s, flat_top, within=exact)
        moments_at(x, s, flat_top, series, sums, mean, var)
    return mean.reshape(shape), var.reshape(shape), exact.reshape(shape)
