"""Quantiles of the normal and Student t distributions, in plain Python floats.

The coverage factor k = t_p(ν) of JCGM 100 G.3.4 and the normal quantile are all the engine
needs of these distributions, so it computes them here instead of importing ``scipy.stats``
(about a second of start-up on a 2-core machine, most of a short ``run``). Both are checked
against ``scipy.stats`` over a wide grid of p and ν in ``tests/propagation/test_quantiles.py``.

References
----------
Wichura, M. J. (1988). Algorithm AS 241: The percentage points of the normal distribution.
*Applied Statistics* 37(3), 477-484 (as implemented by the standard library's
``statistics.NormalDist.inv_cdf``).
Abramowitz, M. and Stegun, I. A. (1964). *Handbook of Mathematical Functions*, NBS AMS 55:
26.7.1 (the t distribution through the incomplete beta function), 26.7.5 (Cornish-Fisher
expansion of the t quantile in powers of 1/ν).
NIST DLMF 8.17.4 (symmetry of the regularized incomplete beta function) and 8.17.22 (its
continued fraction), evaluated by the modified Lentz algorithm (Thompson, I. J. and Barnett,
A. R. (1986), *J. Comput. Phys.* 64, 490-509).
"""

from __future__ import annotations

import math
from statistics import NormalDist

__all__ = ["normal_quantile", "t_quantile", "t_two_sided"]

_STD_NORMAL = NormalDist()
_EPS = 4e-16
_TINY = 1e-300
_CF_MAX = 100_000
_CORNISH_FISHER_NU = 2000.0
"""From this ν on, the t quantile is the Cornish-Fisher series (there it agrees with scipy to
1e-12 relative for p from 1e-12 to 1 − 1e-12, tests/propagation/test_quantiles.py); below it,
Newton's method on the incomplete beta function, whose lgamma differences lose digits as ν grows."""


def normal_quantile(q: float) -> float:
    """Φ⁻¹(q), the standard normal quantile, for 0 < q < 1 (Wichura 1988, AS 241)."""
    return _STD_NORMAL.inv_cdf(q)


def _normal_two_sided(p: float) -> float:
    """z with P(|Z| ≤ z) = p for the standard normal Z.

    For p ≥ ½ it is −Φ⁻¹((1 − p)/2), where 1 − p is exact, so p close to 1 keeps its digits;
    for p < ½ Newton's method on erf(z/√2) = p from z = p√(π/2), which approaches the
    root from below because erf is concave there, so a small p keeps its digits too.
    """
    if p >= 0.5:
        return -_STD_NORMAL.inv_cdf(0.5 * (1.0 - p))
    z = p * math.sqrt(0.5 * math.pi)
    for _ in range(50):
        step = (p - math.erf(z / math.sqrt(2.0))) / (math.sqrt(2.0 / math.pi) * math.exp(-0.5 * z * z))
        z += step
        if abs(step) <= 1e-16 * z:
            break
    return z


def _log_beta(a: float, b: float) -> float:
    return math.lgamma(a) + math.lgamma(b) - math.lgamma(a + b)


def _continued_fraction(x: float, a: float, b: float) -> float:
    """The continued fraction of I_x(a, b) (DLMF 8.17.22), modified Lentz algorithm."""
    qab, qap, qam = a + b, a + 1.0, a - 1.0
    c = 1.0
    d = 1.0 - qab * x / qap
    d = 1.0 / (d if abs(d) > _TINY else _TINY)
    h = d
    for m in range(1, _CF_MAX):
        m2 = 2 * m
        for aa in (m * (b - m) * x / ((qam + m2) * (a + m2)),
                   -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2))):
            d = 1.0 + aa * d
            d = 1.0 / (d if abs(d) > _TINY else _TINY)
            c = 1.0 + aa / c
            c = c if abs(c) > _TINY else _TINY
            step = d * c
            h *= step
        if abs(step - 1.0) < _EPS:
            return h
    raise ArithmeticError(f"incomplete beta continued fraction did not converge (x={x}, a={a}, b={b})")


def t_two_sided(t: float, nu: float) -> tuple[float, float]:
    """(P(|T| ≤ t), P(|T| > t)) for Student's t with ν degrees of freedom, t ≥ 0.

    Notes
    -----
    A&S 26.7.1: P(|T| > t) = I_x(ν/2, ½) with x = ν/(ν + t²). The continued fraction is used
    where it converges fast, x < (a + 1)/(a + b + 2); elsewhere the symmetry
    I_x(a, b) = 1 − I_{1−x}(b, a) (DLMF 8.17.4) with 1 − x = t²/(ν + t²) computed directly.
    Whichever of the two probabilities comes from the continued fraction is accurate to a
    few ulp relative; the other is 1 minus it.
    """
    if t == 0.0:
        return 0.0, 1.0
    if math.isinf(t):
        return 1.0, 0.0
    a, b = 0.5 * nu, 0.5
    log_den = math.log(nu + t * t) if t * t < 1e300 else 2.0 * math.log(t) + math.log1p(nu / (t * t))
    log_x = math.log(nu) - log_den
    log_1mx = 2.0 * math.log(t) - log_den
    front = math.exp(a * log_x + b * log_1mx - _log_beta(a, b))
    if math.exp(log_x) < (a + 1.0) / (a + b + 2.0):
        tail = front * _continued_fraction(math.exp(log_x), a, b) / a
        return 1.0 - tail, tail
    central = front * _continued_fraction(math.exp(log_1mx), b, a) / b
    return central, 1.0 - central


def _t_density(t: float, nu: float) -> float:
    """Density of Student's t at t (A&S 26.7.1)."""
    return math.exp(-_log_beta(0.5, 0.5 * nu) - 0.5 * math.log(nu) - 0.5 * (nu + 1.0) * math.log1p(t * t / nu))


def _cornish_fisher(z: float, nu: float) -> float:
    """t_q(ν) ≈ z + g1/ν + g2/ν² + g3/ν³ + g4/ν⁴ with z = Φ⁻¹(q) (A&S 26.7.5)."""
    z2 = z * z
    g1 = (z2 + 1.0) * z / 4.0
    g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0
    g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0
    g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0
    return z + (g1 + (g2 + (g3 + g4 / nu) / nu) / nu) / nu


def t_quantile(p: float, nu: float) -> float:
    """The t with P(|T| ≤ t) = p for Student's t with ν > 0 degrees of freedom (ν = ∞: normal).

    This is the two-sided quantile t_p(ν) of JCGM 100 G.3.4 (Table G.2), the upper
    (1 + p)/2 quantile of the distribution.

    Parameters
    ----------
    p : float
        Coverage probability, 0 < p < 1.
    nu : float
        Degrees of freedom, > 0 (``math.inf`` for the normal distribution).

    Returns
    -------
    float
        t_p(ν), to about 1e-12 relative.

    Raises
    ------
    ValueError
        For p outside (0, 1) or ν ≤ 0 (callers validate p first, :func:`lpu.check_p`).

    Notes
    -----
    ν = ∞: Φ⁻¹((1 + p)/2) (see :func:`_normal_two_sided`); ν = 1 and ν = 2 in closed form (tan(πp/2) and p√(2/(1 − p²)),
    from A&S 26.7.3–26.7.4); ν ≥ 2000: Cornish-Fisher (A&S 26.7.5); otherwise Newton's
    method in log t on log P(|T| ≤ t) (for p ≤ ½) or log P(|T| > t), kept inside a bracket,
    with the probabilities from :func:`t_two_sided`. Converges to a relative 1e-15 in t.
    """
    if not 0.0 < p < 1.0:
        raise ValueError(f"p must be in (0, 1), got {p!r}")
    if not nu > 0.0:
        raise ValueError(f"nu must be > 0, got {nu!r}")
    if math.isinf(nu):
        return _normal_two_sided(p)
    if nu == 1.0:  # tan(πp/2) = 1/tan(π(1 − p)/2), the latter exact in 1 − p as p → 1
        return math.tan(0.5 * math.pi * p) if p < 0.5 else 1.0 / math.tan(0.5 * math.pi * (1.0 - p))
    if nu == 2.0:
        return p * math.sqrt(2.0 / ((1.0 - p) * (1.0 + p)))
    if nu >= _CORNISH_FISHER_NU:
        return _cornish_fisher(_normal_two_sided(p), nu)
    alpha = 1.0 - p
    low_side = p <= 0.5
    target = math.log(p) if low_side else math.log(alpha)

    def residual(s: float) -> tuple[float, float]:
        """h(s), increasing in s = log t, and its derivative dh/ds."""
        t = math.exp(s)
        central, tail = t_two_sided(t, nu)
        slope = 2.0 * _t_density(t, nu) * t
        if low_side:
            return math.log(central) - target, slope / central
        return target - math.log(tail), slope / tail

    s = math.log(_cornish_fisher(_normal_two_sided(p), max(nu, 1.0)))
    lo, hi = -math.inf, math.inf
    for _ in range(200):
        h, dh = residual(s)
        if h == 0.0:
            break
        if h < 0.0:
            lo = s
        else:
            hi = s
        step = -h / dh if dh > 0.0 and math.isfinite(dh) else math.copysign(1.0, -h)
        new = s + step
        if not lo < new < hi:  # outside the bracket: bisect, or walk out of a one-sided one
            new = 0.5 * (lo + hi) if math.isfinite(lo) and math.isfinite(hi) else \
                s + math.copysign(2.0, -h)
        if abs(new - s) <= 1e-15 * max(1.0, abs(s)):
            s = new
            break
        s = new
    return math.exp(s)
