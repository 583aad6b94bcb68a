"""Probability distributions for input quantities (JCGM 101:2008 clause 6.4).

Each distribution is a small frozen dataclass that knows its expectation, its
standard deviation, the standard uncertainty the linear method uses, its degrees
of freedom, how it is quoted in a budget (a value and a divisor), and how to draw
samples from a :class:`numpy.random.Generator` passed in by the caller.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from budget.errors import field_error

__all__ = [
    "Distribution",
    "Normal",
    "Rectangular",
    "Triangular",
    "Trapezoidal",
    "CurvilinearTrapezoid",
    "Arcsine",
    "StudentT",
]


def _finite(name: str, value: float, where: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise field_error(name, "a finite number", value, where) from None
    if not math.isfinite(v):
        raise field_error(name, "a finite number", value, where)
    return v


def _positive(name: str, value: float, where: str) -> float:
    v = _finite(name, value, where)
    if v <= 0:
        raise field_error(name, "a number > 0", value, where)
    return v


def _bounds(low: float, high: float, where: str) -> tuple[float, float]:
    lo = _finite("low", low, where)
    hi = _finite("high", high, where)
    if not lo < hi:
        raise field_error("high", f"a number > low ({lo:g})", high, where)
    return lo, hi


def _dof_from_rel(rel_u_of_u: float | None, where: str) -> float:
    """Degrees of freedom from the relative uncertainty of an uncertainty.

    Notes
    -----
    JCGM 100:2008 eq. (G.3): ν ≈ ½ (Δu/u)⁻².
    """
    if rel_u_of_u is None:
        return math.inf
    r = _positive("rel_u_of_u", rel_u_of_u, where)
    return 0.5 / (r * r)


@dataclass(frozen=True)
class Distribution:
    """Base class: subclasses set ``mean``, ``sd``, ``dof`` and implement ``sample``."""

    @property
    def kind(self) -> str:
        """Short lowercase name used in reports, e.g. ``"rectangular"``."""
        return type(self).__name__.lower()

    @property
    def u(self) -> float:
        """Standard uncertainty used by the linear method (JCGM 100 4.2, 4.3)."""
        return self.sd  # type: ignore[attr-defined]

    @property
    def quoted(self) -> tuple[float, float]:
        """(value, divisor) with ``u = value / divisor``, as a budget line shows it."""
        return self.sd, 1.0  # type: ignore[attr-defined]

    @property
    def is_type_a(self) -> bool:
        """Whether this distribution comes from repeated observations."""
        return False

    def describe(self) -> str:
        """One-line description for reports."""
        return self.kind

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:  # pragma: no cover
        raise NotImplementedError


@dataclass(frozen=True)
class _Bounded(Distribution):
    """A symmetric distribution on [low, high]: shared checks, mean, half-width and dof."""

    low: float
    high: float
    rel_u_of_u: float | None = field(default=None, kw_only=True)

    def __post_init__(self) -> None:
        lo, hi = _bounds(self.low, self.high, type(self).__name__)
        object.__setattr__(self, "low", lo)
        object.__setattr__(self, "high", hi)
        _dof_from_rel(self.rel_u_of_u, type(self).__name__)

    @property
    def mean(self) -> float:
        return 0.5 * (self.low + self.high)

    @property
    def half_width(self) -> float:
        return 0.5 * (self.high - self.low)

    @property
    def dof(self) -> float:
        return _dof_from_rel(self.rel_u_of_u, type(self).__name__)

    @property
    def quoted(self) -> tuple[float, float]:
        return self.half_width, self.half_width / self.sd  # type: ignore[attr-defined]


@dataclass(frozen=True)
class Normal(Distribution):
    """Gaussian N(mean, sd²) (JCGM 101 6.4.7).

    Parameters
    ----------
    mean, sd : float
        Expectation and standard deviation (sd > 0).
    dof : float, optional
        Degrees of freedom of the standard uncertainty (default infinite).
    rel_u_of_u : float, optional
        Relative uncertainty of ``sd``; sets ``dof`` by JCGM 100 eq. (G.3).
    """

    mean: float
    sd: float
    dof: float = math.inf
    rel_u_of_u: float | None = None

    def __post_init__(self) -> None:
        w = "Normal"
        object.__setattr__(self, "mean", _finite("mean", self.mean, w))
        object.__setattr__(self, "sd", _positive("sd", self.sd, w))
        try:
            dof = float(self.dof)
        except (TypeError, ValueError):
            raise field_error("dof", "a number > 0 (or inf)", self.dof, w) from None
        if math.isnan(dof) or dof <= 0:
            raise field_error("dof", "a number > 0 (or inf)", self.dof, w)
        if self.rel_u_of_u is not None:
            if math.isfinite(dof):
                raise field_error("rel_u_of_u", "unset when dof is given", self.rel_u_of_u, w)
            dof = _dof_from_rel(self.rel_u_of_u, w)
        object.__setattr__(self, "dof", dof)

    def describe(self) -> str:
        return f"normal, sd {self.sd:.4g}"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return rng.normal(loc=self.mean, scale=self.sd, size=size)


@dataclass(frozen=True)
class Rectangular(_Bounded):
    """Uniform R(low, high) (JCGM 101 6.4.2; JCGM 100 4.3.7): sd = (high − low)/√12."""

    @property
    def sd(self) -> float:
        return self.half_width / math.sqrt(3.0)

    @property
    def quoted(self) -> tuple[float, float]:
        return self.half_width, math.sqrt(3.0)

    def describe(self) -> str:
        return f"rectangular, half-width {self.half_width:.4g}"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return rng.uniform(low=self.low, high=self.high, size=size)


@dataclass(frozen=True)
class Trapezoidal(_Bounded):
    """Symmetric trapezoid on [low, high], top to base ratio ``beta`` (JCGM 101 6.4.4).

    Notes
    -----
    Variance (high − low)²(1 + β²)/24 (JCGM 101 6.4.4.3); sampled as
    ``low + (high − low)/2·[(1 + β) r1 + (1 − β) r2]`` with r1, r2 ~ R(0, 1)
    (JCGM 101 6.4.4.4). β = 0 is the triangle, β = 1 the rectangle.
    """

    beta: float

    def __post_init__(self) -> None:
        super().__post_init__()
        b = _finite("beta", self.beta, type(self).__name__)
        if not 0.0 <= b <= 1.0:
            raise field_error("beta", "a number in [0, 1]", self.beta, type(self).__name__)
        object.__setattr__(self, "beta", b)

    @property
    def sd(self) -> float:
        return self.half_width * math.sqrt((1.0 + self.beta**2) / 6.0)

    @property
    def quoted(self) -> tuple[float, float]:
        return self.half_width, math.sqrt(6.0 / (1.0 + self.beta**2))

    def describe(self) -> str:
        return f"trapezoidal, half-width {self.half_width:.4g}, beta {self.beta:g}"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        r1 = rng.uniform(low=0.0, high=1.0, size=size)
        r2 = rng.uniform(low=0.0, high=1.0, size=size)
        w = self.high - self.low
        return self.low + 0.5 * w * ((1.0 + self.beta) * r1 + (1.0 - self.beta) * r2)


@dataclass(frozen=True)
class Triangular(Trapezoidal):
    """Symmetric triangle on [low, high] (JCGM 101 6.4.5; JCGM 100 4.3.9): sd = a/√6."""

    beta: float = 0.0

    def __post_init__(self) -> None:
        if self.beta != 0.0:
            raise field_error("beta", "0 for a triangle (use Trapezoidal)", self.beta, "Triangular")
        super().__post_init__()

    def describe(self) -> str:
        return f"triangular, half-width {self.half_width:.4g}"


@dataclass(frozen=True)
class CurvilinearTrapezoid(_Bounded):
    """Rectangular distribution with inexactly known limits (JCGM 101 6.4.3).

    Parameters
    ----------
    low, high : float
        Best estimates of the limits.
    d : float
        Half-width of the interval each limit is known to lie in, 0 < d ≤ (high − low)/2.

    Notes
    -----
    Variance w²/3 + d²/9 with w = (high − low)/2 (JCGM 101 6.4.3.3); sampled by
    drawing the lower limit from R(low − d, low + d), the upper one as its mirror,
    then a value uniformly between them (JCGM 101 6.4.3.4).
    """

    d: float

    def __post_init__(self) -> None:
        w = "CurvilinearTrapezoid"
        super().__post_init__()
        d = _positive("d", self.d, w)
        if d > self.half_width:
            raise field_error("d", f"a number in (0, {self.half_width:g}]", self.d, w)
        object.__setattr__(self, "d", d)

    @property
    def sd(self) -> float:
        return math.sqrt(self.half_width**2 / 3.0 + self.d**2 / 9.0)

    def describe(self) -> str:
        return f"curvilinear trapezoid, half-width {self.half_width:.4g}, d {self.d:.4g}"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        r1 = rng.uniform(low=0.0, high=1.0, size=size)
        r2 = rng.uniform(low=0.0, high=1.0, size=size)
        a_s = (self.low - self.d) + 2.0 * self.d * r1
        b_s = (self.low + self.high) - a_s
        return a_s + (b_s - a_s) * r2


@dataclass(frozen=True)
class Arcsine(_Bounded):
    """U-shaped (arcsine) distribution on [low, high] (JCGM 101 6.4.6): sd = a/√2.

    Notes
    -----
    Sampled as ``(low + high)/2 + (high − low)/2 · sin(2πr)``, r ~ R(0, 1)
    (JCGM 101 6.4.6.4). It is the distribution of a sinusoid at a random phase,
    e.g. a periodic locator bias when the sub-pixel phase is random.
    """

    @property
    def sd(self) -> float:
        return self.half_width / math.sqrt(2.0)

    @property
    def quoted(self) -> tuple[float, float]:
        return self.half_width, math.sqrt(2.0)

    def describe(self) -> str:
        return f"arcsine, half-width {self.half_width:.4g}"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        r = rng.uniform(low=0.0, high=1.0, size=size)
        return self.mean + self.half_width * np.sin(2.0 * np.pi * r)


@dataclass(frozen=True)
class StudentT(Distribution):
    """Scaled and shifted t distribution t_ν(mean, scale²) (JCGM 101 6.4.9).

    For n repeated readings with mean x̄ and standard deviation s: ``mean = x̄``,
    ``scale = s/√n``, ``dof = n − 1``.

    Notes
    -----
    The linear method uses u = scale with ν = dof degrees of freedom (JCGM 100
    4.2.3, G.3); Monte Carlo samples ``mean + scale·t_ν`` (JCGM 101 6.4.9.7),
    whose standard deviation is scale·√(ν/(ν − 2)) for ν > 2 and infinite otherwise.
    """

    mean: float
    scale: float
    dof: float

    def __post_init__(self) -> None:
        w = "StudentT"
        object.__setattr__(self, "mean", _finite("mean", self.mean, w))
        object.__setattr__(self, "scale", _positive("scale", self.scale, w))
        object.__setattr__(self, "dof", _positive("dof", self.dof, w))

    @property
    def u(self) -> float:
        return self.scale

    @property
    def sd(self) -> float:
        if self.dof <= 2:
            return math.inf
        return self.scale * math.sqrt(self.dof / (self.dof - 2.0))

    @property
    def quoted(self) -> tuple[float, float]:
        return self.scale, 1.0

    @property
    def is_type_a(self) -> bool:
        return True

    def describe(self) -> str:
        return f"t, scale {self.scale:.4g}, {self.dof:g} dof"

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return self.mean + self.scale * rng.standard_t(df=self.dof, size=size)
