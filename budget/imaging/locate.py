"""Target locators: integer peak, centre of mass, thresholded centroid, Gaussian fit.

Every locator takes one image ``(h, w)`` or a stack ``(n, h, w)`` and returns
``(x, y)``: floats for one image, arrays of shape ``(n,)`` for a stack.

Pixel convention (shared with :mod:`budget.imaging.render`): the centre of
pixel ``(i, j)`` (row ``i``, column ``j``) is at ``x = j``, ``y = i``; the pixel
covers ``[j - 1/2, j + 1/2] x [i - 1/2, i + 1/2]``.

Windows are square, of odd side ``window_px``, centred on the brightest pixel
(the first one in row-major order on ties). A window that does not fit inside
the image raises an error rather than being shifted or cut.

The pixel-locking bias and noise of these locators are in
:mod:`budget.imaging.spot`; the Gaussian fit itself is in
:mod:`budget.imaging.spot_fit`.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from budget.errors import field_error, warn
from budget.imaging.spot_fit import GaussianFit, fit_gaussian_spots
from budget.imaging.stack import (
    as_stack,
    border_background,
    brightest_pixel,
    output_xy,
    window_around_peak,
    window_at,
)

__all__ = [
    "GaussianFit",
    "centre_of_mass",
    "fit_gaussian_spots",
    "gaussian_fit",
    "integer_peak",
    "threshold_centroid",
]

def integer_peak(images: ArrayLike):
    """Brightest pixel: the integer locator.

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``.

    Returns
    -------
    (x, y)
        Column and row of the brightest pixel, px (first one on ties).

    Notes
    -----
    Over uniformly random sub-pixel phases its error is rectangular on
    ``[-1/2, 1/2]`` px, u = 1/sqrt(12) px (JCGM 100 4.3.7, F.2.2.1).
    """
    stack, single = as_stack(images, "integer_peak")
    i, j = brightest_pixel(stack)
    return output_xy(j.astype(float), i.astype(float), single)


def centre_of_mass(images: ArrayLike, *, window_px: int | None = None, background="median-border",
                   threshold: float | None = None, recentre: bool = False):
    """Intensity-weighted centroid (centre of mass).

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``.
    window_px : int, optional
        Odd side of a square window around the brightest pixel; None uses the
        whole image.
    background : "median-border", float or None
        Subtracted from every pixel before weighting: the median of the
        window's (or image's) outer ring of pixels, a known value in the image's
        units, or nothing.
    threshold : float, optional
        If given, only pixels whose background-subtracted value exceeds it
        contribute. Without it, negative values after subtraction are kept
        (they keep the estimate unbiased by noise).
    recentre : bool
        After a first centroid in the window on the brightest pixel, centre the window on the pixel
        nearest that centroid and compute again (``[locator] window_at = "centroid"``).

    Returns
    -------
    (x, y)
        Centroid in px.

    Notes
    -----
    ``x = sum(j w_ij) / sum(w_ij)``. Noise: with the background known,
    :func:`budget.imaging.spot.com_variance` [derived]; at low background
    it approaches Thompson, Larson & Webb 2002 eq. (14). Bias against the
    sub-pixel phase: :func:`budget.imaging.spot.pixel_locking_bias`.
    """
    where = "centre_of_mass"
    stack, single = as_stack(images, where)
    sub, x_off, y_off = window_around_peak(stack, window_px, where)
    wts = sub - border_background(sub, background, where)[:, None, None]
    if threshold is not None:
        t = float(threshold)
        if not np.isfinite(t):
            raise field_error("threshold", "None or a finite number", threshold, where)
        wts = np.where(wts > t, wts, 0.0)
    total = wts.sum(axis=(1, 2))
    if np.any(total <= 0):
        k = int(np.argmax(total <= 0))
        raise field_error("images", "images with signal above the background",
                          f"image {k} with total weight {total[k]:.3g}", where)
    jj = np.arange(sub.shape[2], dtype=float)
    ii = np.arange(sub.shape[1], dtype=float)
    x = (wts.sum(axis=1) * jj).sum(axis=1) / total
    y = (wts.sum(axis=2) * ii).sum(axis=1) / total
    if recentre and window_px is not None:
        rows = np.rint(y + y_off).astype(int)
        cols = np.rint(x + x_off).astype(int)
        sub2, x_off, y_off = window_at(stack, window_px, rows, cols, where)
        again = centre_of_mass(sub2, background=background, threshold=threshold)
        x, y = np.atleast_1d(again[0]), np.atleast_1d(again[1])
    return output_xy(x + x_off, y + y_off, single)


def threshold_centroid(images: ArrayLike, *, level: float = 0.5, background="median-border",
                       window_px: int | None = None):
    """Area centroid of the pixels above a fraction of the peak.

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``.
    level : float
        Fraction in (0, 1): pixels with ``value - bg > level * (max - bg)``
        count, each with weight one.
    background, window_px
        As in :func:`centre_of_mass`.

    Returns
    -------
    (x, y)
        Mean position of the selected pixels, px.

    Notes
    -----
    Binary (area) centroid, common practice for high-contrast targets. All
    pixels above the level count, connected to the peak or not. Its
    pixel-locking is stronger than the centre of mass's because the weights
    are 0 or 1.
    """
    where = "threshold_centroid"
    if not np.isfinite(level) or not 0 < level < 1:
        raise field_error("level", "a number in (0, 1)", level, where)
    stack, single = as_stack(images, where)
    sub, x_off, y_off = window_around_peak(stack, window_px, where)
    bg = border_background(sub, background, where)
    peak = sub.max(axis=(1, 2))
    if np.any(peak <= bg):
        k = int(np.argmax(peak <= bg))
        raise field_error("images", "images whose peak exceeds the background",
                          f"image {k} with peak {peak[k]:.3g} <= background {bg[k]:.3g}", where)
    mask = (sub - bg[:, None, None]) > level * (peak - bg)[:, None, None]
    count = mask.sum(axis=(1, 2))
    jj = np.arange(sub.shape[2], dtype=float)
    ii = np.arange(sub.shape[1], dtype=float)
    x = (mask.sum(axis=1) * jj).sum(axis=1) / count
    y = (mask.sum(axis=2) * ii).sum(axis=1) / count
    return output_xy(x + x_off, y + y_off, single)


def gaussian_fit(images: ArrayLike, *, sigma_px: float | None = None, window_px: int | None = None,
                 pixel: str = "integrated", max_iter: int = 100):
    """Centre of a least-squares 2-D Gaussian fit (see :func:`fit_gaussian_spots`).

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``.
    sigma_px, window_px, pixel, max_iter
        As in :func:`fit_gaussian_spots`.

    Returns
    -------
    (x, y)
        Fitted centre, px. A warning is issued if any fit did not converge.

    Notes
    -----
    Mortensen et al. 2010, Nat. Methods 7:377 (least-squares estimator).
    """
    stack, single = as_stack(images, "gaussian_fit")
    fit = fit_gaussian_spots(stack, sigma_px=sigma_px, window_px=window_px, pixel=pixel,
                             max_iter=max_iter)
    if not np.all(fit.converged):
        warn(f"Gaussian fit did not converge for {int(np.sum(~fit.converged))} of "
             f"{fit.converged.size} images in {fit.n_iter} iterations.")
    return output_xy(fit.x_px, fit.y_px, single)
