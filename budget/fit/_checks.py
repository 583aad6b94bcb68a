"""Input checks shared by the straight-line fits.

Every check raises :class:`budget.errors.BudgetInputError` through
:func:`budget.errors.field_error`, naming the field, what is allowed and what
was received.  Nothing is repaired: a bad value is reported, never clamped,
dropped or replaced.
"""

from __future__ import annotations

import numpy as np

from budget.errors import field_error

#: Relative asymmetry of a covariance matrix accepted as rounding (the lower
#: triangle is the one used); anything larger is reported as not symmetric.
SYMMETRY_RTOL = 1e-12


class Said(str):
    """A string whose repr is itself, so messages read ``Got 2 points instead``."""

    def __repr__(self) -> str:
        return str(self)


def shown(value: object) -> Said:
    """Describe ``value`` on one line for an error message."""
    arr = np.asarray(value, dtype=object)
    if arr.ndim == 0:
        return Said(repr(value.item() if isinstance(value, np.generic) else value))
    if arr.size <= 6:
        return Said(repr(arr.tolist()))
    return Said(f"an array of shape {arr.shape}")


def _first_bad(mask: np.ndarray, values: np.ndarray) -> Said:
    index = np.flatnonzero(mask.ravel())[0]
    where = np.unravel_index(index, values.shape) if values.ndim > 1 else int(index)
    return Said(f"{values.ravel()[index].item()!r} at index {where}")


def as_float_array(value: object, field: str, where: str) -> np.ndarray:
    """Convert to a float array, reporting anything that is not numeric."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise field_error(field, "an array of numbers", shown(value), where) from None
    return arr


def points(value: object, field: str, where: str, n: int | None = None) -> np.ndarray:
    """A 1-D array of at least three finite numbers (of length ``n`` if given)."""
    arr = as_float_array(value, field, where)
    if arr.ndim != 1:
        raise field_error(field, "a 1-D array of numbers", Said(f"shape {arr.shape}"), where)
    if n is not None and arr.size != n:
        raise field_error(field, f"an array of the same length as x ({n})",
                          Said(f"length {arr.size}"), where)
    if arr.size < 3:
        raise field_error(field, "an array of at least 3 points", Said(f"{arr.size} points"),
                          where)
    bad = ~np.isfinite(arr)
    if bad.any():
        raise field_error(field, "finite numbers", _first_bad(bad, arr), where)
    return arr


def spread_x(x: np.ndarray, field: str, where: str) -> None:
    """The abscissae must not all be equal: a slope needs two distinct values."""
    if np.all(x == x[0]):
        raise field_error(field, "an array whose values are not all equal", shown(x), where)


def uncertainties(value: object, n: int, field: str, where: str) -> np.ndarray:
    """A scalar or length-``n`` array of finite standard uncertainties > 0, as shape (n,)."""
    arr = as_float_array(value, field, where)
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    elif arr.ndim != 1 or arr.size != n:
        raise field_error(field, f"a number or an array of length {n}",
                          Said(f"shape {arr.shape}"), where)
    bad = ~(np.isfinite(arr) & (arr > 0))
    if bad.any():
        raise field_error(field, "finite numbers > 0", _first_bad(bad, arr), where)
    return arr


def nonnegative(value: object, field: str, where: str) -> np.ndarray:
    """Finite numbers >= 0 (an uncertainty that may be zero), any shape."""
    arr = as_float_array(value, field, where)
    bad = ~(np.isfinite(arr) & (arr >= 0))
    if bad.any():
        raise field_error(field, "finite numbers >= 0", _first_bad(bad, np.atleast_1d(arr)),
                          where)
    return arr


def finite(value: object, field: str, where: str) -> np.ndarray:
    """Finite numbers, any shape."""
    arr = as_float_array(value, field, where)
    bad = ~np.isfinite(arr)
    if bad.any():
        raise field_error(field, "finite numbers", _first_bad(bad, np.atleast_1d(arr)), where)
    return arr


def covariance_factor(value: object, n: int, field: str, where: str) -> np.ndarray:
    """Lower Cholesky factor L of an n×n symmetric positive definite matrix V = L Lᵀ.

    Notes
    -----
    Asymmetry up to ``SYMMETRY_RTOL`` times the largest element is taken as
    rounding (products such as J C Jᵀ produce it); only the lower triangle
    is used.
    """
    V = as_float_array(value, field, where)
    if V.shape != (n, n):
        raise field_error(field, f"a {n}×{n} matrix (one row per point)",
                          Said(f"shape {V.shape}"), where)
    bad = ~np.isfinite(V)
    if bad.any():
        raise field_error(field, "a matrix of finite numbers", _first_bad(bad, V), where)
    scale = np.max(np.abs(V))
    if np.max(np.abs(V - V.T)) > SYMMETRY_RTOL * scale:
        raise field_error(field, "a symmetric positive definite matrix (it is not symmetric)",
                          shown(V), where)
    try:
        return np.linalg.cholesky(V)
    except np.linalg.LinAlgError:
        raise field_error(field,
                          "a symmetric positive definite matrix (it is not positive definite)",
                          shown(V), where) from None
