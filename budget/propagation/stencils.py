"""Finite-difference stencils of the linear method (JCGM 100 clause 5): the points along each
input, the pair stencil of the second-order terms, and their double sum (eq. 14).

Every point goes to the model in vectorized calls; the pair stencil in tiles of inputs so that a
call's arrays stay in the processor's cache and only the inputs a tile moves are materialized.
"""

from __future__ import annotations

import math
from collections.abc import Collection

import numpy as np

from budget.propagation.model import Model, additive_sets, evaluate, merge_summed

__all__ = ["axis_points", "pair_values", "paired_inputs", "second_order_terms", "PAIR_CHUNK_VALUES"]

_STEPS = np.array([-2.0, -1.0, 1.0, 2.0])
PAIR_CHUNK_VALUES = 1_048_576
"""Inputs × points per model call when evaluating the pair stencil of the second-order terms
(at least 1000 points a call). Most inputs of a call are held (broadcast views, nothing
materialized), so a call's own arrays are about (points of the model) × (points of the call):
at 52 rig points and about 3000 stencil points they stay in a 2 MB cache, and four times fewer
calls than at 2^18 cost 13 % less time on the 51-point sweep (benchmarks/bench_run.py)."""


def axis_points(x0: np.ndarray, h: np.ndarray, among: np.ndarray | None = None) -> np.ndarray:
    """x0 moved by −2h, −h, +h, +2h along each input in turn (or along each input of ``among``, with
    ``h`` one step per input of ``among``): shape (4k, n) for k inputs moved."""
    idx = np.arange(x0.size) if among is None else np.asarray(among, dtype=int)
    k = idx.size
    pos = np.repeat(np.arange(k), 4)
    pts = np.tile(x0, (4 * k, 1))
    pts[np.arange(4 * k), idx[pos]] += np.tile(_STEPS, k) * h[pos]
    return pts


def paired_inputs(model: Model, names: list[str], u: np.ndarray, more: list[dict[str, float]] = (),
                  leave_out: Collection[str] = ()) -> tuple[np.ndarray, np.ndarray]:
    """The inputs the second-order terms move (indices, increasing) and the u of each.

    An input with u = 0 adds nothing to eq. (14) and is left out. Inputs that a model reads only
    through one sum Σ c_a·x_a (``model.additive_inputs(names)``: a list of ``{name: c_a}``) count as
    one quantity: every derivative with respect to x_a is c_a/c_r times the same derivative with
    respect to the group's first member x_r, so the double sum of eq. (14) over the members, with
    each other and with every other input, is that of x_r alone carrying
    u² = Σ_a (c_a/c_r)² u²(x_a) (the algebra of JCGM 100 5.1.2 and of eq. 14, term by term).
    The pair stencil then has one input where the group had many (a 51-point sweep: 680 → 319
    inputs, 4.5 times fewer pairs). ``more`` are further such sets, for a sum over pairs that moves
    none of ``leave_out`` (:mod:`budget.propagation.second_order`); the inputs ``leave_out`` are
    left out.
    """
    gone = set(leave_out)
    spread = {i: float(x) for i, (nm, x) in enumerate(zip(names, u, strict=True)) if x > 0.0 and nm not in gone}
    merge_summed(names, spread, [*additive_sets(model, names), *more])
    keep = np.array(sorted(spread), dtype=int)
    return keep, np.array([spread[i] for i in keep], dtype=float)


def _pair_batches(n: int, per_call: int, apart: frozenset[int] = frozenset()
                  ) -> list[tuple[np.ndarray, np.ndarray]]:
    """The unordered pairs i < j of n inputs in batches of about ``per_call``, tile by tile.

    A tile pairs a block of inputs with another block, so a batch moves few inputs and every
    other input reaches the model as one repeated value. The inputs ``apart`` (those a model
    says make every call costly when they move) form blocks of their own, after the others,
    so that the other tiles never move them.
    """
    b = max(1, math.isqrt(per_call))
    rest = [i for i in range(n) if i not in apart]
    costly = sorted(apart)
    blocks = [np.array(idx[s:s + b], dtype=int) for idx in (rest, costly) for s in range(0, len(idx), b)]
    n_rest = -(-len(rest) // b)  # blocks of the other inputs come first
    batches: list[tuple[np.ndarray, np.ndarray]] = []
    cur_i: list[np.ndarray] = []
    cur_j: list[np.ndarray] = []
    count = 0
    cur_kind = False
    for k, rows in enumerate(blocks):
        for m, cols in enumerate(blocks[k:]):
            kind = k + m >= n_rest  # the tile moves a costly input: such tiles share no batch with others
            if count and kind != cur_kind:
                batches.append((np.concatenate(cur_i), np.concatenate(cur_j)))
                cur_i, cur_j, count = [], [], 0
            cur_kind = kind
            ii, jj = np.meshgrid(rows, cols, indexing="ij")
            if m == 0:  # a block with itself: each pair once
                keep = ii < jj
                ii, jj = ii[keep], jj[keep]
            else:  # two blocks: every pair, as (smaller index, larger index)
                ii, jj = np.minimum(ii, jj).ravel(), np.maximum(ii, jj).ravel()
            cur_i.append(ii)
            cur_j.append(jj)
            count += ii.size
            if count >= per_call:
                batches.append((np.concatenate(cur_i), np.concatenate(cur_j)))
                cur_i, cur_j, count = [], [], 0
    if count:
        batches.append((np.concatenate(cur_i), np.concatenate(cur_j)))
    return batches


def _touching_batches(n: int, touch: Collection[int], per_call: int) -> list[tuple[np.ndarray, np.ndarray]]:
    """The unordered pairs i < j of n inputs with i or j among ``touch``, in batches of ``per_call``."""
    pairs = np.array(sorted({(min(t, k), max(t, k)) for t in touch for k in range(n) if k != t}),
                     dtype=int).reshape(-1, 2)
    return [(pairs[s:s + per_call, 0], pairs[s:s + per_call, 1]) for s in range(0, len(pairs), per_call)]


def pair_values(model: Model, names: list[str], x0: np.ndarray, h2: np.ndarray,
                among: np.ndarray | None = None, touching: Collection[int] | None = None
                ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """Model values at x0 ± h2_i e_i ± h2_j e_j for every pair i < j: (ii, jj, {output: (2, 2, P)}), indexed
    [sign of i, sign of j, pair] (each sign − then +), so that each of the four is one contiguous row.

    With ``among`` (input indices, increasing), only the pairs of those inputs, ``h2`` then one step
    per input of ``among`` and ``ii``, ``jj`` positions in ``among``; every other input is held. With
    ``touching`` (positions in ``among``), only the pairs with at least one of those.

    Each pair is evaluated once (the stencil of (j, i) is that of (i, j) with its two sign
    axes swapped). An input moved in a batch reaches the model as one contiguous array, every
    other input as its estimate repeated (a read-only broadcast view). A model may name the
    inputs whose movement makes a whole call costly (``model.costly_inputs(names)``, e.g. the
    virtual rig's geometry, which it otherwise forms once for held inputs): they are tiled
    apart. The pairs come in batch order; every value is that of the same point however batched.
    """
    n = x0.size
    idx = np.arange(n) if among is None else np.asarray(among, dtype=int)
    a = np.array([-1.0, -1.0, 1.0, 1.0])
    b = np.array([-1.0, 1.0, -1.0, 1.0])
    per_call = max(250, PAIR_CHUNK_VALUES // (4 * n))
    costly = getattr(model, "costly_inputs", None)
    where = {int(k): p for p, k in enumerate(idx)}
    apart = frozenset(where[names.index(nm)] for nm in costly(names) if names.index(nm) in where) \
        if costly is not None else frozenset()
    batches = _pair_batches(idx.size, per_call, apart) if touching is None else \
        _touching_batches(idx.size, touching, per_call)
    total = sum(i.size for i, _ in batches)
    values: dict[str, np.ndarray] = {}  # each output's (2, 2, P), filled batch by batch
    start = 0
    for i, j in batches:
        m = i.size
        fi, fj = idx[i], idx[j]  # the inputs moved, by their index among all
        moved = np.union1d(fi, fj)
        row = np.full(n, -1)
        row[moved] = np.arange(moved.size)
        pts = np.repeat(x0[moved][:, None], 4 * m, axis=1)  # one row per moved input
        cols = np.arange(4 * m)
        ci, cj = np.repeat(i, 4), np.repeat(j, 4)
        pts[row[idx[ci]], cols] += np.tile(a, m) * h2[ci]
        pts[row[idx[cj]], cols] += np.tile(b, m) * h2[cj]
        still = np.broadcast_to(x0[:, None], (n, 4 * m))
        points = {nm: pts[r] if r >= 0 else still[k] for k, (nm, r) in enumerate(zip(names, row.tolist(), strict=True))}
        out = evaluate(model, points, 4 * m)
        for key, v in out.items():
            if key not in values:
                values[key] = np.empty((2, 2, total))
            values[key][:, :, start:start + m] = v.reshape(m, 2, 2).transpose(1, 2, 0)
        start += m
    ii = np.concatenate([i for i, _ in batches]) if batches else np.empty(0, dtype=int)
    jj = np.concatenate([j for _, j in batches]) if batches else np.empty(0, dtype=int)
    return ii, jj, values


def second_order_terms(f0: float, diag: np.ndarray, pairs: np.ndarray, ii: np.ndarray, jj: np.ndarray,
                       cu: np.ndarray, r: float, diagonal: np.ndarray | None = None) -> float:
    """The double sum of JCGM 100 eq. (14) from central differences with steps h = r·u.

    ``diag`` holds f at x0 − 2h, −h, +h, +2h along each input, shape (n, 4);
    ``pairs`` f at x0 ± h_i ± h_j for the pairs i < j (``ii``, ``jj``), shape (2, 2, P) indexed
    [sign of i, sign of j, pair], each giving the terms of (i, j) and of (j, i); ``cu`` the
    first-order terms c_i·u(x_i). Every derivative is formed already multiplied by the
    matching powers of u (e.g. ∂²f/∂x_i²·u_i² = Δ²f/r²), so no power of a tiny or huge
    u is ever formed on its own and nothing under- or overflows. The terms are summed in
    the order of the ordered pairs (i, j), i ≠ j, row by row. ``diagonal`` (a mask), if given, keeps
    only those inputs' own terms (i = j).
    """
    fm2, fm1, fp1, fp2 = diag.T
    d2 = (fp1 - 2.0 * f0 + fm1) / r**2  # ∂²f/∂x_i² · u_i²
    d3 = (fp2 - 2.0 * fp1 + 2.0 * fm1 - fm2) / (2.0 * r**3)  # ∂³f/∂x_i³ · u_i³
    own = 0.5 * d2**2 + cu * d3
    total = float(np.sum(own if diagonal is None else own[diagonal]))
    if ii.size:
        n = diag.shape[0]
        g00, g01, g10, g11 = pairs[0, 0], pairs[0, 1], pairs[1, 0], pairs[1, 1]
        dij = (g11 - g10 - g01 + g00) / (4.0 * r**2)  # · u_i u_j
        dji = (g11 - g01 - g10 + g00) / (4.0 * r**2)
        # ∂³f/∂x_i∂x_j² · u_i u_j²: second difference in j at x_i ± h_i (middle points from the axis
        # stencil); ∂³f/∂x_j∂x_i² · u_j u_i²: second difference in i at x_j ± h_j.
        dijj = ((g11 - 2.0 * fp1[ii] + g10) - (g01 - 2.0 * fm1[ii] + g00)) / (2.0 * r**3)
        djii = ((g11 - 2.0 * fp1[jj] + g01) - (g10 - 2.0 * fm1[jj] + g00)) / (2.0 * r**3)
        # The off-diagonal terms in row-major order of the n × n matrix, without forming it:
        # (i, j), i < j, sits at i(n − 1) + j − 1, and (j, i) at j(n − 1) + i.
        terms = np.zeros(n * (n - 1))
        terms[ii * (n - 1) + jj - 1] = 0.5 * dij**2 + cu[ii] * dijj
        terms[jj * (n - 1) + ii] = 0.5 * dji**2 + cu[jj] * djii
        total += float(np.sum(terms))
    return total
