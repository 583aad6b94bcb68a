"""ISO/TS 28037:2010 clause 6, weighted least squares with known u(y_i), step by step (test oracle).

The steps as laid out in NPL's "Software to support ISO/TS 28037:2010(E)" (see
references/iso28037_clause6_wls.toml): plain sums on the centred, weighted data, written
independently of :mod:`budget.fit` (which solves the same problem by a least-squares solve).
"""

from __future__ import annotations

import numpy as np
from scipy import stats


def wls_clause6(x, y, u_y) -> dict[str, float]:
    """Steps 1–9: a, b, u²(a), u²(b), u(a, b), χ²_obs, ν and the 95 % quantile of χ²(ν)."""
    x, y, u_y = (np.asarray(v, dtype=float) for v in (x, y, u_y))
    w = 1.0 / u_y                                   # step 1
    f2 = np.sum(w * w)
    g0 = np.sum(w * w * x) / f2                     # step 2
    h0 = np.sum(w * w * y) / f2
    g = w * (x - g0)                                # step 3
    h = w * (y - h0)
    g2 = np.sum(g * g)                              # step 4
    b = np.sum(g * h) / g2                          # step 5
    a = h0 - b * g0
    u2a = 1.0 / f2 + g0**2 / g2                     # step 6
    u2b = 1.0 / g2
    uab = -g0 / g2
    r = w * (y - a - b * x)                         # step 7
    chi2 = float(np.sum(r * r))                     # step 8
    nu = x.size - 2
    return {"a": a, "b": b, "u2a": u2a, "u2b": u2b, "uab": uab, "chi2": chi2, "nu": nu,
            "chi2_95": float(stats.chi2.ppf(0.95, nu))}  # step 9


def inverse_clause11(fit: dict[str, float], y0: float, u_y0: float) -> tuple[float, float]:
    """x0 = (y0 − a)/b and first-order u(x0) with the covariance of a and b (JCGM 100 eq. 16).

    Written from the sensitivities ∂x0/∂y0 = 1/b, ∂x0/∂a = −1/b, ∂x0/∂b = −x0/b.
    """
    a, b = fit["a"], fit["b"]
    x0 = (y0 - a) / b
    var = (u_y0**2 + fit["u2a"] + x0**2 * fit["u2b"] + 2.0 * x0 * fit["uab"]) / b**2
    return x0, float(np.sqrt(var))
