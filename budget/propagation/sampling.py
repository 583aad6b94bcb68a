"""Drawing the inputs of a Monte Carlo run in chunks (JCGM 101:2008 6.4): one call per kind of
uncorrelated input, correlated normal inputs through a factor of their correlation matrix, joint
(multivariate) inputs together."""

from __future__ import annotations

import numpy as np

from budget.errors import field_error
from budget.propagation.distributions import Normal, Rectangular
from budget.propagation.joint import draw_joint, joint_groups
from budget.propagation.model import correlated_factor, merge_summed

__all__ = ["Sampler"]


class Sampler:
    """Draws chunks of input vectors; correlated inputs through a factor of r.

    ``additive`` (a model's ``additive_inputs(names)``: sets ``{name: c_a}`` of inputs it reads only
    through their sum Σ c_a·x_a) lets the uncorrelated normal members of a set be drawn as one: the
    sum of independent normal variables is normal with the sum of their variances (the additive
    model of JCGM 101:2008 9.2.2, four N(0, 1) inputs giving N(0, 4)), so the set's first such
    member x_r is drawn from N(μ_r, Σ_a (c_a/c_r)² σ_a²) and the others are held at their means.
    Σ c_a·x_a, and so every output, then has exactly the distribution it has with each member drawn,
    from one normal variate per trial where there were several (the 51-point sweep: 415 → 207).
    The members' own values are no longer each trial's (a held member reads its mean): only a model
    that truly reads them through their sum may declare them.
    """

    def __init__(self, q: dict, r: np.ndarray | None, additive: list[dict[str, float]] = ()) -> None:
        self.names = list(q)
        self.dists = [q[n].distribution for n in self.names]
        self.joint = joint_groups(self.dists)  # drawn together (JCGM 102 6.5.3)
        self.corr_idx: list[int] = []
        self.factor = None
        self.normal: list[int] = []
        self.uniform: list[int] = []
        if r is not None:
            involved = [i for i in range(len(self.names)) if np.any(r[i, np.arange(len(r)) != i] != 0)]
            for i in involved:
                if not isinstance(self.dists[i], Normal):
                    raise field_error(
                        "correlation",
                        "pairs of Normal inputs for Monte Carlo (JCGM 101 6.4.8)",
                        f"{self.names[i]} ({self.dists[i].kind})",
                    )
            self.corr_idx = involved
            self.factor = correlated_factor(r[np.ix_(involved, involved)])
        # Uncorrelated normal and rectangular inputs are drawn together, one call each
        # (JCGM 101 6.4.7, 6.4.3: μ + σz and a + (b − a)u from standard variates).
        for i, d in enumerate(self.dists):
            if i not in self.corr_idx and type(d) in (Normal, Rectangular):
                (self.normal if type(d) is Normal else self.uniform).append(i)
        sd = {i: self.dists[i].sd for i in self.normal}
        self.held = {self.names[i]: self.dists[i].mean for i in merge_summed(self.names, sd, additive)}
        self._views: tuple[int, dict[str, np.ndarray]] = (0, {})
        self.normal = [i for i in self.normal if i in sd]
        self.normal_names = [self.names[i] for i in self.normal]
        self.uniform_names = [self.names[i] for i in self.uniform]
        self.loc = np.array([[self.dists[i].mean] for i in self.normal])
        self.centred = not np.any(self.loc)  # every normal input has mean 0: μ + σz is σz, nothing to add
        self.scale = np.array([[sd[i]] for i in self.normal])
        self.low = np.array([[self.dists[i].low] for i in self.uniform])
        self.width = np.array([[self.dists[i].high - self.dists[i].low] for i in self.uniform])

    def draw(self, rng: np.random.Generator, size: int) -> dict[str, np.ndarray]:
        out: dict[str, np.ndarray] = draw_joint(rng, size, self.names, self.dists, self.joint)
        if self.factor is not None:
            z = rng.standard_normal(size=(size, len(self.corr_idx))) @ self.factor.T
            for col, i in enumerate(self.corr_idx):
                d = self.dists[i]
                out[self.names[i]] = d.mean + d.sd * z[:, col]
        if self.normal:
            z = rng.standard_normal(size=(len(self.normal), size))
            z *= self.scale
            if not self.centred:
                z += self.loc
            out.update(zip(self.normal_names, z, strict=True))
        if self.uniform:
            u = rng.random(size=(len(self.uniform), size))
            u *= self.width
            u += self.low
            out.update(zip(self.uniform_names, u, strict=True))
        if self.held:
            out.update(self._held_views(size))
        for i, nm in enumerate(self.names):
            if nm not in out:
                out[nm] = self.dists[i].sample(rng, size)
        return out

    def _held_views(self, size: int) -> dict[str, np.ndarray]:
        """The held members' means as read-only broadcast views of ``size`` trials (a model that wrote
        into its inputs would fail loudly), made once per chunk size."""
        if self._views[0] != size:
            means = np.array(list(self.held.values()))
            rows = np.broadcast_to(means[:, None], (means.size, size))
            self._views = (size, dict(zip(self.held, rows, strict=True)))
        return self._views[1]
