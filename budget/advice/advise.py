"""What to change and by how much: every lever of a rig tried with the one rig model.

Each changed rig is the rig file with one field (``section.key``) set to a new value, read by the
same reader as ``run``. Screening uses the linear method of the virtual rig (JCGM 100, one
vectorized model call per candidate); the least change that meets the target, and the next smaller
change, are then settled by full runs (both methods, the Monte Carlo result where the linear method
is not validated) with the same seed ``run`` would use, so that writing ``to`` into the file and
running it with that seed gives ``U_after`` again.
"""

from __future__ import annotations

import copy
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from budget.advice.levers import Lever, levers, nice_values
from budget.advice.targets import goal_verdicts
from budget.errors import BudgetInputError
from budget.inputs.data_csv import read_rig_data
from budget.inputs.rig_file import parse_rig
from budget.rig.budget import run_budget
from budget.rig.claim import linear_claims
from budget.rig.evaluation import load_evaluation

__all__ = ["Outcome", "Change", "Advice", "advise", "apply_change"]

VERIFY_OTHERS = 3
"""Changes that cannot meet the target whose U after is still settled by a full run (the top ones)."""


@dataclass(frozen=True)
class Outcome:
    """U of every output with a target (goal units), the limiting one, whether all meet, and how."""

    U: dict[str, float]
    ratio: float  # max over outputs of U/target (<= 1 meets)
    output: str
    meets: bool
    method: str  # "linear" (screening) or "full run"


@dataclass(frozen=True)
class Change:
    """One change, its outcome and (for one that meets) the next smaller change's outcome."""

    lever: Lever
    to: object
    outcome: Outcome
    verified: bool
    next_smaller: tuple[object, Outcome] | None = None
    cost: float | None = None
    dU_per_cost: float | None = None


@dataclass(frozen=True)
class Advice:
    """The rig as given and every change, ranked by the U after the change (best first)."""

    targets: dict[str, float]
    p: float
    before: Outcome
    changes: tuple[Change, ...]
    seed: object
    trials: int | None
    by_cost: tuple[int, ...] = field(default=())  # indices into changes, best ΔU per unit cost first


def apply_change(doc: dict, field_name: str, value: object, also: dict | None = None) -> dict:
    """A copy of the rig document with ``section.key`` set to ``value`` (and the ``also`` fields)."""
    out = copy.deepcopy(doc)
    for name, v in {field_name: value, **(also or {})}.items():
        section, key = name.split(".", 1)
        out.setdefault(section, {})[key] = list(v) if isinstance(v, tuple) else v
    return out


class _Rig:
    """Reads changed documents as ``run`` does and evaluates them quickly or fully."""

    def __init__(self, doc: dict, base: Path | None, p: float, rng: Callable[[], np.random.Generator],
                 trials: int | None) -> None:
        self.doc, self.base, self.p, self.rng, self.trials = doc, base, p, rng, trials
        self.goal = parse_rig(doc, base).goal
        if self.goal is None:
            raise BudgetInputError("advise needs a [goal] in the rig file: give angle_U_deg, gain_U_pct or "
                                   "gain_U_deg_per_v (the expanded uncertainty wanted).")

    def _read(self, doc: dict):
        spec = parse_rig(doc, self.base)
        ev = load_evaluation(spec, read_rig_data(spec))
        return spec, ev

    def _outcome(self, U: dict[str, float], targets: dict[str, float], method: str) -> Outcome:
        ratios = {k: U[k] / targets[k] for k in U}
        worst = max(ratios, key=ratios.get)
        return Outcome(U, ratios[worst], worst, bool(ratios[worst] <= 1.0), method)

    def targets(self, spec) -> dict[str, float]:
        g, out = spec.goal, {}
        if g.angle_U_deg is not None:
            out.update({f"P{i + 1}": g.angle_U_deg for i in range(len(spec.nominal_angles_deg))})
        if spec.sweep is not None and (g.gain_U_pct or g.gain_U_deg_per_v):
            out["gain"] = g.gain_U_pct or g.gain_U_deg_per_v
        return out

    def quick(self, doc: dict) -> Outcome | None:
        """Linear method of the virtual rig (first order), or None if the file is not valid."""
        try:
            spec, ev = self._read(doc)
        except BudgetInputError:
            return None
        claims = linear_claims(ev.rig, p=self.p, type_a=ev.type_a)
        targets = self.targets(spec)
        pct = spec.goal.gain_U_pct is not None and spec.sweep is not None
        U = {k: claims[k] * (100.0 / abs(ev.rig.sweep.nominal_gain_deg_per_v) if k == "gain" and pct else 1.0)
             for k in targets}
        return self._outcome(U, targets, "linear")

    def full(self, doc: dict) -> Outcome:
        """A full run, as ``thetabudget run FILE --seed S`` makes it."""
        spec, ev = self._read(doc)
        res = run_budget(ev.rig, rng=self.rng(), p=self.p, trials=self.trials, type_a=ev.type_a,
                         measured_deg=ev.measured_deg)
        verdicts = goal_verdicts(spec, res)
        assert {v.output for v in verdicts} == set(self.targets(spec))
        return self._outcome({v.output: v.U for v in verdicts}, {v.output: v.U_target for v in verdicts}, "full run")


def _screen(ev: Callable[[int], Outcome | None], n: int, monotonic: bool) -> tuple[list[int], int]:
    """Indices that meet by screening (for a monotonic lever only the least one) and the best index seen."""
    if monotonic:
        last = ev(n - 1)
        if last is None or not last.meets:
            return [], n - 1
        lo, hi = -1, n - 1  # ev(hi) meets; lo does not (or is the rig as given)
        while hi - lo > 1:
            mid = (lo + hi) // 2
            o = ev(mid)
            if o is not None and o.meets:
                hi = mid
            else:
                lo = mid
        return [hi], hi
    valid = [(i, o) for i in range(n) if (o := ev(i)) is not None]
    if not valid:
        return [], 0
    return [i for i, o in valid if o.meets], min(valid, key=lambda io: io[1].ratio)[0]


def _next_smaller(lv: Lever, j: int) -> int | None:
    """The value tried before ``j`` on the same side of the present value (None: the rig as given)."""
    v, cur = lv.values[j], lv.current
    if isinstance(v, int | float) and isinstance(cur, int | float) and not isinstance(v, bool):
        side = [k for k in range(j) if (lv.values[k] - cur) * (v - cur) > 0]
        return side[-1] if side else None
    return j - 1 if j > 0 else None


def _settle(rig: _Rig, lv: Lever, meeting: list[int], full: Callable[[int], Outcome | None]):
    """Full runs from the screening: the least verified change that meets, and the next smaller change."""
    if not lv.monotonic:
        for j in meeting[:4]:  # nearest first
            out = full(j)
            while out is not None and out.meets:  # step towards the present value while it still meets
                k = _next_smaller(lv, j)
                if k is None:
                    return j, out, (lv.current, rig.full(rig.doc))
                o = full(k)
                if o is None or not o.meets:
                    return j, out, (lv.values[k], o)
                j, out = k, o
        return meeting[0], full(meeting[0]), None
    i, n, step = meeting[0], len(lv.values), 1
    out = full(i)
    while (out is None or not out.meets) and i < n - 1:  # the screening was optimistic: gallop outwards
        prev, i = i, min(n - 1, i + step)
        step *= 2
        out = full(i)
        if out is not None and out.meets:
            lo, hi = prev, i
            while hi - lo > 1:
                mid = (lo + hi) // 2
                o = full(mid)
                if o is not None and o.meets:
                    hi, out = mid, o
                else:
                    lo = mid
            i = hi
    if out is None or not out.meets:
        return i, out, None
    while i > 0:  # the next smaller change must not meet: step down while it does
        o = full(i - 1)
        if o is None or not o.meets:
            return i, out, (lv.values[i - 1], o)
        i, out = i - 1, o
    return i, out, (lv.current, rig.full(rig.doc))


def _refine(rig: _Rig, doc: dict, lv: Lever, to: object, out: Outcome, smaller: tuple):
    """Between a meeting value and the next smaller one tried, the least two-digit value that meets.

    For a numeric lever tried on a coarse grid (a working distance, a focal length); full runs, bisection
    over the two-significant-digit values between (assumes U monotonic between the two).
    """
    below, o_below = smaller
    if not all(isinstance(v, int | float) and not isinstance(v, bool) for v in (to, below)):
        return to, out, smaller
    between = [v for v in nice_values(below, to) if v != to]
    lo, hi = -1, len(between)  # between[lo] does not meet (or is ``below``); ``to`` at hi meets
    runs: dict[int, Outcome | None] = {}
    while hi - lo > 1:
        mid = (lo + hi) // 2
        try:
            runs[mid] = rig.full(apply_change(doc, lv.field, between[mid], lv.also))
        except BudgetInputError:
            runs[mid] = None
        if runs[mid] is not None and runs[mid].meets:
            hi = mid
        else:
            lo = mid
    best = (to, out) if hi == len(between) else (between[hi], runs[hi])
    nxt = smaller if lo == -1 else (between[lo], runs[lo])
    return best[0], best[1], nxt


def advise(doc: dict, *, base: Path | None, p: float, rng: Callable[[], np.random.Generator],
           trials: int | None = None, costs: dict[str, float] | None = None, seed: object = None) -> Advice:
    """Every change of the rig, ranked by the U after it; the least change that meets, verified.

    Parameters
    ----------
    doc : dict
        The rig file as parsed TOML (changes are applied to it).
    base : Path, optional
        The rig file's folder (for its data files).
    p : float
        Coverage probability of the target.
    rng : callable
        Makes the generator of one full run (the same seed for every run, as ``run --seed`` does).
    trials : int, optional
        Monte Carlo trials of the full runs (default adaptive, as ``run``).
    costs : dict, optional
        Cost of each change by field (``section.key``): ΔU per unit cost ranks them too.
    """
    rig = _Rig(doc, base, p, rng, trials)
    before = rig.full(doc)
    changes: list[Change] = []
    for lv in levers(parse_rig(doc, base)):
        cache: dict[int, Outcome | None] = {}
        full_cache: dict[int, Outcome | None] = {}

        def ev(i: int, lv=lv, cache=cache) -> Outcome | None:
            if i not in cache:
                cache[i] = rig.quick(apply_change(doc, lv.field, lv.values[i], lv.also))
            return cache[i]

        def full(i: int, lv=lv, full_cache=full_cache) -> Outcome | None:
            if i not in full_cache:
                try:
                    full_cache[i] = rig.full(apply_change(doc, lv.field, lv.values[i], lv.also))
                except BudgetInputError:
                    full_cache[i] = None
            return full_cache[i]

        meeting, best = _screen(ev, len(lv.values), lv.monotonic)
        if not meeting:
            if ev(best) is not None:
                changes.append(Change(lv, lv.values[best], ev(best), False))
            continue
        i, out, smaller = _settle(rig, lv, meeting, full)
        if out is None:
            continue
        to = lv.values[i]
        if out.meets and not lv.monotonic and smaller is not None:
            to, out, smaller = _refine(rig, doc, lv, to, out, smaller)
        changes.append(Change(lv, to, out, True, smaller if out.meets else None))
    changes.sort(key=lambda c: (not c.outcome.meets, c.outcome.ratio))
    settled = []
    others = 0
    for c in changes:  # Monte Carlo for the top changes that cannot meet
        if not c.verified and others < VERIFY_OTHERS:
            others += 1
            c = Change(c.lever, c.to, rig.full(apply_change(doc, c.lever.field, c.to, c.lever.also)), True)
        settled.append(c)
    settled.sort(key=lambda c: (not c.outcome.meets, c.outcome.ratio))
    settled, by_cost = _with_costs(settled, before, costs or {})
    return Advice(rig.targets(parse_rig(doc, base)), p, before, tuple(settled), seed, trials, by_cost)


def _with_costs(changes: list[Change], before: Outcome, costs: dict[str, float]) -> tuple[list[Change], tuple]:
    if not costs:
        return changes, ()
    out = []
    for c in changes:
        cost = costs.get(c.lever.field)
        gain = None
        if cost is not None and cost > 0:
            gain = (before.U[before.output] - c.outcome.U[before.output]) / cost
        out.append(Change(c.lever, c.to, c.outcome, c.verified, c.next_smaller, cost, gain))
    ranked = sorted((i for i, c in enumerate(out) if c.dU_per_cost is not None), key=lambda i: -out[i].dU_per_cost)
    return out, tuple(ranked)
