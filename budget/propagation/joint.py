"""Joint input quantities: several scalar inputs that share one multivariate distribution.

A vector quantity evaluated from one set of repeated observations (the x and y of one located
point, the per-point discrepancies of one fit) is one joint quantity: its components are drawn
together by Monte Carlo and counted once by Welch–Satterthwaite. Each component appears in a
model's inputs as an ordinary scalar input whose distribution is a :class:`JointComponent`;
the engine finds the components that belong together through their shared parent.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from budget.errors import field_error
from budget.propagation.distributions import Distribution

__all__ = ["MultivariateT", "JointComponent", "joint_groups", "joint_correlation", "collapse_joint",
           "draw_joint"]

_SYM_RTOL = 1e-12


@dataclass(frozen=True, eq=False)
class MultivariateT:
    """Multivariate t distribution t_ν(μ, Σ) of an N-vector quantity (JCGM 102:2011, 6.5.3).

    Parameters
    ----------
    mean : sequence of float
        μ, the estimate of each component (for n observations: their mean vector).
    scale : sequence of sequences of float
        Σ, the N × N scale matrix, symmetric and positive semi-definite (for n observations:
        the sample covariance matrix over n, or over an effective number of observations).
    dof : float
        ν > 0, shared by every component.
    label : str
        A name for reports (e.g. the point the vector belongs to).

    Notes
    -----
    Sampled as x = μ + L z·√(ν/w), z ~ N(0, I_N), w ~ χ²_ν, L Lᵀ = Σ (the construction of the
    multivariate t in JCGM 102 6.5.3; the same w for every component). Each component alone is
    the scaled and shifted t_ν(μ_i, Σ_ii) of JCGM 101 6.4.9. The covariance is ν/(ν − 2)·Σ for
    ν > 2 and does not exist otherwise. The linear method takes Σ as the covariance of the
    estimates (JCGM 100 4.2.3 and 5.2, its Type A rule u² = s²/n) with ν degrees of freedom.
    Instances compare by identity: two points with equal statistics are still two quantities.
    """

    mean: tuple[float, ...]
    scale: tuple[tuple[float, ...], ...]
    dof: float
    label: str = ""

    def __post_init__(self) -> None:
        w = "MultivariateT"
        mu = np.asarray(self.mean, dtype=float)
        s = np.asarray(self.scale, dtype=float)
        if mu.ndim != 1 or mu.size < 1 or not np.all(np.isfinite(mu)):
            raise field_error("mean", "a non-empty sequence of finite numbers", self.mean, w)
        if s.shape != (mu.size, mu.size) or not np.all(np.isfinite(s)):
            raise field_error("scale", f"a finite {mu.size} x {mu.size} matrix", self.scale, w)
        if not np.allclose(s, s.T, rtol=_SYM_RTOL, atol=0.0):
            raise field_error("scale", "a symmetric matrix", self.scale, w)
        if np.any(np.diag(s) <= 0):
            raise field_error("scale", "a matrix with a positive diagonal", self.scale, w)
        low = float(np.linalg.eigvalsh(s).min())
        if low < -1e-12 * float(np.max(np.diag(s))):
            raise field_error("scale", "a positive semi-definite matrix", f"smallest eigenvalue {low:.3g}", w)
        try:
            nu = float(self.dof)
        except (TypeError, ValueError):
            raise field_error("dof", "a number > 0", self.dof, w) from None
        if not (nu > 0 and math.isfinite(nu)):
            raise field_error("dof", "a finite number > 0", self.dof, w)
        object.__setattr__(self, "mean", tuple(float(v) for v in mu))
        object.__setattr__(self, "scale", tuple(tuple(float(v) for v in row) for row in s))
        object.__setattr__(self, "dof", nu)

    @property
    def size(self) -> int:
        """N, the number of components."""
        return len(self.mean)

    @property
    def scale_matrix(self) -> np.ndarray:
        """Σ as an array."""
        return np.array(self.scale)

    @property
    def covariance(self) -> np.ndarray:
        """ν/(ν − 2)·Σ; infinite entries for ν ≤ 2 (the distribution has no covariance)."""
        if self.dof <= 2:
            return np.full((self.size, self.size), math.inf)
        return self.dof / (self.dof - 2.0) * self.scale_matrix

    def factor(self) -> np.ndarray:
        """L with L Lᵀ = Σ (Cholesky; an eigen-decomposition for a singular Σ)."""
        s = self.scale_matrix
        try:
            return np.linalg.cholesky(s)
        except np.linalg.LinAlgError:
            w, v = np.linalg.eigh(s)
            return v * np.sqrt(np.clip(w, 0.0, None))

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        """``size`` draws, shape (size, N)."""
        z = rng.standard_normal(size=(size, self.size)) @ self.factor().T
        w = rng.chisquare(df=self.dof, size=size)
        return np.asarray(self.mean) + z * np.sqrt(self.dof / w)[:, None]

    def components(self) -> tuple[JointComponent, ...]:
        """One scalar distribution per component, to be given as a model's inputs."""
        return tuple(JointComponent(self, i) for i in range(self.size))


@dataclass(frozen=True, eq=False)
class JointComponent(Distribution):
    """Component ``index`` of a :class:`MultivariateT`, as a scalar input's distribution.

    Alone it is the t_ν(μ_i, Σ_ii) of JCGM 101 6.4.9; inside a model's inputs together with
    its siblings it is drawn jointly with them and counted once in ν_eff.
    """

    joint: MultivariateT
    index: int

    def __post_init__(self) -> None:
        if not isinstance(self.joint, MultivariateT):
            raise field_error("joint", "a MultivariateT", self.joint, "JointComponent")
        if not (isinstance(self.index, int) and 0 <= self.index < self.joint.size):
            raise field_error("index", f"an integer in [0, {self.joint.size - 1}]", self.index, "JointComponent")

    @property
    def mean(self) -> float:
        return self.joint.mean[self.index]

    @property
    def u(self) -> float:
        return math.sqrt(self.joint.scale[self.index][self.index])

    @property
    def sd(self) -> float:
        nu = self.joint.dof
        return math.inf if nu <= 2 else self.u * math.sqrt(nu / (nu - 2.0))

    @property
    def dof(self) -> float:
        return self.joint.dof

    @property
    def quoted(self) -> tuple[float, float]:
        return self.u, 1.0

    @property
    def is_type_a(self) -> bool:
        return True

    def describe(self) -> str:
        what = f" of {self.joint.label}" if self.joint.label else ""
        return (f"t, scale {self.u:.4g}, {self.joint.dof:g} dof, component {self.index + 1} of "
                f"{self.joint.size}{what} (joint)")

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return self.mean + self.u * rng.standard_t(df=self.joint.dof, size=size)


def joint_groups(dists: Sequence) -> list[list[int]]:
    """Indices of the inputs that share one parent, for every parent with two or more of them."""
    by_parent: dict[int, list[int]] = {}
    for i, d in enumerate(dists):
        if isinstance(d, JointComponent):
            by_parent.setdefault(id(d.joint), []).append(i)
    return [idx for idx in by_parent.values() if len(idx) > 1]


def joint_correlation(names: Sequence[str], dists: Sequence,
                      correlation: Mapping[tuple[str, str], float] | None) -> dict[tuple[str, str], float] | None:
    """``correlation`` plus the non-zero correlations inside each joint quantity.

    Notes
    -----
    r_ij = Σ_ij/√(Σ_ii Σ_jj) (JCGM 100 5.2.2). A pair already given keeps its value only if it
    agrees; :func:`budget.propagation.model.correlation_matrix` refuses a pair given twice.
    """
    out = dict(correlation or {})
    for idx in joint_groups(dists):
        s = dists[idx[0]].joint.scale
        for a in range(len(idx)):
            for b in range(a + 1, len(idx)):
                i, j = dists[idx[a]].index, dists[idx[b]].index
                r = s[i][j] / math.sqrt(s[i][i] * s[j][j])
                if r != 0.0:
                    out[(names[idx[a]], names[idx[b]])] = float(np.clip(r, -1.0, 1.0))
    return out or None


def collapse_joint(cu: np.ndarray, r: np.ndarray | None, dofs: np.ndarray,
                   groups: list[list[int]]) -> tuple[np.ndarray, np.ndarray]:
    """Contributions and ν for Welch–Satterthwaite with every joint quantity counted once.

    Parameters
    ----------
    cu : array
        Signed first-order terms c_i·u(x_i).
    r : array or None
        Input correlation matrix (None: uncorrelated).
    dofs : array
        ν_i.
    groups : list of index lists
        The joint quantities (:func:`joint_groups`), or any set of correlated inputs
        (:func:`budget.propagation.lpu.correlated_clusters`): a set's ν is its smallest.

    Returns
    -------
    contributions, dofs
        One entry per scalar input outside the groups and one per group, u_g = √(c_gᵀ R_g c_g)
        with the group's ν.

    Notes
    -----
    Inputs estimated together from one set of observations have dependent errors; the
    Welch–Satterthwaite formula (JCGM 100 G.4.2) then takes their joint contribution as one
    term with the common ν, the form of Willink's generalization for dependent errors
    (R. Willink 2007, Metrologia 44:340–349; formula as recalled, the paper was not read here).
    Without groups the result is |c_i u_i| and ν_i unchanged.
    """
    inside = {i for g in groups for i in g}
    keep = [i for i in range(cu.size) if i not in inside]
    contrib = list(np.abs(cu[keep]))
    nus = list(dofs[keep])
    for g in groups:
        v = cu[g]
        rr = np.eye(len(g)) if r is None else r[np.ix_(g, g)]
        contrib.append(math.sqrt(max(float(v @ rr @ v), 0.0)))
        nus.append(float(np.min(dofs[g])))  # a joint quantity's ν is shared; a correlated set: the smallest
    return np.array(contrib, dtype=float), np.array(nus, dtype=float)


def draw_joint(rng: np.random.Generator, size: int, names: Sequence[str], dists: Sequence,
               groups: list[list[int]]) -> dict[str, np.ndarray]:
    """Samples of every input inside a joint group, drawn jointly: ``{name: (size,)}``."""
    out: dict[str, np.ndarray] = {}
    for g in groups:
        parent = dists[g[0]].joint
        x = parent.sample(rng, size)
        for i in g:
            out[names[i]] = x[:, dists[i].index]
    return out
