"""The law of propagation of uncertainty (JCGM 100:2008 clause 5, annex G).

Sensitivity coefficients come from the model itself by central differences with steps scaled to
each input's standard uncertainty; every perturbed point goes to the model in one vectorized call.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from budget.errors import field_error
from budget.propagation.joint import collapse_joint, joint_correlation, joint_groups
from budget.propagation.model import SINGLE, Model, correlation_from_covariance, correlation_matrix, evaluate
from budget.propagation.quantiles import t_quantile
from budget.propagation.quantities import InputQuantity, as_quantities
from budget.propagation.second_order import second_order_sums
from budget.propagation.stencils import axis_points

__all__ = ["Row", "GroupRow", "LinearResult", "MultiLinearResult", "linear", "coverage_factor"]

STEP = 1e-2
"""First derivatives: step h_i = STEP·u(x_i) in a five-point stencil (error O(h⁴))."""
NEGLIGIBLE = 1e-9
"""A first-order contribution below NEGLIGIBLE·u_c counts as zero sensitivity."""
WS_RTOL = 1e-9
"""Relative rounding allowed in ν_eff before truncating it to an integer (G.4.1 note 1)."""


@dataclass(frozen=True)
class Row:
    """One input quantity's line of a budget (JCGM 100 7.2.2)."""

    name: str
    estimate: float
    u: float
    sensitivity: float
    contribution: float
    dof: float
    percent: float
    group: str
    evaluation: str
    distribution: str
    unit: str
    source: str
    value: float
    divisor: float


@dataclass(frozen=True)
class GroupRow:
    """A budget component: a named group of input quantities."""

    name: str
    contribution: float
    percent: float
    dof: float
    evaluation: str
    inputs: tuple[str, ...]
    sources: tuple[str, ...]


@dataclass(frozen=True)
class LinearResult:
    """Result of the linear method for one output.

    ``u`` is the combined standard uncertainty u_c, ``nu_eff`` the effective
    degrees of freedom (``math.inf`` when infinite), ``k`` the coverage factor
    t_p(ν_eff), ``U = k·u``. With ``second_order`` the second-order terms of
    JCGM 100 eq. (14) are included in ``u`` and listed in ``u_second_order``. ``rows``
    (one per input) are formed when first read: a model of many inputs and outputs (a 51-point
    sweep: 680 × 55) often needs them for few of its outputs.
    """

    output: str
    estimate: float
    u: float
    nu_eff: float
    k: float
    U: float
    p: float
    groups: tuple[GroupRow, ...]
    u_first_order: float
    u_second_order: float
    second_order: bool
    warnings: tuple[str, ...]
    row_maker: Callable[[], tuple[Row, ...]] = field(default=tuple, repr=False, compare=False)

    @cached_property
    def rows(self) -> tuple[Row, ...]:
        """One line per input quantity (JCGM 100 7.2.2), in the order of the inputs."""
        return self.row_maker()

    @property
    def interval(self) -> tuple[float, float]:
        """The coverage interval estimate ± U."""
        return self.estimate - self.U, self.estimate + self.U


@dataclass(frozen=True)
class MultiLinearResult:
    """Linear method for a model with several outputs (JCGM 102 6.2: U_y = C U_x Cᵀ)."""

    results: dict[str, LinearResult]
    names: tuple[str, ...]
    covariance: np.ndarray
    jacobian: np.ndarray

    def __getitem__(self, name: str) -> LinearResult:
        return self.results[name]

    @property
    def correlation(self) -> np.ndarray:
        """Output correlations; 0 for an output with u = 0 (see ``correlation_from_covariance``)."""
        return correlation_from_covariance(self.covariance)


def coverage_factor(p: float, nu_eff: float) -> float:
    """k = t_p(ν_eff) (JCGM 100 G.3.4, Table G.2); the normal quantile for ν = ∞.

    Computed without scipy by :func:`budget.propagation.quantiles.t_quantile`.
    """
    return t_quantile(float(p), float(nu_eff))


def check_p(p: float) -> float:
    """Validate a coverage probability."""
    try:
        v = float(p)
    except (TypeError, ValueError):
        raise field_error("p", "a number in (0, 1)", p) from None
    if not 0.0 < v < 1.0:
        raise field_error("p", "a number in (0, 1)", p)
    return v


def welch_satterthwaite(u_c: float, contributions: np.ndarray, dofs: np.ndarray) -> float:
    """Effective degrees of freedom, JCGM 100 eq. (G.2b), truncated per G.4.1 note 1.

    Returns ``math.inf`` when every contribution has infinite degrees of freedom.
    A value of at least one is truncated to the next lower integer.

    Notes
    -----
    The truncation first allows for rounding in the floating-point ratio (a
    relative 1e-9): ν_eff that is an integer by the algebra (e.g. n equal
    contributions of ν dof each give nν) can come out one ulp below it, and a
    plain floor would then lose a whole degree of freedom.
    """
    finite = np.isfinite(dofs) & (contributions > 0)
    if not finite.any() or u_c == 0.0:
        return math.inf
    denom = float(np.sum(contributions[finite] ** 4 / dofs[finite]))
    if denom == 0.0:
        return math.inf
    nu = u_c**4 / denom
    if nu < 1.0:
        return float(nu)
    return float(math.floor(nu * (1.0 + WS_RTOL)))


def _group_index(names: list[str], q: dict[str, InputQuantity]) -> list[tuple[str, list[int], str, tuple, tuple]]:
    """Each budget component once per call: (name, input indices, evaluation, input names, sources)."""
    order: dict[str, list[int]] = {}
    for i, nm in enumerate(names):
        order.setdefault(q[nm].group or nm, []).append(i)
    return [(gname, idx, "A" if any(q[names[i]].evaluation == "A" for i in idx) else "B",
             tuple(names[i] for i in idx),
             tuple(dict.fromkeys(q[names[i]].source for i in idx if q[names[i]].source)))
            for gname, idx in order.items()]


def _groups(
    index: list[tuple[str, list[int], str, tuple, tuple]], cu: np.ndarray, cov_share: np.ndarray | None,
    dofs: np.ndarray, u_c2: float, rr: np.ndarray | None = None, joint: list[list[int]] | None = None,
) -> tuple[GroupRow, ...]:
    """The components' lines; ``cov_share`` None for uncorrelated inputs (its diagonal is then cu²)."""
    out = []
    for gname, idx, evaluation, inputs, sources in index:
        if cov_share is None:
            share = row_share = float(np.sum(cu[idx] ** 2))
        else:
            share = float(cov_share[np.ix_(idx, idx)].sum())
            row_share = float(cov_share[idx, :].sum())
        contrib = math.sqrt(max(share, 0.0))
        gdof = _ws(contrib, cu, rr, dofs, joint or [], idx) if contrib > 0 else math.inf
        out.append(
            GroupRow(
                name=gname,
                contribution=contrib,
                percent=100.0 * row_share / u_c2 if u_c2 > 0 else 0.0,
                dof=gdof,
                evaluation=evaluation,
                inputs=inputs,
                sources=sources,
            )
        )
    return tuple(out)


def correlated_clusters(rr: np.ndarray | None, joint: list[list[int]]) -> list[list[int]]:
    """Inputs linked by a non-zero correlation (directly or through others) or by a joint quantity.

    Each cluster of two or more inputs is one term of Welch–Satterthwaite (:func:`_ws`); the
    joint quantities of :mod:`budget.propagation.joint` are clusters of their own (or part of a
    larger one if an outside input is correlated with them).
    """
    n = 0 if rr is None else rr.shape[0]
    parent = list(range(max(n, max((max(g) for g in joint), default=-1) + 1)))

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    pairs = [] if rr is None else zip(*np.nonzero(np.triu(rr, 1)), strict=True)
    links = [*((int(a), int(b)) for a, b in pairs), *((g[0], j) for g in joint for j in g[1:])]
    for a, b in links:
        parent[root(a)] = root(b)
    found: dict[int, list[int]] = {}
    for i in range(len(parent)):
        found.setdefault(root(i), []).append(i)
    return [c for c in found.values() if len(c) > 1]


def _correlated_dof_note(names: list[str], rr: np.ndarray | None, dofs: np.ndarray, joint: list[list[int]],
                         cu: np.ndarray) -> str:
    """Words for correlated inputs with finite ν outside one joint quantity: how ν_eff counts them."""
    joint_sets = [set(g) for g in joint]
    odd = [c for c in correlated_clusters(rr, joint)
           if set(c) not in joint_sets and np.isfinite(dofs[c]).any() and np.any(cu[c] != 0)]
    if not odd:
        return ""
    which = "; ".join(", ".join(f"'{names[i]}'" for i in c) for c in odd[:3])
    return ("Correlated inputs with finite degrees of freedom (" + which + "): Welch–Satterthwaite assumes "
            "independent inputs, so each correlated set is one term, u = √(cᵀRc), with the smallest ν of the set "
            "(the form of Willink 2007, Metrologia 44:340, for dependent errors, recalled from memory; the "
            "smallest ν is our conservative choice when they differ).")


def _ws(u_c: float, cu: np.ndarray, rr: np.ndarray | None, dofs: np.ndarray, joint: list[list[int]],
        subset: list[int] | None = None) -> float:
    """ν_eff over the inputs ``subset`` (all by default), each joint quantity and each set of correlated
    inputs counted once (:func:`correlated_clusters`, smallest ν of the set)."""
    sel = slice(None) if subset is None else subset
    if rr is None and not joint:  # independent inputs: every term on its own (collapse_joint does nothing)
        return welch_satterthwaite(u_c, np.abs(cu[sel]), dofs[sel])
    idx = list(range(cu.size)) if subset is None else list(subset)
    pos = {i: k for k, i in enumerate(idx)}
    groups = [[pos[i] for i in g if i in pos] for g in correlated_clusters(rr, joint)]
    sub_r = None if rr is None else rr[np.ix_(idx, idx)]
    contrib, nus = collapse_joint(cu[idx], sub_r, dofs[idx], [g for g in groups if len(g) > 1])
    return welch_satterthwaite(u_c, contrib, nus)


def _row_maker(fixed: list[tuple], c: np.ndarray, contributions: np.ndarray, percent: np.ndarray
               ) -> Callable[[], tuple[Row, ...]]:
    """The rows of one output, formed when called: the columns no output changes from ``fixed``."""
    def rows() -> tuple[Row, ...]:
        return tuple(Row(name=nm, estimate=est, u=ui, sensitivity=ci, contribution=con, dof=dof, percent=pc,
                         group=grp, evaluation=ev, distribution=dist, unit=unit, source=src, value=val, divisor=div)
                     for (nm, est, ui, dof, grp, ev, dist, unit, src, val, div), ci, con, pc
                     in zip(fixed, c.tolist(), contributions.tolist(), percent.tolist(), strict=True))
    return rows


def linear(
    model: Model,
    inputs: Mapping,
    p: float = 0.95,
    correlation: Mapping[tuple[str, str], float] | None = None,
    second_order: bool = False,
) -> LinearResult | MultiLinearResult:
    """Propagate the input uncertainties through ``model`` by JCGM 100.

    Parameters
    ----------
    model : callable
        Vectorized model ``f(**arrays) -> array`` or ``-> {name: array}``.
    inputs : mapping
        Input names to :class:`Distribution` or :class:`InputQuantity`.
    p : float
        Coverage probability for U.
    correlation : mapping, optional
        ``{(a, b): r_ab}`` correlation coefficients between inputs.
    second_order : bool
        Add the second-order terms of JCGM 100 eq. (14) (uncorrelated inputs only).

    Returns
    -------
    LinearResult or MultiLinearResult
        One result for a single-output model; for a mapping, one per output with
        the output covariance C U_x Cᵀ.

    Notes
    -----
    Estimates are the input expectations (JCGM 100 4.1.4). Sensitivities use the
    five-point central difference with h_i = 10⁻²·u(x_i); u_c² = Σ_ij c_i c_j
    u(x_i, x_j) (eq. 13); ν_eff by Welch–Satterthwaite (G.2b); k = t_p(ν_eff)
    (G.3.4). A row's percent is its covariance share c_i u_i Σ_j r_ij c_j u_j / u_c²,
    which reduces to (c_i u_i)²/u_c² for uncorrelated inputs and sums to 100 %.
    """
    p = check_p(p)
    q = as_quantities(inputs)
    names = list(q)
    joint = joint_groups([q[nm].distribution for nm in names])
    if joint:  # the correlations inside each joint quantity (JCGM 102 6.5.3)
        correlation = joint_correlation(names, [q[nm].distribution for nm in names], correlation)
    r = correlation_matrix(names, correlation)
    if second_order and r is not None:
        raise field_error("second_order", "False when inputs are correlated", True)
    x0 = np.array([q[nm].distribution.mean for nm in names])
    u = np.array([q[nm].distribution.u for nm in names])
    dofs = np.array([q[nm].distribution.dof for nm in names], dtype=float)
    h = STEP * u
    n_in = len(names)
    pts = np.vstack([x0[None, :], axis_points(x0, h)])
    out = evaluate(model, {nm: pts[:, i] for i, nm in enumerate(names)}, len(pts))
    out_names = list(out)
    first = {on: out[on][1:1 + 4 * n_in].reshape(n_in, 4) for on in out_names}
    jac = np.empty((len(out_names), n_in))
    for k, on in enumerate(out_names):
        fm2, fm1, fp1, fp2 = first[on].T
        jac[k] = (fm2 - 8.0 * fm1 + 8.0 * fp1 - fp2) / (12.0 * h)
    u2 = second_order_sums(model, names, x0, u, jac, out_names, np.array([out[on][0] for on in out_names])) \
        if second_order else np.zeros(len(out_names))
    rr = np.eye(n_in) if r is None else r
    cov_x = rr * np.outer(u, u)
    cov_y = jac @ cov_x @ jac.T
    results: dict[str, LinearResult] = {}
    # What every output's rows share (JCGM 100 7.2.2 columns), once per input, not once per output.
    fixed = [(nm, float(x0[i]), float(u[i]), float(dofs[i]), q[nm].group or nm, q[nm].evaluation or "B",
              q[nm].distribution.describe(), q[nm].unit, q[nm].source, *map(float, q[nm].distribution.quoted))
             for i, nm in enumerate(names)]
    group_index = _group_index(names, q)
    for k, on in enumerate(out_names):
        c = jac[k]
        cu = c * u
        # covariance shares c_i u_i r_ij c_j u_j; for uncorrelated inputs only their diagonal (cu²)
        cov_share = None if r is None else np.outer(cu, cu) * rr
        row_share = cu * cu if r is None else cov_share.sum(axis=1)
        u1_2 = float(row_share.sum())
        u2_2 = float(u2[k])
        u_c2 = u1_2 + u2_2
        warn: list[str] = []
        if u_c2 < 0:  # eq. (14) is a truncated series; far from linear its sum can be negative
            warn.append(
                f"Output '{on}': the second-order terms of JCGM 100 eq. (14) ({u2_2:.3g}) exceed the first-order "
                f"variance ({u1_2:.3g}), so the series gives a negative u_c² ({u_c2:.3g}): the model is too "
                "non-linear over the inputs' spread for the linear method, which keeps only the first-order "
                "u here; rely on Monte Carlo (JCGM 101) for this output."
            )
            u_c2 = u1_2
        u_c = math.sqrt(u_c2)
        contributions = np.abs(cu)
        nu = _ws(u_c, cu, r, dofs, joint)
        kf = coverage_factor(p, nu)
        note = _correlated_dof_note(names, r, dofs, joint, cu)
        if note:
            warn.append(note)
        # row_share_i = Σ_j of row i of cov_share, and the percent, for every input at once; the
        # columns no output changes come from ``fixed``.
        percent = 100.0 * row_share / u_c2 if u_c2 > 0 else np.zeros(n_in)
        # u_c = 0 (every sensitivity zero, e.g. y = x² at x = 0) is the case that most needs the
        # warning, so the comparison is <=, not guarded by u_c > 0.
        zero = [] if second_order else [f"'{names[i]}'" for i in np.flatnonzero(contributions <= NEGLIGIBLE * u_c)]
        if zero:
            which = f"Input {zero[0]} has" if len(zero) == 1 else f"Inputs {', '.join(zero)} have"
            warn.append(
                f"{which} zero first-order sensitivity at the estimate for output '{on}': the "
                "linear method misses their effect; compare with Monte Carlo (JCGM 101 clause 8)."
            )
        groups = _groups(group_index, cu, cov_share, dofs, u_c2, r, joint)
        for g in groups:
            if g.percent > 90.0 and len(groups) > 1:
                warn.append(f"Component '{g.name}' carries {g.percent:.0f} % of the variance of '{on}'.")
        results[on] = LinearResult(
            output=on, estimate=float(out[on][0]), u=u_c, nu_eff=nu, k=kf, U=kf * u_c, p=p,
            row_maker=_row_maker(fixed, c, contributions, percent), groups=groups,
            u_first_order=math.sqrt(max(u1_2, 0.0)),
            u_second_order=math.sqrt(abs(u2_2)) * (1 if u2_2 >= 0 else -1),
            second_order=second_order, warnings=tuple(warn),
        )
    if out_names == [SINGLE]:
        return results[SINGLE]
    return MultiLinearResult(results=results, names=tuple(out_names), covariance=cov_y, jacobian=jac)
