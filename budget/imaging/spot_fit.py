"""Least-squares fit of a 2-D Gaussian spot plus background, vectorized over a stack.

Pixel convention: the centre of pixel ``(i, j)`` is at ``x = j``, ``y = i``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.special import erf

from budget.errors import field_error
from budget.imaging.stack import as_stack, border_background, window_around_peak

__all__ = ["GaussianFit", "fit_gaussian_spots"]

_SQRT2 = np.sqrt(2.0)
_INV_SQRT2PI = 1.0 / np.sqrt(2.0 * np.pi)


@dataclass(frozen=True)
class GaussianFit:
    """Result of :func:`fit_gaussian_spots`: arrays of shape (n,).

    Attributes
    ----------
    x_px, y_px : numpy.ndarray
        Fitted centre, px, in image coordinates.
    sigma_px : numpy.ndarray
        Fitted (or fixed) spot standard deviation, px.
    signal : numpy.ndarray
        Fitted total spot signal, image units.
    background : numpy.ndarray
        Fitted background per pixel, image units.
    converged : numpy.ndarray
        True where the last step was below the tolerance (see `tol_px`).
    n_iter : int
        Iterations used.
    """

    x_px: np.ndarray
    y_px: np.ndarray
    sigma_px: np.ndarray
    signal: np.ndarray
    background: np.ndarray
    converged: np.ndarray
    n_iter: int


def _profile(grid, centre, sigma, pixel):
    """1-D spot profile and its derivatives in centre and sigma, each (n, m)."""
    s = sigma[:, None]
    if pixel == "integrated":
        up = (grid[None, :] + 0.5 - centre[:, None]) / s
        um = (grid[None, :] - 0.5 - centre[:, None]) / s
        pp, pm = np.exp(-0.5 * up**2) * _INV_SQRT2PI, np.exp(-0.5 * um**2) * _INV_SQRT2PI
        e = 0.5 * (erf(up / _SQRT2) - erf(um / _SQRT2))
        return e, -(pp - pm) / s, -(up * pp - um * pm) / s
    u = (grid[None, :] - centre[:, None]) / s
    phi = np.exp(-0.5 * u**2) * _INV_SQRT2PI
    return phi / s, u * phi / s**2, (u**2 - 1.0) * phi / s**2


def _model(p, ii, jj, pixel, fixed_sigma, with_jac=True):
    """Model (n, h, w) and, optionally, separable factors of its Jacobian.

    Every Jacobian column is a sum of outer products ``u_t (x) v_t`` (u over
    rows, v over columns), so J^T J and J^T r need only 1-D dot products and one
    contraction with the residual image; the factors are returned as
    ``(U (n, T, h), V (n, T, w), M (n_par, T))`` with column = sum_t M[c, t] u_t v_t.
    """
    x, y, amp, bg = p[:, 0], p[:, 1], p[:, 2], p[:, 3]
    sig = fixed_sigma[: p.shape[0]] if fixed_sigma is not None else p[:, 4]
    ex, dex, dexs = _profile(jj, x, sig, pixel)
    ey, dey, deys = _profile(ii, y, sig, pixel)
    a = amp[:, None]
    model = a[:, :, None] * ey[:, :, None] * ex[:, None, :] + bg[:, None, None]
    if not with_jac:
        return model, None
    ones_h, ones_w = np.ones_like(ey), np.ones_like(ex)
    # terms: 0 (A ey, dex) 1 (A dey, ex) 2 (ey, ex) 3 (1, 1) [4 (A ey, dexs) 5 (A deys, ex)]
    u = [a * ey, a * dey, ey, ones_h]
    v = [dex, ex, ex, ones_w]
    mix = np.eye(4)
    if fixed_sigma is None:
        u += [a * ey, a * deys]
        v += [dexs, ex]
        mix = np.zeros((5, 6))
        mix[:4, :4] = np.eye(4)
        mix[4, 4:] = 1.0
    return model, (np.stack(u, axis=1), np.stack(v, axis=1), mix)


def _normal_equations(factors, resid):
    """J^T J (n, p, p) and J^T r (n, p) from the separable factors [derived]."""
    u, v, mix = factors
    gram = (u @ u.transpose(0, 2, 1)) * (v @ v.transpose(0, 2, 1))  # (n, T, T)
    rv = resid @ v.transpose(0, 2, 1)  # (n, h, T): sum over columns
    g_terms = np.einsum("nit,nti->nt", rv, u)
    return mix @ gram @ mix.T, g_terms @ mix.T


def fit_gaussian_spots(images: ArrayLike, *, sigma_px: float | None = None, window_px: int | None = None,
                       pixel: str = "integrated", max_iter: int = 100,
                       tol_px: float = 1e-6) -> GaussianFit:
    """Least-squares fit of a 2-D Gaussian plus constant background to each image.

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``.
    sigma_px : float, optional
        Fix the spot standard deviation; None fits it.
    window_px : int, optional
        Odd side of a window around the brightest pixel; None fits the whole image.
    pixel : {"integrated", "sampled"}
        Model pixel values as the Gaussian integrated over the pixel area (erf
        differences, default) or sampled at the pixel centre.
    max_iter : int
        Largest number of Levenberg-Marquardt iterations.
    tol_px : float
        Convergence: an accepted step below this in centre and sigma (px),
        below ``tol_px * signal`` in signal and ``tol_px * signal / (h w)`` in
        background.

    Returns
    -------
    GaussianFit
        Parameters per image; arrays of shape (n,) (n = 1 for one image).

    Notes
    -----
    Unweighted least squares, the estimator whose variance Mortensen et al.
    2010 (Nat. Methods 7:377) give; see
    :func:`budget.imaging.spot.mortensen_variance`.
    Levenberg-Marquardt (Marquardt 1963, damping scaled by diag(J^T J)) with a
    damping factor per image, vectorized over the images still iterating; the
    Python loop runs over iterations only. Start: centre of mass after
    subtracting the median of the border, signal = background-subtracted sum,
    sigma from the peak height ``sqrt(signal / (2 pi (peak - bg)))``.
    """
    where = "fit_gaussian_spots"
    if pixel not in ("integrated", "sampled"):
        raise field_error("pixel", "one of ('integrated', 'sampled')", pixel, where)
    if sigma_px is not None and (not np.isfinite(sigma_px) or sigma_px <= 0):
        raise field_error("sigma_px", "None or a number > 0", sigma_px, where)
    if int(max_iter) != max_iter or max_iter < 1:
        raise field_error("max_iter", "an integer >= 1", max_iter, where)
    if not np.isfinite(tol_px) or tol_px <= 0:
        raise field_error("tol_px", "a number > 0", tol_px, where)
    stack, _ = as_stack(images, where)
    sub, x_off, y_off = window_around_peak(stack, window_px, where)
    n, h, w = sub.shape
    ii, jj = np.arange(h, dtype=float), np.arange(w, dtype=float)
    bg0 = border_background(sub, "median-border", where)
    wts = sub - bg0[:, None, None]
    amp0 = wts.sum(axis=(1, 2))
    height = sub.max(axis=(1, 2)) - bg0
    if np.any(amp0 <= 0) or np.any(height <= 0):
        k = int(np.argmax((amp0 <= 0) | (height <= 0)))
        raise field_error("images", "images with signal above the border median",
                          f"image {k} with background-subtracted sum {amp0[k]:.3g}", where)
    x0 = (wts.sum(axis=1) * jj).sum(axis=1) / amp0
    y0 = (wts.sum(axis=2) * ii).sum(axis=1) / amp0
    p = np.column_stack([x0, y0, amp0, bg0])
    fixed = None
    if sigma_px is None:
        p = np.column_stack([p, np.sqrt(amp0 / (2.0 * np.pi * height))])
    else:
        fixed = np.full(n, float(sigma_px))
    data = sub
    lam = np.full(n, 1e-3)
    converged = np.zeros(n, dtype=bool)
    eye = np.eye(p.shape[1])
    model, _ = _model(p, ii, jj, pixel, fixed, with_jac=False)
    cost = np.sum((data - model) ** 2, axis=(1, 2))
    n_iter = 0
    while n_iter < max_iter and not np.all(converged):
        n_iter += 1
        act = np.flatnonzero(~converged)
        pa, da = p[act], data[act]
        model, factors = _model(pa, ii, jj, pixel, fixed, with_jac=True)
        a, g = _normal_equations(factors, da - model)
        diag = np.einsum("npp->np", a)
        damped = a + lam[act, None, None] * diag[:, :, None] * eye
        step = np.linalg.solve(damped, g[:, :, None])[..., 0]
        trial = pa + step
        ok = np.all(np.isfinite(trial), axis=1) & (trial[:, 2] > 0)
        if fixed is None:
            ok &= trial[:, 4] > 0
        trial = np.where(ok[:, None], trial, pa)
        t_model, _ = _model(trial, ii, jj, pixel, fixed, with_jac=False)
        t_cost = np.sum((da - t_model) ** 2, axis=(1, 2))
        better = ok & (t_cost <= cost[act])
        p[act] = np.where(better[:, None], trial, pa)
        cost[act] = np.where(better, t_cost, cost[act])
        lam[act] = np.where(better, lam[act] / 3.0, lam[act] * 3.0)
        scale = np.column_stack([np.ones((act.size, 2)), pa[:, 2], pa[:, 2] / (h * w)])
        if fixed is None:
            scale = np.column_stack([scale, np.ones(act.size)])
        small = np.all(np.abs(step) < tol_px * scale, axis=1)
        converged[act] = small & (better | (lam[act] > 1e12))
    sig = fixed if fixed is not None else p[:, 4]
    return GaussianFit(x_px=p[:, 0] + x_off, y_px=p[:, 1] + y_off, sigma_px=sig,
                       signal=p[:, 2], background=p[:, 3], converged=converged, n_iter=n_iter)
