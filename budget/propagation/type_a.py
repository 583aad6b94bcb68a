"""Type A evaluation of a series of repeated vector observations (JCGM 100 4.2), taken in order.

One series is n observations of an N-vector (a located point's x and y over n frames). The
evaluation gives the mean vector, the sample covariance, and checks the two assumptions behind
s²/n: that the observations do not drift and are not correlated in time. It knows nothing of
cameras.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from budget.errors import field_error

__all__ = ["SeriesTypeA", "type_a_series", "effective_n_ar1", "variance_ratio_interval", "MIN_OBSERVATIONS",
           "ALPHA"]

MIN_OBSERVATIONS = 4
"""Fewest observations of a series: with ν = n − 1 ≤ 2 the t distribution of its mean has no
variance (JCGM 101 6.4.9.3), so neither Monte Carlo nor the linear method can use it."""
ALPHA = 0.05
"""Level of the drift and autocorrelation tests of one series (shared by its N axes, Bonferroni)."""
_RHO_MAX = 0.99


@dataclass(frozen=True)
class SeriesTypeA:
    """What n ordered observations of an N-vector say about its mean.

    Attributes
    ----------
    n : int
        Observations.
    mean : tuple of float
        The mean vector x̄ (JCGM 100 4.2.1).
    scatter : tuple of tuples
        S, the sample covariance matrix with n − 1 in the denominator (JCGM 100 4.2.2, C.3.6).
    n_eff : float
        Effective number of independent observations (n without significant autocorrelation).
    dof : float
        ν = n_eff − 1 (n − 1 without autocorrelation).
    lag1 : tuple of float
        Sample lag-1 autocorrelation r1 of each axis, of the detrended series if it drifts (n_eff
        uses its bias-corrected value).
    lag1_p : tuple of float
        One-sided p-value of each lag-1 autocorrelation against white noise.
    autocorrelated : bool
        Whether any axis is significantly autocorrelated (level :data:`ALPHA`/N).
    slope : tuple of float
        Drift per observation of each axis (least-squares slope against the observation index).
    slope_p : tuple of float
        Two-sided p-value of each slope (t test with n − 2 degrees of freedom).
    drifting : bool
        Whether any slope is significant (level :data:`ALPHA`/N).
    """

    n: int
    mean: tuple[float, ...]
    scatter: tuple[tuple[float, ...], ...]
    n_eff: float
    dof: float
    lag1: tuple[float, ...]
    lag1_p: tuple[float, ...]
    autocorrelated: bool
    slope: tuple[float, ...]
    slope_p: tuple[float, ...]
    drifting: bool

    @property
    def covariance_of_mean(self) -> np.ndarray:
        """S/n_eff: the covariance matrix of the mean vector (JCGM 100 4.2.3 with n_eff)."""
        return np.array(self.scatter) / self.n_eff

    @property
    def sd(self) -> np.ndarray:
        """Experimental standard deviation of each axis, √S_ii."""
        return np.sqrt(np.diag(np.array(self.scatter)))

    @property
    def drift_total(self) -> np.ndarray:
        """The drift over the whole series, slope·(n − 1), per axis."""
        return np.array(self.slope) * (self.n - 1)


def effective_n_ar1(n: int, rho: float) -> float:
    """Effective number of independent observations of n from a first-order autoregressive process.

    Notes
    -----
    For a stationary series with autocorrelation ρ_k, Var(x̄) = σ²γ/n with
    γ = 1 + 2 Σ_{k=1}^{n−1} (1 − k/n) ρ_k, and E[s²] = σ²(n − γ)/(n − 1); the unbiased
    u²(x̄) = s²·γ(n − 1)/(n(n − γ)) is s²/n_eff with n_eff = n(n − γ)/(γ(n − 1))
    (N. F. Zhang 2006, "Calculation of the uncertainty of the mean of autocorrelated
    measurements", Metrologia 43:S276–S281). Here ρ_k = ρ^k (first-order autoregressive
    model, one of the cases Zhang and T. J. Witt 2007, Metrologia 44:201, treat). ρ ≤ 0
    gives n (a negative correlation would shrink u; it is not used, which is conservative).
    """
    if n < 2:
        raise field_error("n", "an integer >= 2", n, "effective_n_ar1")
    rho = min(max(float(rho), 0.0), _RHO_MAX)
    if rho == 0.0:
        return float(n)
    k = np.arange(1, n)
    gamma = 1.0 + 2.0 * float(np.sum((1.0 - k / n) * rho**k))
    return n * (n - gamma) / (gamma * (n - 1))


def _lag1(e: np.ndarray) -> tuple[float, float, float]:
    """Lag-1 autocorrelation r1 of a centred series, its bias-corrected ρ̂ and the one-sided p-value.

    Notes
    -----
    r1 = Σ e_k e_{k+1} / Σ e_k². With the mean estimated, E[r1] ≈ ρ − (1 + 3ρ)/n for a
    first-order autoregressive series (M. G. Kendall 1954, Biometrika 41:403; value from memory),
    so ρ̂ = (n r1 + 1)/(n − 3). Under white noise r1 has mean ≈ −1/n and variance ≈ 1/n
    (large-sample result, value from memory): z = (r1 + 1/n)√n against the normal.
    """
    from scipy import stats  # here, not at import: a design run never needs scipy

    n = e.size
    den = float(np.sum(e * e))
    if den == 0.0:
        return 0.0, 0.0, 1.0
    r1 = float(np.sum(e[:-1] * e[1:])) / den
    z = (r1 + 1.0 / n) * math.sqrt(n)
    rho = (n * r1 + 1.0) / (n - 3) if n > 3 else r1
    return r1, rho, float(stats.norm.sf(z))


def _slope(v: np.ndarray) -> tuple[float, float, np.ndarray]:
    """Least-squares slope of v against 0…n−1, its two-sided p-value (t, n − 2 dof), the residuals."""
    from scipy import stats  # here, not at import: a design run never needs scipy

    n = v.size
    k = np.arange(n, dtype=float) - 0.5 * (n - 1)
    b = float(np.sum(k * (v - v.mean())) / np.sum(k * k))
    res = v - v.mean() - b * k
    if n < 3:
        return b, 1.0, res
    s2 = float(np.sum(res * res)) / (n - 2)
    if s2 == 0.0:
        return b, (1.0 if b == 0.0 else 0.0), res
    t = b / math.sqrt(s2 / float(np.sum(k * k)))
    return b, float(2.0 * stats.t.sf(abs(t), n - 2)), res


def type_a_series(values, *, alpha: float = ALPHA) -> SeriesTypeA:
    """Type A evaluation of n ordered observations of an N-vector, shape (n, N).

    Raises
    ------
    BudgetInputError
        Fewer than :data:`MIN_OBSERVATIONS` observations, or non-finite values.

    Notes
    -----
    Mean and sample covariance (JCGM 100 4.2.1–4.2.3, C.3.6). Drift: least-squares slope of each
    axis against the observation index, t test with n − 2 degrees of freedom. Autocorrelation:
    lag-1 of each axis (of the residuals about the slope when the series drifts), tested
    one-sided against white noise; when significant, n_eff of :func:`effective_n_ar1` with the
    smallest n_eff of the axes, ν = n_eff − 1 (the Type A rule with n_eff observations, common
    practice). Each test is at ``alpha``/N per axis (Bonferroni), so a still, white series is
    flagged with probability at most ``alpha``.
    """
    x = np.asarray(values, dtype=float)
    if x.ndim == 1:
        x = x[:, None]
    n, dim = x.shape
    if n < MIN_OBSERVATIONS:
        raise field_error("values", f"at least {MIN_OBSERVATIONS} observations (with n − 1 <= 2 degrees of freedom "
                          "the t distribution of the mean has no variance, JCGM 101 6.4.9)", f"{n}", "type_a_series")
    if not np.all(np.isfinite(x)):
        raise field_error("values", "finite numbers", "non-finite values", "type_a_series")
    level = alpha / dim
    slopes, slope_p, r1s, rhos, rho_p, resid = [], [], [], [], [], []
    for j in range(dim):
        b, p, res = _slope(x[:, j])
        slopes.append(b)
        slope_p.append(p)
        resid.append(res)
    drifting = min(slope_p) < level
    for j in range(dim):
        e = resid[j] if drifting else x[:, j] - x[:, j].mean()
        r1, rho, p = _lag1(e)
        r1s.append(r1)
        rhos.append(rho)
        rho_p.append(p)
    autocorrelated = min(rho_p) < level
    n_eff = float(n)
    if autocorrelated:
        n_eff = min(effective_n_ar1(n, r) for r, p in zip(rhos, rho_p, strict=True) if p < level)
    scatter = np.atleast_2d(np.cov(x, rowvar=False, ddof=1))
    return SeriesTypeA(
        n=n, mean=tuple(float(v) for v in x.mean(axis=0)),
        scatter=tuple(tuple(float(v) for v in row) for row in scatter),
        n_eff=n_eff, dof=n_eff - 1.0, lag1=tuple(r1s), lag1_p=tuple(rho_p), autocorrelated=autocorrelated,
        slope=tuple(slopes), slope_p=tuple(slope_p), drifting=drifting,
    )


def variance_ratio_interval(nu: float, p: float = 0.95) -> tuple[float, float]:
    """Acceptance interval of s²/σ² for a sample variance with ν degrees of freedom.

    Notes
    -----
    νs²/σ² ~ χ²_ν for normal observations, so s²/σ² lies in
    [χ²_ν((1 − p)/2)/ν, χ²_ν((1 + p)/2)/ν] with probability p (scipy.stats.chi2.ppf).
    """
    from scipy import stats  # here, not at import: a design run never needs scipy

    lo, hi = stats.chi2.ppf([(1.0 - p) / 2.0, (1.0 + p) / 2.0], nu)
    return float(lo / nu), float(hi / nu)
