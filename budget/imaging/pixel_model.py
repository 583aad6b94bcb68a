"""The located position's error from the expected pixel values: one vectorized model for every locator.

Every figure is computed from what the camera records, not from a closed form about an idealised
spot: the expected electrons of every pixel of the window (pixel-integrated Gaussian spot, uniform
disk blurred by a Gaussian, either streaked by motion during the exposure), their noise (shot, read,
background) and the ADC (rounding to whole counts, clipped at 0 and at the top code), on a grid of
sub-pixel phases. The error of one located position along x then splits into

* a part fixed by the sub-pixel phase (pixel-locking, window truncation, deterministic quantization,
  the integer locator's whole pixel): the same in every frame, so averaging frames does not remove it;
* a part that changes from frame to frame (noise), which averaging divides by the frames averaged.

Both are averaged over the phase (uniform over a pixel in x and y, midpoint rule). Functions take
numpy arrays over candidates (shape (C,)): ``choose`` evaluates every candidate camera in one call,
``run``/``check``/``verify-locator`` one rig (C = 1).

Derivations [derived]:

* Centre of mass in a window of pixels (i, j) with weights w = I − b (b the known background, ADU):
  x̂ = Σ j·w / Σ w. Its mean is taken as the centre of mass of the expected weights, its variance
  by the first-order (delta-method) rule Σ (j − x̄)²·var(I_ij) / (Σ w)²; for a linear camera this is
  Thompson, Larson & Webb 2002 (Biophys. J. 82:2775) eq. (14)'s photon term plus the window's
  background term, as :func:`budget.imaging.spot.com_variance`.
* ADC: a pixel of X electrons (normal, mean μ, variance μ + r², the Poisson shot noise in its normal
  limit) reads R = round(X/g) clipped to [0, 2^bits − 1]. E[R] = Σ_{k≥1} P(X/g ≥ k − ½) and
  E[R²] = Σ_{k≥1} (2k − 1)·P(X/g ≥ k − ½), exact for any noise. Where the noise is at least
  ``EXACT_BELOW`` counts these equal μ/g and (μ + r²)/g² + 1/12 (JCGM 100 F.2.2.1) to within
  e^(−2π²s²)/π < 2e-5 counts (the dither series of rounding), so the linear form is used; below, exactly
  (:mod:`budget.imaging.rounding`: that series to three terms from 0.3 count where the clips are 7 sd away,
  the sums elsewhere): rounding is then deterministic and does not average away, and a dark pixel adds no noise.
* Integer locator (brightest pixel): P(pixel k is the largest) = ∫ φ_k(v)·Π_{l≠k} Φ_l(v) dv for
  independent normal pixel values (trapezoidal rule on a fine grid, :mod:`budget.imaging.brightest`);
  the error is E[j] − δ (fixed)
  and Var[j] (changing) per phase. When the images are averaged before locating, the pixel variance
  is divided by the frames and the result is one located position per reading.
* A window on each frame's brightest pixel (``window_at = "brightest"``) over a flat top (disk, streak):
  the window's position is random with the brightest pixel's probabilities; given the chosen pixel o
  the centroid's mean is the clipping bias of the window on o, plus the pull of the choice itself (o
  reads high, its rivals low: :func:`budget.imaging.brightest.selection_shift`), plus the pull of the
  dark pixels' lift through the ADC's clip at 0 toward the window's centre (a camera with no
  background); the spread of these means over o adds to the noise.
* Motion blur: the spot moves ``streak_px`` along x during the exposure (along the arc: the
  tangential direction, the one the angle depends on); the profile is the spot convolved with a
  uniform segment, for a Gaussian in closed form with ∫Φ = uΦ(u/σ) + σφ(u/σ).
* Disk of diameter d blurred by σ_b: not separable, but its blur and the pixel's area are, so a
  pixel's share is ∫∫_disk K_x(x)·K_y(y) dx dy, K the pixel's box convolved with the Gaussian
  (and, along x, the streak): closed form along each chord, Gauss–Legendre across the disk
  (:func:`budget.imaging.pixels.image_2d`); its column sums, :func:`budget.imaging.pixels.profile_1d`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from budget.imaging.brightest import brightest, reach, selection_shift
from budget.imaging.pixels import (
    EXACT_BELOW,
    adu_moments,
    clipped_moments,
    image_2d,
    profile_1d,
    spot_adu_moments,
    spot_profiles,
)

__all__ = ["LocatorTerms", "locator_terms", "PHASES"]

PHASES = 8
"""Sub-pixel phases per axis (midpoint rule over one pixel)."""



@dataclass(frozen=True)
class LocatorTerms:
    """Per candidate (arrays (C,)), one axis of one located position, px or px²."""

    fixed_var: np.ndarray  # mean square over the phase of the error that every frame repeats
    fixed_peak: np.ndarray  # largest |fixed error| over the phase
    noise_var: np.ndarray  # frame-to-frame variance of one frame's position, mean over the phase
    random_var: np.ndarray  # the changing part per reading after averaging the frames
    exact_adc: np.ndarray  # bool: rounding modelled exactly somewhere in the window

    @property
    def total_var(self) -> np.ndarray:
        """Variance of one reading's located position per axis, px²."""
        return self.fixed_var + self.random_var


def _phases(n: int) -> np.ndarray:
    return (np.arange(n) + 0.5) / n - 0.5


def _as_c(value, c: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(value, dtype=float), (c,)).astype(float)


def locator_terms(method: str, *, sigma_px, signal_e, background_e, read_noise_e, gain_e_per_adu, bit_depth,
                  window_px, shape: str = "spot", disk_px=0.0, streak_px=0.0, frames: int = 1,
                  averaged: str = "positions", window_at: str = "brightest", phases: int = PHASES,
                  exact_adc: bool = True) -> LocatorTerms:
    """The error terms of a located position per axis for arrays of candidates (see the module notes).

    Parameters
    ----------
    method : {"integer", "centroid", "fit"}
    sigma_px : array_like
        Gaussian spot σ (for a disk: the blur of its edge), px.
    signal_e, background_e, read_noise_e, gain_e_per_adu, bit_depth, window_px : array_like
        Light and camera; ``window_px`` odd, centred on the pixel nearest the centre (the brightest
        pixel of the expected image; re-centring on the centroid lands on the same pixel).
    shape : {"spot", "disk"}; disk_px : array_like
        Target shape and disk diameter, px.
    streak_px : array_like
        Motion during the exposure along x, px.
    frames : int; averaged : {"positions", "images"}
        Frames per reading and what is averaged.
    window_at : {"brightest", "centroid"}
        The window centred on each frame's brightest pixel, or re-centred on the pixel nearest a
        first centroid (which is the pixel nearest the centre). On a flat-topped target (a disk, a
        streak) the brightest pixel wanders over the top from frame to frame and a window that does
        not hold the target from every such pixel clips it: modelled with the brightest pixel's
        probabilities (linear camera; with exact rounding the window is taken on the nearest pixel).
    exact_adc : bool
        False: the linear camera (rounding as g²/12 of added noise) everywhere, a screening figure
        (``choose`` searches working distances with it and reports the exact one).

    Returns
    -------
    LocatorTerms
    """
    c = int(np.broadcast(np.asarray(sigma_px), np.asarray(signal_e), np.asarray(gain_e_per_adu),
                         np.asarray(window_px), np.asarray(streak_px), np.asarray(disk_px)).size)
    sig, sgn = _as_c(sigma_px, c), _as_c(signal_e, c)
    bg, rd, g = _as_c(background_e, c), _as_c(read_noise_e, c), _as_c(gain_e_per_adu, c)
    top = 2.0 ** _as_c(bit_depth, c) - 1.0
    win = _as_c(window_px, c).astype(int)
    disk, streak = _as_c(disk_px, c), _as_c(streak_px, c)
    if int(phases) != phases or phases < 2 or phases % 2:
        raise ValueError("phases must be an even integer >= 2")
    ph = _phases(phases)
    if method == "integer":
        return _integer(sig, sgn, bg, rd, g, top, shape, disk, streak, frames, averaged, ph[ph > 0])
    return _window(method, sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph, window_at,
                   exact_adc)


_CHUNK_VALUES = 1 << 16
"""Pixel values formed at once when the rounding is exact (512 kB per array, so that the dozen arrays alive at
once stay in the cache: choose over 10^4 options 1.5 s against 1.9 s with 2^18 and 190 MiB with 2^21)."""


def _window(method, sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph,
            window_at, exact_adc=True) -> LocatorTerms:
    """Centre of mass (and the first-order figures of a fit) in a window on the nearest pixel."""
    c, p = sig.size, ph.size
    fixed, peak, noise, wander = np.zeros(c), np.zeros(c), np.zeros(c), np.zeros(c)
    exact = (np.sqrt(bg + rd**2) / g < EXACT_BELOW) & exact_adc  # the darkest pixel decides
    args = (sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph)
    lin = np.flatnonzero(~exact)
    if lin.size:
        sub = [a[lin] if isinstance(a, np.ndarray) and a.shape == (c,) else a for a in args]
        fixed[lin], peak[lin], noise[lin], wander[lin] = _window_linear(*sub, window_at)
    ex = np.flatnonzero(exact)
    if ex.size:
        memo = ex.size >= _MEMO_FROM  # choose's calls over many candidates; a single rig computes afresh
        todo = _from_memo(ex, (fixed, peak, noise), args, method, frames, averaged, p) if memo else ex
        # each window size on its own span: no candidate is padded to a wider window
        # the targets are symmetric: the bias is odd in δx and even in δy, so the phases in (0, ½)² give the
        # same means as the whole pixel, at a quarter of the work
        half_ph = ph[ph > 0]
        for w in np.unique(win[todo]):
            same = todo[win[todo] == w]
            step = max(1, _CHUNK_VALUES // ((p // 2) ** 2 * (2 * (int(w) // 2) + 1) ** 2))
            # a spot's column and row profiles for all of this window size at once (image_2d's product per chunk)
            prof = spot_profiles(sig[same], streak[same], half_ph, int(w) // 2) if shape == "spot" else None
            for s0 in range(0, same.size, step):
                part = same[s0:s0 + step]
                sub = [a[part] if isinstance(a, np.ndarray) and a.shape == (c,) else a for a in args]
                cut = None if prof is None else (prof[0][s0:s0 + step],) * 2 if prof[1] is prof[0] else \
                    (prof[0][s0:s0 + step], prof[1][s0:s0 + step])  # a still spot: one profile, `is` tells
                fixed[part], peak[part], noise[part] = _window_exact(*sub[:-1], half_ph, method == "fit", cut)
                if memo:
                    _to_memo(part, (fixed, peak, noise), args, method, frames, averaged, p)
        if method != "fit" and window_at == "brightest":  # the window's wandering, from the linear sums
            sub = [a[ex] if isinstance(a, np.ndarray) and a.shape == (c,) else a for a in args]
            wander[ex] = _window_linear(*sub, window_at)[3]
    if method == "fit" and lin.size:  # Mortensen et al. 2010 for a linear camera
        sa2 = sig[lin] ** 2 + 1.0 / 12.0 + streak[lin] ** 2 / 12.0
        b2 = bg[lin] + rd[lin] ** 2 + g[lin] ** 2 / 12.0
        noise[lin] = sa2 / sgn[lin] * (16.0 / 9.0 + 8.0 * np.pi * sa2 * b2 / sgn[lin])
        fixed[lin], peak[lin], wander[lin] = 0.0, 0.0, 0.0
    # to first order the centre of mass of the mean image is the mean of the centres of mass; the
    # window's wandering with the brightest pixel is per frame (positions) or per mean image (images)
    if averaged == "images":
        return LocatorTerms(fixed, peak, noise + wander, noise / frames + wander, exact)
    return LocatorTerms(fixed, peak, noise + wander, (noise + wander) / frames, exact)


_EXACT_MEMO: dict[bytes, tuple[float, float, float]] = {}
"""The exact-rounding window figures of each distinct candidate already computed in this process (``choose``
asks for the same camera, light and window at its chosen setting and at its shortest distance)."""
_EXACT_MEMO_MAX = 200_000


def _memo_keys(idx, args, method, frames, averaged, p) -> list[bytes]:
    sig, sgn, bg, rd, g, top, win, shape, disk, streak = args[:10]
    rows = np.stack([sig[idx], sgn[idx], bg[idx], rd[idx], g[idx], top[idx], win[idx].astype(float), disk[idx],
                     streak[idx]], axis=1)
    head = f"{method}|{shape}|{frames}|{averaged}|{p}|".encode()
    return [head + r.tobytes() for r in rows]


def _from_memo(ex, outs, args, method, frames, averaged, p) -> np.ndarray:
    """Fill the candidates already computed (the same inputs give the same figures); return the others."""
    if not _EXACT_MEMO:
        return ex
    keys = _memo_keys(ex, args, method, frames, averaged, p)
    left = []
    for i, key in zip(ex.tolist(), keys, strict=True):
        hit = _EXACT_MEMO.get(key)
        if hit is None:
            left.append(i)
        else:
            outs[0][i], outs[1][i], outs[2][i] = hit
    return np.array(left, dtype=int)


def _to_memo(part, outs, args, method, frames, averaged, p) -> None:
    if len(_EXACT_MEMO) + part.size > _EXACT_MEMO_MAX:
        _EXACT_MEMO.clear()
    keys = _memo_keys(part, args, method, frames, averaged, p)
    for i, key in zip(part.tolist(), keys, strict=True):
        _EXACT_MEMO[key] = (float(outs[0][i]), float(outs[1][i]), float(outs[2][i]))


def _window_linear(sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph, window_at):
    """Linear camera: mean square bias, largest bias, frame noise and the window's wandering."""
    extent = 5.0 * sig + 0.5 * disk + 0.5 * streak
    wanders = window_at == "brightest" and bool(np.any(((disk > 1.0) | (streak > 1.0)) & (win // 2 < extent + 3)))
    if not wanders and shape == "spot" and not np.any(streak > 0) and sig.size > _MEMO_FROM:
        f, pk, c1, c2 = _spot_coefficients(sig, win, ph)
    else:
        f, pk, c1, c2, *wander = _linear_sums(sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames,
                                             averaged, ph, wanders)
        if wander:
            return f, pk, c1, wander[0]
    b2 = _dark(bg, rd, g, top)[1]
    return f, pk, c1 / sgn + c2 * b2 / sgn**2, np.zeros(sig.size)


def _dark(bg, rd, g, top):
    """A dark pixel's lift above the known background (ADU) and its variance (e²) through the ADC's clip at 0
    (the linear camera's figures where the background is far above 0)."""
    x, s = bg / g, np.sqrt(bg + rd**2) / g
    mean, var = clipped_moments(x, np.maximum(s, 1e-9))
    near = np.flatnonzero((s < EXACT_BELOW) & (x < 6.0 * s + 1.0))  # rounding decides: the exact sums
    if near.size:
        mean[near], var[near], _ = adu_moments(bg[near], rd[near], g[near], top[near])
    return mean - x, var * g**2


_MEMO_FROM = 64
"""Candidates from which a spot's window sums are interpolated between memoised σ nodes (choose)."""
NODES_PER_OCTAVE = 32
"""σ nodes of the memo: 2^(k/32) px, 2.2 % apart."""
_MEMO: dict[tuple[int, int, int], tuple[float, float, float, float]] = {}


def _spot_coefficients(sig, win, ph):
    """The window sums of a Gaussian spot at the σ nodes that bracket each σ, each node computed once per
    process; between nodes, linear interpolation of their logarithms in log σ."""
    out = np.zeros((4, sig.size))
    for w in np.unique(win):
        sel = win == w
        ls = np.log2(sig[sel]) * NODES_PER_OCTAVE
        k = np.arange(math.floor(ls.min()), math.ceil(ls.max()) + 1)
        todo = [int(i) for i in k if (int(w), int(i), ph.size) not in _MEMO]
        if todo:
            s_nodes = 2.0 ** (np.array(todo, dtype=float) / NODES_PER_OCTAVE)
            n = len(todo)
            one, zero = np.ones(n), np.zeros(n)
            vals = _linear_sums(s_nodes, one, zero, zero, one, one, np.full(n, int(w)), "spot", zero, zero, 1,
                                "positions", ph, False)
            for col, i in enumerate(todo):
                _MEMO[int(w), i, ph.size] = tuple(float(v[col]) for v in vals)
        nodes = np.log(np.maximum(np.array([_MEMO[int(w), int(i), ph.size] for i in k]), 1e-300))  # (K, 4)
        for r in range(4):
            out[r, sel] = np.exp(np.interp(ls, k.astype(float), nodes[:, r]))
    return out[0], out[1], out[2], out[3]


def _linear_sums(sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph, wanders):
    """Column and row sums of a separable expected image, for every window centre the brightest pixel
    can take (offsets ox, oy from the nearest pixel) or the nearest pixel alone."""
    c, p = sig.size, ph.size
    half = int(win.max()) // 2
    k = reach(disk, streak) if wanders else 0
    j = np.arange(-half - k, half + k + 1, dtype=float)
    o = np.arange(-k, k + 1, dtype=float)
    inside = (np.abs(j[None, None, :] - o[None, :, None]) <= (win // 2)[:, None, None])[:, None]  # (C, 1, O, J)
    grid = np.broadcast_to(ph, (c, p))
    px = profile_1d(j, grid, shape=shape, sigma=sig[:, None], disk=disk[:, None], streak=streak[:, None])
    py = profile_1d(j, grid, shape=shape, sigma=sig[:, None], disk=disk[:, None], streak=np.zeros((c, 1)))
    px, py = px[:, :, None, :] * inside, py[:, :, None, :] * inside  # (C, P, O, J)
    rows = py.sum(axis=3)  # (C, Py, Oy)
    sx = px.sum(axis=3)  # (C, Px, Ox)
    xbar = (px * j).sum(axis=3) / sx
    lift, b2 = _dark(bg, rd, g, top)
    if wanders:  # the dark pixels' lift (the clip at 0) pulls the centroid toward the window's centre
        ped = (lift * g / sgn * win)[:, None, None]  # per column of the window, as a fraction of the signal
        xbar = ((px * j).sum(axis=3) + ped * (inside * j).sum(axis=3)) / (sx + ped * inside.sum(axis=3))
    bias = xbar - ph[None, :, None]  # (C, Px, Ox)
    dev2 = (j - xbar[..., None]) ** 2 * inside  # (C, Px, Ox, J)
    wn = win.astype(float)
    e5 = (slice(None), None, None, None, None)
    # noise = c1/S + c2·b²/S², b² = background + read² + g²/12 per pixel (electrons²) [derived]
    c1 = (dev2 * px).sum(axis=3)[:, :, None, :, None] / (sx[:, :, None, :, None] ** 2 * rows[:, None, :, None, :])
    c2 = dev2.sum(axis=3)[:, :, None, :, None] * wn[e5] / (sx[:, :, None, :, None] * rows[:, None, :, None, :]) ** 2
    if not wanders:
        b = bias[:, :, 0]
        return np.mean(b**2, axis=1), np.max(np.abs(b), axis=1), np.mean(c1, axis=(1, 2, 3, 4)), \
            np.mean(c2, axis=(1, 2, 3, 4))
    noise = c1 / sgn[e5] + c2 * (b2 / sgn**2)[e5]  # (C, Px, Py, Ox, Oy)
    div = frames if averaged == "images" else 1
    prob, jx, jy, parts = brightest(sig, sgn, bg, rd, g, top, shape, disk, streak, div, ph, parts=True)
    kk = 2 * k + 1
    prob = prob.reshape(c, p, p, kk, kk).transpose(0, 1, 2, 4, 3)  # (C, Px, Py, Ox, Oy)
    # the window's mean given which pixel was chosen: its clipping bias and the choice's own pull
    total = (sgn / g)[e5] * sx[:, :, None, :, None] * rows[:, None, :, None, :]
    sel = bias[:, :, None, :, None] + selection_shift(parts, jx, jy, xbar, total, win // 2)
    mean_b = (prob * sel).sum(axis=(3, 4))  # (C, Px, Py)
    var_b = np.maximum((prob * sel**2).sum(axis=(3, 4)) - mean_b**2, 0.0)
    mean_n = (prob * noise).sum(axis=(3, 4))
    return (np.mean(mean_b**2, axis=(1, 2)), np.max(np.abs(mean_b), axis=(1, 2)), np.mean(mean_n, axis=(1, 2)),
            None, np.mean(var_b, axis=(1, 2)))


def _window_exact(sig, sgn, bg, rd, g, top, win, shape, disk, streak, frames, averaged, ph, fit=False,
                  profiles=None):
    """Rounding modelled exactly: every pixel of the window at every phase in x and y.

    For a least-squares fit (``fit``), to first order x̂ − x₀ = Σ d·r / Σ d² with d = ∂μ/∂x₀ (ADU per
    px; x₀ is orthogonal to the amplitude, width and background of a symmetric target) and r the
    pixel's deviation from the model: the rounding's mean deviation (fixed) and its variance
    (Σ d²·var / (Σ d²)², which for a linear camera is Mortensen et al. 2010's 16/9 photon factor) [derived].
    """
    half = int(win.max()) // 2
    j = np.arange(-half, half + 1, dtype=float)
    inside = np.abs(j)[None, None, :] <= (win // 2)[:, None, None]  # (C, 1, J)
    e5 = (slice(None), None, None, None, None)
    if profiles is None or fit:
        img = image_2d(j, ph, ph, shape=shape, sigma=sig, disk=disk, streak=streak) if profiles is None else \
            profiles[1][:, None, :, :, None] * profiles[0][:, :, None, None, :]  # (the product image_2d forms)
        mu = sgn[e5] * img + bg[e5]
        mean, var, _ = adu_moments(mu, rd[e5], g[e5], top[e5])
    else:
        mean, var = spot_adu_moments(profiles[0], profiles[1], sgn, bg, rd, g, top)
    mask = inside[:, :, None, :, None] & inside[:, :, None, None, :]  # (C, 1, 1, Jy, Jx)
    w, v = mean - (bg / g)[e5], var
    if not mask.all():  # candidates of narrower windows in the span
        w, v = np.where(mask, w, 0.0), np.where(mask, var, 0.0)
    col = w.sum(axis=3)  # (C, Px, Py, Jx)
    total = col.sum(axis=3)
    xbar = (col * j).sum(axis=3) / total
    bias = xbar - ph[None, :, None]
    dev2 = (j[None, None, None, :] - xbar[..., None]) ** 2
    noise = (v.sum(axis=3) * dev2).sum(axis=3) / total**2
    if fit:
        h = 1e-3
        d = (image_2d(j, ph + h, ph, shape=shape, sigma=sig, disk=disk, streak=streak)
             - image_2d(j, ph - h, ph, shape=shape, sigma=sig, disk=disk, streak=streak)) * (sgn / g)[e5] / (2 * h)
        d = np.where(mask, d, 0.0)
        dd = (d * d).sum(axis=(3, 4))
        bias = (d * (mean - mu / g[e5])).sum(axis=(3, 4)) / dd
        noise = (d * d * v).sum(axis=(3, 4)) / dd**2
    return np.mean(bias**2, axis=(1, 2)), np.max(np.abs(bias), axis=(1, 2)), np.mean(noise, axis=(1, 2))


def _integer(sig, sgn, bg, rd, g, top, shape, disk, streak, frames, averaged, ph) -> LocatorTerms:
    """The brightest pixel: its probabilities under normal pixel noise, per phase."""
    c = sig.size
    div = frames if averaged == "images" else 1
    prob, jx, _ = brightest(sig, sgn, bg, rd, g, top, shape, disk, streak, div, ph)
    ex = (prob * jx).sum(axis=3)
    vx = np.maximum((prob * jx**2).sum(axis=3) - ex**2, 0.0)
    err = ex - ph[None, :, None]
    exact = np.sqrt(bg + rd**2) / g < EXACT_BELOW
    # E[(E[j] − δ)²] = E[δ²] − 2E[δ·E[j]] + E[E[j]²] with E[δ²] = 1/12 exactly: the midpoint rule
    # would integrate the sawtooth −δ of a bright spot only to (1 − 1/P²)/12
    dx = ph[None, :, None]
    mean_sq = 1.0 / 12.0 + np.mean(ex**2 - 2.0 * dx * ex, axis=(1, 2))
    if averaged == "images":  # one located position per reading, from the mean image
        fixed, rand = mean_sq + np.mean(vx, axis=(1, 2)), np.zeros(c)
    else:
        fixed, rand = mean_sq, np.mean(vx, axis=(1, 2)) / frames
    return LocatorTerms(fixed, np.max(np.abs(err), axis=(1, 2)), np.mean(vx, axis=(1, 2)), rand, exact)
