"""Calling a measurement model and checking what it returns; input correlations.

A model is one vectorized function: it is called with keyword arrays named like
its inputs (all of one length n) and returns an array of length n, or a mapping of
output names to such arrays. The linear method calls it on a small batch of
perturbed points, Monte Carlo on chunks of sampled points: one definition serves
both methods.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping

import numpy as np

from budget.errors import BudgetInputError, field_error

__all__ = ["evaluate", "correlation_matrix", "correlation_from_covariance", "SINGLE", "NonFiniteOutput",
           "additive_sets", "merge_summed"]


class NonFiniteOutput(BudgetInputError):
    """The model returned NaN or inf: ``output`` is its name, ``point`` the input values where it first did."""

    def __init__(self, message: str, output: str, point: dict[str, float]) -> None:
        super().__init__(message)
        self.output = output
        self.point = point

SINGLE = "y"
"""Output name used when the model returns one array."""

Model = Callable[..., np.ndarray | Mapping[str, np.ndarray]]


def evaluate(model: Model, points: Mapping[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
    """Call ``model(**points)`` and return ``{output name: float array of length n}``.

    Raises
    ------
    BudgetInputError
        When the model returns the wrong shape, or NaN or inf (naming the input
        values of the first bad point).
    """
    raw = model(**points)
    outputs = dict(raw) if isinstance(raw, Mapping) else {SINGLE: raw}
    if not outputs:
        raise field_error("model", "a function returning at least one output", "{}")
    checked: dict[str, np.ndarray] = {}
    for name, value in outputs.items():
        arr = np.asarray(value, dtype=float)
        if arr.shape != (n,):
            raise field_error(
                "model",
                f"a function returning an array of shape ({n},) for output {name!r}",
                f"shape {arr.shape}",
            )
        finite = np.isfinite(arr)
        if finite.all():  # the common case: one pass, no second array
            checked[name] = arr
            continue
        bad = ~finite
        if bad.any():
            i = int(np.argmax(bad))
            point = {k: _value_at(v, i) for k, v in points.items()}
            at = ", ".join(f"{k}={v:.10g}" for k, v in point.items())
            raise NonFiniteOutput(
                f"The model returned {arr[i]} for output {name!r} at {at}; "
                "it must be finite for every input value.", name, point)
        checked[name] = arr
    return checked


def _value_at(v, i: int) -> float:
    """The input's (first) value in trial ``i``; a scalar is the same in every trial."""
    a = np.asarray(v, dtype=float)
    return float(a.ravel()[0] if a.ndim == 0 or a.shape[0] <= i else np.ravel(a[i])[0])


def correlation_matrix(
    names: list[str], correlation: Mapping[tuple[str, str], float] | None
) -> np.ndarray | None:
    """Build the correlation matrix from ``{(a, b): r}`` pairs, or None when empty.

    Raises
    ------
    BudgetInputError
        For an unknown name, a coefficient outside [−1, 1], a pair given twice
        with different values, or a matrix that is not positive semi-definite.
    """
    if not correlation:
        return None
    index = {n: i for i, n in enumerate(names)}
    r = np.eye(len(names))
    seen: dict[tuple[int, int], float] = {}
    for pair, value in correlation.items():
        if not (isinstance(pair, tuple) and len(pair) == 2):
            raise field_error("correlation", "keys that are pairs of input names", pair)
        a, b = pair
        for nm in (a, b):
            if nm not in index:
                raise field_error("correlation", f"pairs of known inputs {sorted(index)}", nm)
        if a == b:
            raise field_error("correlation", "pairs of two different inputs", pair)
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise field_error(f"correlation[{pair!r}]", "a number in [-1, 1]", value) from None
        if not (math.isfinite(v) and -1.0 <= v <= 1.0):
            raise field_error(f"correlation[{pair!r}]", "a number in [-1, 1]", value)
        i, j = index[a], index[b]
        key = (min(i, j), max(i, j))
        if key in seen and seen[key] != v:
            raise field_error(f"correlation[{pair!r}]", f"one value (also given {seen[key]})", v)
        seen[key] = v
        r[i, j] = r[j, i] = v
    smallest = float(np.linalg.eigvalsh(r).min())
    if smallest < -1e-10:
        raise field_error(
            "correlation",
            "a positive semi-definite matrix",
            f"smallest eigenvalue {smallest:.3g}",
        )
    return r


def correlation_from_covariance(cov: np.ndarray) -> np.ndarray:
    """Correlation matrix of outputs from their covariance matrix.

    Notes
    -----
    r_ij = u(y_i, y_j)/(u(y_i) u(y_j)) (JCGM 100 5.2.2). An output with u = 0 has zero
    covariance with every other one; its correlations are reported as 0 (1 on the
    diagonal) rather than the undefined 0/0.
    """
    c = np.atleast_2d(np.asarray(cov, dtype=float))
    s = np.sqrt(np.clip(np.diag(c), 0.0, None))
    den = np.outer(s, s)
    r = np.zeros_like(c)
    np.divide(c, den, out=r, where=den > 0)
    np.fill_diagonal(r, 1.0)
    return r


def correlated_factor(r: np.ndarray) -> np.ndarray:
    """A factor L with L Lᵀ = r, valid for singular (semi-definite) r.

    Notes
    -----
    JCGM 101 6.4.8.4 uses the Cholesky factor; an eigen-decomposition gives a
    factor that also exists when r is only semi-definite (e.g. r = 1).
    """
    try:
        return np.linalg.cholesky(r)
    except np.linalg.LinAlgError:
        w, v = np.linalg.eigh(r)
        return v * np.sqrt(np.clip(w, 0.0, None))


def additive_sets(model, names) -> list[dict[str, float]]:
    """The sets of inputs the model reads only through their sum Σ c_a·x_a (``model.additive_inputs(names)``:
    a list of ``{name: c_a}``), or none."""
    groups = getattr(model, "additive_inputs", None)
    return list(groups(list(names))) if groups is not None else []


def merge_summed(names: list[str], spread: dict[int, float], sets) -> list[int]:
    """Each set of inputs read only through Σ c_a·x_a as one quantity: its first member x_r, among the
    inputs ``spread`` lists (index: u or σ, updated in place), carries √(Σ_a (c_a/c_r)² u_a²) and the
    others leave ``spread``; returns those others, set by set.

    Independent contributions to one sum add in variance (JCGM 100 5.1.2; and for normal inputs the
    sum is normal, JCGM 101 9.2.2). A set meeting an earlier set's first member sees it with the earlier
    set's u, so sets that share members merge as one.
    """
    pos = {nm: i for i, nm in enumerate(names)}
    away: list[int] = []
    for group in sets:
        members = [(pos[nm], float(c)) for nm, c in group.items()
                   if nm in pos and pos[nm] in spread and c != 0.0 and spread[pos[nm]] > 0.0]
        if len(members) < 2:
            continue
        (first, c_r), rest = members[0], members[1:]
        spread[first] = math.sqrt(sum((c / c_r * spread[i]) ** 2 for i, c in members))
        for i, _ in rest:
            del spread[i]
            away.append(i)
    return away
