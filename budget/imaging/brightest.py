"""The brightest pixel under pixel noise, and what choosing it does to a window centred on it.

Derivations [derived], for independent normal pixel values X_k (mean m_k, sd s_k, ADU):

* P(pixel o is the largest) = ∫ f_o(v) dv with f_o(v) = φ_o(v)·Π_{l≠o} Φ_l(v) (trapezoidal rule on a
  fine grid of v).
* Given that o is the largest at value v, X_o = v and every other pixel is a normal truncated above
  at v: E[X_k − m_k | o largest at v] = −s_k·φ(z_k)/Φ(z_k), z_k = (v − m_k)/s_k. The window centred
  on o therefore holds pixels whose mean is not the expected image: o is brighter, its rivals dimmer.
  To first order the window's centre of mass moves by Σ_k (j_k − x̄_o)·E[X_k − m_k | o] / S_o
  (x̄_o, S_o the centre and sum of the expected window): a shift toward o that goes with the window's
  own clipping bias (both toward the side the window sits on), so the wandering window's spread over
  a flat top (a disk, a streak) is larger than its clipping bias alone says. Rendered images show it
  (tests/imaging/test_locator_rendered.py): with the window taken from an independent frame's
  brightest pixel the spread equals the clipping-only figure, with the frame's own it is larger.
"""

from __future__ import annotations

import math

import numpy as np

from budget.imaging.pixels import adu_moments, image_2d
from budget.imaging.special import phi_coarse

__all__ = ["INT_HALF", "brightest", "reach", "selection_shift"]

INT_HALF = 3  # the brightest pixel is looked for within ±3 px of the nearest pixel, or a flat top's half-width
_V_NODES = 96
_REACH_MAX = 12


def reach(disk, streak) -> int:
    """How far (px) from the nearest pixel the brightest one is looked for: over a flat top, its half-width."""
    return int(min(_REACH_MAX, max(INT_HALF, math.ceil(float(np.max(0.5 * disk + 0.5 * streak))) + 1)))


def brightest(sig, sgn, bg, rd, g, top, shape, disk, streak, var_div, ph, *, parts=False):
    """P(the brightest pixel is at offset (jy, jx) from the nearest pixel), (C, Px, Py, K·K), and the offsets.

    ``parts``: also the pieces :func:`selection_shift` needs (density f, values v, means, sds, dv).
    """
    c, p = sig.size, ph.size
    r = reach(disk, streak)
    j = np.arange(-r, r + 1, dtype=float)
    e5 = (slice(None), None, None, None, None)
    mu = sgn[e5] * image_2d(j, ph, ph, shape=shape, sigma=sig, disk=disk, streak=streak) + bg[e5]
    mean, var, _ = adu_moments(mu, rd[e5], g[e5], top[e5])
    sd = np.sqrt(np.maximum(var / var_div, 1e-18))
    m = mean.reshape(c, p, p, -1)
    s = sd.reshape(c, p, p, -1)
    lo = m.max(axis=3) - 6.0 * s.max(axis=3)
    hi = (m + 6.0 * s).max(axis=3)
    t = np.linspace(0.0, 1.0, _V_NODES)
    vv = lo[..., None] + (hi - lo)[..., None] * t  # (C, P, P, V)
    z = (vv[..., None, :] - m[..., None]) / s[..., None]  # (C, P, P, K, V)
    cdf = np.clip(phi_coarse(z), 1e-300, 1.0)
    dens = np.exp(-0.5 * z**2) / (math.sqrt(2 * math.pi) * s[..., None])
    prod = np.exp(np.log(cdf).sum(axis=3, keepdims=True))
    f = dens * prod / cdf
    dv = (hi - lo)[..., None] / (_V_NODES - 1)
    f[..., 0] *= 0.5  # trapezoidal weights
    f[..., -1] *= 0.5
    raw = f.sum(axis=4) * dv
    prob = raw / raw.sum(axis=3, keepdims=True)
    jy = np.repeat(j, j.size)
    jx = np.tile(j, j.size)
    if parts:
        # E[X_k − m_k | X_k < v] = −s·φ(z)/Φ(z), each pixel against every value of the largest
        trunc = -s[..., None] * np.exp(-0.5 * z**2) / (math.sqrt(2 * math.pi) * cdf)
        return prob, jx, jy, (f * dv[..., None], vv, m, trunc, raw)
    return prob, jx, jy


def selection_shift(parts, jx, jy, xbar, total_adu, half):
    """The window's mean shift along x given which pixel is the brightest, (C, Px, Py, Ox, Oy), px.

    ``xbar`` (C, Px, Ox): the expected window's centre when centred on offset ox; ``total_adu``
    (C, Px, Py, Ox, Oy): the expected window's sum, ADU; ``half`` (C,): the window's half-width.
    """
    fw, vv, m, trunc, raw = parts  # fw (C,P,P,O,V): f_o(v)·dv; trunc (C,P,P,K,V)
    c, p = m.shape[0], m.shape[1]
    n = int(round(math.sqrt(jx.size)))
    # window membership of pixel k when centred on o (both flattened jy-major): (C, K, O)
    inside = ((np.abs(jx[:, None] - jx[None, :])[None] <= half[:, None, None])
              & (np.abs(jy[:, None] - jy[None, :])[None] <= half[:, None, None])).astype(float)
    # ∫ f_o(v)·E[X_k − m_k | X_k < v] dv for every (o, k): (C, P, P, O, K)
    cross = np.einsum("cxyov,cxykv->cxyok", fw, trunc, optimize=True)
    own = np.einsum("cxyov,cxyov->cxyo", fw, trunc, optimize=True)  # o's own term, replaced below
    lift = (fw * (vv[..., None, :] - m[..., None])).sum(axis=4)  # ∫ f_o(v)·(v − m_o) dv
    xb = np.broadcast_to(xbar[:, :, None, None, :], (c, p, p, n, n)).reshape(c, p, p, n * n)  # per o (jy-major)
    moment_j = np.einsum("cxyok,ko,cko->cxyo", cross, np.broadcast_to(jx[:, None], (jx.size, jx.size)), inside,
                         optimize=True)
    moment_1 = np.einsum("cxyok,cko->cxyo", cross, inside, optimize=True)
    dx = moment_j - xb * moment_1 + (jx[None, None, None, :] - xb) * (lift - own)
    with np.errstate(invalid="ignore", divide="ignore"):
        shift = np.where(raw > 1e-300, dx / np.maximum(raw, 1e-300), 0.0)
    shift = shift.reshape(c, p, p, n, n).transpose(0, 1, 2, 4, 3)  # (C, Px, Py, Ox, Oy)
    return shift / total_adu
