"""Shared input handling for the locators: image stacks, peak windows, background.

Pixel convention: the centre of pixel ``(i, j)`` is at ``x = j``, ``y = i``.
"""

from __future__ import annotations

import numpy as np

from budget.errors import field_error

__all__ = ["as_stack", "border_background", "brightest_pixel", "output_xy", "window_around_peak"]


def as_stack(images, where: str) -> tuple[np.ndarray, bool]:
    """Return ``(stack, single)``: a float stack (n, h, w) and whether one image came in.

    Parameters
    ----------
    images : array_like
        One image ``(h, w)`` or a stack ``(n, h, w)``, at least 3 x 3 px, finite.
    where : str
        Name of the calling function, for error messages.

    Returns
    -------
    (numpy.ndarray, bool)
        The stack as float64 and True if a single 2-D image was given.
    """
    a = np.asarray(images, dtype=float)
    if a.ndim == 2:
        a, single = a[None], True
    elif a.ndim == 3:
        single = False
    else:
        raise field_error("images", "an image (h, w) or a stack (n, h, w)", a.shape, where)
    if a.shape[0] < 1 or a.shape[1] < 3 or a.shape[2] < 3:
        raise field_error("images", "at least one image of at least 3 x 3 px", a.shape, where)
    if not np.all(np.isfinite(a)):
        raise field_error("images", "finite pixel values", "non-finite values", where)
    return a, single


def output_xy(x: np.ndarray, y: np.ndarray, single: bool):
    """Floats for a single image, arrays for a stack.

    Parameters
    ----------
    x, y : numpy.ndarray
        Coordinates, shape (n,).
    single : bool
        True if the caller passed one image.

    Returns
    -------
    (float, float) or (numpy.ndarray, numpy.ndarray)
    """
    return (float(x[0]), float(y[0])) if single else (x, y)


def brightest_pixel(stack: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row and column of the brightest pixel of each image (first in row-major order on ties).

    Parameters
    ----------
    stack : numpy.ndarray
        Images, shape (n, h, w).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Integer arrays ``i`` (row) and ``j`` (column), shape (n,).
    """
    flat = stack.reshape(stack.shape[0], -1).argmax(axis=1)
    return flat // stack.shape[2], flat % stack.shape[2]


def window_around_peak(stack: np.ndarray, window_px: int | None, where: str):
    """Cut a square window of odd side centred on each image's brightest pixel.

    Parameters
    ----------
    stack : numpy.ndarray
        Images, shape (n, h, w).
    window_px : int or None
        Odd side >= 3; None returns the whole images.
    where : str
        Name of the calling function, for error messages.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray, numpy.ndarray)
        Windows (n, W, W), and the x and y of each window's pixel (0, 0) in the
        image, so that image coordinates are window coordinates plus offset.

    Notes
    -----
    A window that does not fit inside the image raises an error; it is not
    shifted or cut.
    """
    n, h, w = stack.shape
    if window_px is None:
        zeros = np.zeros(n)
        return stack, zeros, zeros
    if isinstance(window_px, bool) or int(window_px) != window_px or window_px < 3 \
            or window_px % 2 == 0:
        raise field_error("window_px", "None or an odd integer >= 3", window_px, where)
    pi_, pj = brightest_pixel(stack)
    return window_at(stack, window_px, pi_, pj, where)


def window_at(stack: np.ndarray, window_px: int, pi_: np.ndarray, pj: np.ndarray, where: str):
    """Cut a square window of odd side centred on pixel (pi_, pj) of each image (as :func:`window_around_peak`)."""
    n, h, w = stack.shape
    half = (int(window_px) - 1) // 2
    bad = (pi_ < half) | (pi_ >= h - half) | (pj < half) | (pj >= w - half)
    if np.any(bad):
        k = int(np.argmax(bad))
        raise field_error(
            "window_px",
            f"a window that fits inside the {h} x {w} image around its centre pixel "
            f"(image {k} peaks at x={int(pj[k])}, y={int(pi_[k])})",
            window_px, where)
    off = np.arange(-half, half + 1)
    rows = (pi_[:, None] + off)[:, :, None]
    cols = (pj[:, None] + off)[:, None, :]
    sub = stack[np.arange(n)[:, None, None], rows, cols]
    return sub, (pj - half).astype(float), (pi_ - half).astype(float)


def border_background(stack: np.ndarray, background, where: str) -> np.ndarray:
    """Background level per image.

    Parameters
    ----------
    stack : numpy.ndarray
        Images or windows, shape (n, h, w).
    background : "median-border", float or None
        Median of the outer ring of pixels of each image, a known value, or 0.
    where : str
        Name of the calling function, for error messages.

    Returns
    -------
    numpy.ndarray
        Shape (n,).
    """
    n = stack.shape[0]
    if background is None:
        return np.zeros(n)
    if isinstance(background, str):
        if background != "median-border":
            raise field_error("background", "'median-border', a number or None", background, where)
        border = np.concatenate([stack[:, 0, :], stack[:, -1, :],
                                 stack[:, 1:-1, 0], stack[:, 1:-1, -1]], axis=1)
        return np.median(border, axis=1)
    try:
        value = float(background)
    except (TypeError, ValueError):
        raise field_error("background", "'median-border', a finite number or None",
                          background, where) from None
    if not np.isfinite(value):
        raise field_error("background", "'median-border', a finite number or None",
                          background, where)
    return np.full(n, value)
