"""Second-order terms of JCGM 100 eq. (14): each pair of inputs is evaluated once, and the
results are those of the implementation that evaluated every ordered pair.

The reference values below were computed by that implementation (commit f736538, which
evaluated the stencil of (i, j) and of (j, i) separately) on the JCGM 100 H.1 end gauge, the
JCGM 101 9.3 mass calibration, a five-input two-output model with every kind of input, and the
sweep template; tolerance 1e-6 relative (issue 14). The sweep's values moved at 3e-7 between
that commit and this one because the virtual rig's ten-point sums are now taken in another
order; the second-order term itself is a difference of differences of the model at steps of
5 % of u and carries that rounding.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from budget.inputs.rig_file import load_rig
from budget.propagation import Normal, Rectangular, StudentT, Triangular, linear
from budget.reference_cases import MODELS, case_inputs, load_cases
from budget.rig import components as comp
from budget.rig.description import Pointer
from budget.rig.model import VirtualRig
from tests.paths import TEMPLATES

CASES = {c.id: c for c in load_cases()}


def _mixed(a, b, c, d, e):
    return {"q": a * b / c + np.sin(d) * e, "r": np.exp(0.3 * a) * np.hypot(b, e) - c * d**2}


MIXED_INPUTS = {"a": Normal(1.2, 0.05), "b": Rectangular(2.0, 2.6), "c": Triangular(0.8, 1.2),
                "d": Normal(0.7, 0.1), "e": StudentT(mean=3.0, scale=0.2, dof=7)}


@pytest.mark.parametrize(("case_id", "u", "u2"), [
    ("jcgm100-H.1", 33.8116992884298, 11.843975648206648),
    ("jcgm101-9.3", 0.07496393702501469, 0.052149706790641105),
])
def test_reference_cases_keep_their_second_order_values(case_id, u, u2):
    case = CASES[case_id]
    res = linear(MODELS[case.model], case_inputs(case), p=case.p, second_order=True)
    assert res.u == pytest.approx(u, rel=1e-6)
    assert res.u_second_order == pytest.approx(u2, rel=1e-6)


def test_mixed_model_keeps_its_second_order_values():
    res = linear(_mixed, MIXED_INPUTS, second_order=True)
    assert res["q"].u == pytest.approx(0.4243802958070632, rel=1e-6)
    assert res["q"].u_second_order == pytest.approx(0.060336198894064365, rel=1e-6)
    assert res["r"].u == pytest.approx(0.3205068812704625, rel=1e-6)
    assert res["r"].u_second_order == pytest.approx(0.01861273925058803, rel=1e-6)


def test_sweep_template_keeps_its_second_order_u():
    # pinned before the template had the components of issue 10 (pointer, mount drift, fixed pattern): the
    # same rig without them
    rig = load_rig(TEMPLATES / "gain_sweep.toml")
    rig = dataclasses.replace(rig, pointer=Pointer(),
                              camera=dataclasses.replace(rig.camera, prnu_pct=None, dsnu_e=None),
                              geometry=dataclasses.replace(rig.geometry, mount_shift_um=None, mount_roll_deg=None))
    inputs, _ = comp.build_inputs(rig)
    res = linear(VirtualRig(rig), inputs, second_order=True)
    for name, u in (("P1", 0.011874288819775626), ("P4", 0.03703071879526923),
                    ("gain", 0.008732031650880299), ("intercept", 0.01542688649263149)):
        assert res[name].u == pytest.approx(u, rel=1e-6), name


def test_each_pair_is_evaluated_once():
    # n inputs: 1 + 4n + 4n axis points, then 4 points per unordered pair, n(n − 1)/2 pairs.
    n = len(MIXED_INPUTS)
    calls: list[int] = []

    def counted(**kw):
        calls.append(len(next(iter(kw.values()))))
        return _mixed(**kw)

    linear(counted, MIXED_INPUTS, second_order=True)
    assert sum(calls) == 1 + 8 * n + 4 * n * (n - 1) // 2


class _Hinted:
    """The mixed model with a hint that some inputs make a call costly (tiled apart by the pair stencil)."""

    def __init__(self, costly: tuple[str, ...]) -> None:
        self.costly = costly
        self.seen: list[tuple[str, ...]] = []

    def costly_inputs(self, names):
        return [nm for nm in names if nm in self.costly]

    def __call__(self, **kw):
        self.seen.append(tuple(k for k, v in kw.items() if v.strides != (0,)))
        return _mixed(**kw)


@pytest.mark.parametrize("costly", [("a",), ("c", "e"), ("a", "b", "c", "d", "e")])
def test_inputs_tiled_apart_change_no_value(costly, monkeypatch):
    # Small tiles (two inputs a block), so that tiling apart changes which inputs share a call.
    monkeypatch.setattr("budget.propagation.stencils.PAIR_CHUNK_VALUES", 4 * len(MIXED_INPUTS))
    plain = linear(_mixed, MIXED_INPUTS, second_order=True)
    model = _Hinted(costly)
    hinted = linear(model, MIXED_INPUTS, second_order=True)
    for out in ("q", "r"):
        assert hinted[out].u == plain[out].u
        assert hinted[out].u_second_order == plain[out].u_second_order


def test_pairs_tiled_apart_are_each_evaluated_once():
    from budget.propagation.stencils import _pair_batches

    for n, per_call, apart in ((7, 4, {2, 5}), (12, 9, {0, 11}), (5, 250, {1}), (6, 1, set(range(6)))):
        batches = _pair_batches(n, per_call, frozenset(apart))
        pairs = [(int(i), int(j)) for ii, jj in batches for i, j in zip(ii, jj, strict=True)]
        assert sorted(pairs) == [(i, j) for i in range(n) for j in range(i + 1, n)]
        # a batch moves either inputs apart (with others) or none of them
        mixed = [b for b in batches if (set(b[0]) | set(b[1])) & apart]
        if len(apart) < n:
            assert len(mixed) < len(batches)
        for ii, jj in batches:
            if not (set(ii) | set(jj)) & apart:
                continue
            assert all(i in apart or j in apart for i, j in zip(ii, jj, strict=True))


class _Summed:
    """y = s²·d + exp(s/4) with s = a + 2b: the model reads a and b only through their sum s, and says so."""

    def __init__(self, declare: bool) -> None:
        if declare:
            self.additive_inputs = lambda names: [{"a": 1.0, "b": 2.0}]

    def __call__(self, a, b, d):
        s = a + 2.0 * b
        return s**2 * d + np.exp(s / 4.0)


def _eq14_by_hand(x: dict[str, float], u: dict[str, float]) -> float:
    """The double sum of JCGM 100 eq. (14) for :class:`_Summed`, its derivatives written out by hand."""
    s, d = x["a"] + 2.0 * x["b"], x["d"]
    c = {"a": 1.0, "b": 2.0}  # ∂s/∂a, ∂s/∂b
    e = np.exp(s / 4.0)
    y_s, y_ss, y_sss = 2 * s * d + e / 4, 2 * d + e / 16, e / 64  # derivatives in s at fixed d
    y_d, y_sd, y_ssd = s**2, 2 * s, 2.0  # y_dd = y_sdd = y_ddd = 0
    names = ("a", "b", "d")

    def first(i):
        return y_d if i == "d" else c[i] * y_s

    def second(i, j):
        if i == "d" and j == "d":
            return 0.0
        if "d" in (i, j):
            k = j if i == "d" else i
            return c[k] * y_sd
        return c[i] * c[j] * y_ss

    def third_ijj(i, j):  # ∂³y/∂x_i∂x_j²
        ks = [k for k in (i, j, j) if k != "d"]
        nd = 3 - len(ks)
        prod = float(np.prod([c[k] for k in ks]))
        return prod * {0: y_sss, 1: y_ssd, 2: 0.0, 3: 0.0}[nd]

    return sum((0.5 * second(i, j) ** 2 + first(i) * third_ijj(i, j)) * u[i] ** 2 * u[j] ** 2
               for i in names for j in names)


def test_inputs_read_through_one_sum_count_once():
    # A model that reads a and b only through s = a + 2b may say so (``additive_inputs``); the
    # second-order terms then move s once (u² = u_a² + (2u_b)² in the units of a) instead of a and b
    # apart. Both give the double sum of JCGM 100 eq. (14) with the derivatives written out by hand.
    inputs = {"a": Normal(1.5, 0.2), "b": Rectangular(0.2, 0.8), "d": Normal(2.0, 0.3)}
    x = {k: v.mean for k, v in inputs.items()}
    u = {k: v.u for k, v in inputs.items()}
    declared = linear(_Summed(True), inputs, second_order=True)
    apart = linear(_Summed(False), inputs, second_order=True)
    expected = _eq14_by_hand(x, u)
    assert np.sign(declared.u_second_order) * declared.u_second_order**2 == pytest.approx(expected, rel=1e-6)
    assert np.sign(apart.u_second_order) * apart.u_second_order**2 == pytest.approx(expected, rel=1e-6)
    assert declared.u == pytest.approx(apart.u, rel=1e-9)
    assert declared.u_first_order == apart.u_first_order


class _Counted:
    """A model with its declarations, counting the points it is called with."""

    def __init__(self, model) -> None:
        self.model, self.points = model, 0
        for name in ("additive_inputs", "additive_apart"):
            if hasattr(model, name):
                setattr(self, name, getattr(model, name))

    def __call__(self, **kw):
        self.points += len(next(iter(kw.values())))
        return self.model(**kw)


def test_inputs_read_through_one_sum_are_paired_once():
    counted = _Counted(_Summed(True))
    linear(counted, {"a": Normal(1.5, 0.2), "b": Rectangular(0.2, 0.8), "d": Normal(2.0, 0.3)}, second_order=True)
    # 1 + 4·3 first-order points, 4·2 axis points of (s, d), 4 points of the one pair (s, d)
    assert counted.points == 1 + 12 + 8 + 4


class _Weighted:
    """y = s²·d + g·s with s = (1 + g)·a + b: a and b are read through s, a's weight set by g."""

    def __init__(self, declare: bool) -> None:
        if declare:
            self.additive_apart = lambda est: [({"a": 1.0 + est["g"], "b": 1.0}, ("g",))]

    def __call__(self, a, b, g, d):
        s = (1.0 + g) * a + b
        return s**2 * d + g * s


def _eq14_weighted_by_hand(x: dict[str, float], u: dict[str, float]) -> float:
    """The double sum of JCGM 100 eq. (14) for :class:`_Weighted`, its derivatives written out by hand."""
    a, g, d = x["a"], x["g"], x["d"]
    s = (1.0 + g) * a + x["b"]
    first = {"a": (2 * s * d + g) * (1 + g), "b": 2 * s * d + g, "g": 2 * s * d * a + s + g * a, "d": s**2}
    second = {("a", "a"): 2 * d * (1 + g) ** 2, ("a", "b"): 2 * d * (1 + g), ("b", "b"): 2 * d,
              ("a", "g"): (2 * d * a + 1) * (1 + g) + 2 * s * d + g, ("b", "g"): 2 * d * a + 1,
              ("g", "g"): 2 * d * a**2 + 2 * a, ("a", "d"): 2 * s * (1 + g), ("b", "d"): 2 * s,
              ("d", "g"): 2 * s * a, ("d", "d"): 0.0}
    third = {("a", "a", "d"): 2 * (1 + g) ** 2, ("a", "b", "d"): 2 * (1 + g), ("b", "b", "d"): 2.0,
             ("a", "a", "g"): 4 * d * (1 + g), ("a", "b", "g"): 2 * d, ("a", "g", "g"): 4 * d * a + 2,
             ("a", "d", "g"): 2 * a * (1 + g) + 2 * s, ("b", "d", "g"): 2 * a, ("d", "g", "g"): 2 * a**2}

    def h(i, j):
        return second[tuple(sorted((i, j)))]

    def t(i, j, k):
        return third.get(tuple(sorted((i, j, k))), 0.0)

    names = ("a", "b", "g", "d")
    return sum((0.5 * h(i, j) ** 2 + first[i] * t(i, j, j)) * u[i] ** 2 * u[j] ** 2 for i in names for j in names)


def test_inputs_summed_while_others_are_held_count_once_in_the_other_pairs():
    # A model that reads a and b through s = (1 + g)·a + b may say so for the pairs that hold g
    # (``additive_apart``): those pairs then move s once, the pairs with g move a and b as they are.
    # Both ways give the double sum of JCGM 100 eq. (14) with the derivatives written out by hand.
    inputs = {"a": Normal(1.5, 0.2), "b": Rectangular(0.2, 0.8), "g": Normal(0.1, 0.05), "d": Normal(2.0, 0.3)}
    x = {k: v.mean for k, v in inputs.items()}
    u = {k: v.u for k, v in inputs.items()}
    expected = _eq14_weighted_by_hand(x, u)
    declared = linear(_Weighted(True), inputs, second_order=True)
    each = linear(_Weighted(False), inputs, second_order=True)
    for res in (declared, each):
        assert np.sign(res.u_second_order) * res.u_second_order**2 == pytest.approx(expected, rel=1e-6)
    assert declared.u == pytest.approx(each.u, rel=1e-9)
    counted = _Counted(_Weighted(True))
    linear(counted, inputs, second_order=True)
    # 1 + 4·4 first-order points; (s, d) without g: 4·2 axis points and one pair; (a, b, g, d): 4·4 axis
    # points and the three pairs with g
    assert counted.points == 17 + (8 + 4) + (16 + 3 * 4)
