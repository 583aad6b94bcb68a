"""Ordinary least squares on many rows at once, for use inside a Monte Carlo loop."""

from __future__ import annotations

import numpy as np

from budget.errors import field_error
from budget.fit import _checks

_WHERE = "ols_batch"


def _prepare(x: object, Y: object) -> tuple[np.ndarray, np.ndarray]:
    Ys = _checks.as_float_array(Y, "Y", _WHERE)
    if Ys.ndim != 2:
        raise field_error("Y", "a 2-D array of shape (M, n)", _checks.Said(f"shape {Ys.shape}"),
                          _WHERE)
    xs = _checks.finite(x, "x", _WHERE)
    if xs.shape not in ((Ys.shape[1],), Ys.shape):
        raise field_error("x", f"an array of shape ({Ys.shape[1]},) or {Ys.shape}",
                          _checks.Said(f"shape {xs.shape}"), _WHERE)
    if Ys.shape[1] < 3:
        raise field_error("Y", "rows of at least 3 points", _checks.Said(f"{Ys.shape[1]} points"),
                          _WHERE)
    if np.any(np.all(xs == xs[..., :1], axis=-1)):
        raise field_error("x", "rows whose values are not all equal", _checks.shown(xs), _WHERE)
    return xs, Ys


def _fit(xs: np.ndarray, Ys: np.ndarray
         ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Slope, intercept, centred x and row means of Y."""
    x_mean = xs.mean(axis=-1, keepdims=True)
    dx = xs - x_mean
    y_mean = Ys.mean(axis=1)
    if xs.ndim == 1:
        # Σ dx_i·y_i = Σ dx_i·(y_i − ȳ) as Σ dx_i = 0. einsum rather than a BLAS product: this
        # runs in every Monte Carlo chunk, and a threaded BLAS call waits on a busy machine.
        slope = np.einsum("ij,j->i", Ys, dx) / (dx @ dx)
    else:
        slope = np.einsum("ij,ij->i", dx, Ys) / np.einsum("ij,ij->i", dx, dx)
    intercept = y_mean - slope * x_mean[..., 0]
    return slope, intercept, dx, y_mean


def ols_batch(x: object, Y: object) -> tuple[np.ndarray, np.ndarray]:
    """Ordinary-least-squares slope and intercept of every row of ``Y``.

    Parameters
    ----------
    x : array_like
        Abscissae, shape (n,) shared by all rows, or (M, n) one row per fit.
        Finite; no row all equal.
    Y : array_like
        Ordinates, shape (M, n), n >= 3.

    Returns
    -------
    slope, intercept : numpy.ndarray
        Shape (M,) each; row m equals ``straight_line(x[m], Y[m])``.

    Notes
    -----
    The closed-form OLS estimates (ISO/TS 28037:2010 clause 6 with unit
    weights): b = Σ(x_i − x̄)y_i / Σ(x_i − x̄)², a = ȳ − b·x̄. Y is not checked
    for finiteness, so a non-finite sample shows as NaN in its own row.
    """
    slope, intercept, _, _ = _fit(*_prepare(x, Y))
    return slope, intercept


def ols_batch_residuals(x: object, Y: object) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """As :func:`ols_batch`, also returning the residuals of every row.

    Parameters
    ----------
    x : array_like
        Shape (n,) or (M, n).
    Y : array_like
        Shape (M, n).

    Returns
    -------
    slope, intercept : numpy.ndarray
        Shape (M,).
    residuals : numpy.ndarray
        Shape (M, n): Y − (intercept + slope·x), e.g. for the largest
        non-linearity residual of each trial.

    Notes
    -----
    Same estimates as :func:`ols_batch` (ISO/TS 28037:2010 clause 6, unit weights).
    """
    xs, Ys = _prepare(x, Y)
    slope, intercept, dx, y_mean = _fit(xs, Ys)
    residuals = Ys - y_mean[:, None]  # y − a − b·x = (y − ȳ) − b·(x − x̄)
    residuals -= slope[:, None] * dx
    return slope, intercept, residuals
