"""Presenting an :class:`~budget.advice.advise.Advice`: a plain dict (JSON) and a text table.

Nothing here computes an uncertainty; it formats what :mod:`budget.advice.advise` found.
"""

from __future__ import annotations

import io

from budget.advice.advise import Advice, Change, Outcome

__all__ = ["advice_to_dict", "render_advice"]


def _value(v: object) -> object:
    return list(v) if isinstance(v, tuple) else v


def _outcome(o: Outcome | None) -> dict | None:
    if o is None:
        return None
    return {"U_after": o.U[o.output], "output": o.output, "meets": o.meets, "method": o.method,
            "U_after_all": dict(o.U)}


def _change(c: Change) -> dict:
    d = {"field": c.lever.field, "what": c.lever.what, "from": _value(c.lever.current), "to": _value(c.to),
         "U_after": c.outcome.U[c.outcome.output], "output": c.outcome.output, "meets": c.outcome.meets,
         "verified": c.verified, "method": c.outcome.method, "U_after_all": dict(c.outcome.U)}
    if c.lever.also:
        d["also"] = {k: _value(v) for k, v in c.lever.also.items()}
    if c.lever.note:
        d["note"] = c.lever.note
    if c.next_smaller is not None:
        to, o = c.next_smaller
        d["next_smaller"] = {"to": _value(to), **(_outcome(o) or {"valid": False})}
    if c.cost is not None:
        d["cost"] = c.cost
        d["dU_per_cost"] = c.dU_per_cost
    return d


def advice_to_dict(a: Advice, input_path: str = "") -> dict:
    """Plain dict for JSON: the target, the rig as given, and every change ranked by U after it."""
    return {
        "input": input_path, "seed": a.seed, "trials": a.trials, "p": a.p,
        "target": {"U_target": dict(a.targets), "p": a.p},
        "before": _outcome(a.before),
        "changes": [_change(c) for c in a.changes],
        "by_cost": [a.changes[i].lever.field for i in a.by_cost],
        "how_to_reproduce": f"set field = to (and any 'also' fields) in the rig file and run "
                            f"`thetabudget run FILE --seed {a.seed}`" + (f" --trials {a.trials}" if a.trials else ""),
        "method": "screening by the linear method of the virtual rig (JCGM 100); 'verified' changes by a full "
                  "run (JCGM 100 and JCGM 101, the result's own method) with the seed above",
    }


def _fmt(v: object) -> str:
    if isinstance(v, (list, tuple)):
        return f"{len(v)} points {v[0]:g}…{v[-1]:g}"
    return f"{v:g}" if isinstance(v, float) else str(v)


def render_advice(a: Advice, width: int = 170) -> str:
    """The ranked changes as text (rich table) with the rig as given and how to reproduce them."""
    from rich.console import Console
    from rich.table import Table

    b = a.before
    unit = "%" if "gain" in a.targets and b.output == "gain" else "°"
    lines = [f"As given: U = {b.U[b.output]:.3g} (limiting output {b.output}) against the target "
             f"{a.targets[b.output]:g}; {'meets' if b.meets else 'MISSES'} (p = {100 * a.p:g} %, full run)."]
    t = Table(title="Changes ranked by the expanded uncertainty after the change", title_justify="left")
    for col in ("#", "change", "field", "from", "to", "U after", "output", "meets", "verified", "next smaller"):
        t.add_column(col, justify="right" if col in ("#", "U after") else "left", overflow="fold")
    if a.by_cost:
        t.add_column("ΔU per cost", justify="right")
    for n, c in enumerate(a.changes, start=1):
        smaller = ""
        if c.next_smaller is not None:
            to, o = c.next_smaller
            smaller = f"{_fmt(to)}: " + ("not valid" if o is None else f"{o.U[o.output]:.3g}, "
                                                                      f"{'meets' if o.meets else 'misses'}")
        row = [str(n), c.lever.what, c.lever.field, _fmt(c.lever.current), _fmt(c.to),
               f"{c.outcome.U[c.outcome.output]:.3g}", c.outcome.output, "yes" if c.outcome.meets else "no",
               "full run" if c.verified else "linear", smaller]
        if a.by_cost:
            row.append("—" if c.dU_per_cost is None else f"{c.dU_per_cost:.3g}")
        t.add_row(*row)
    buf = io.StringIO()
    con = Console(file=buf, width=width, force_terminal=False, color_system=None, highlight=False, markup=False)
    con.print("\n".join(lines))
    con.print(t)
    for c in a.changes:
        if c.lever.also or c.lever.note:
            extra = ", ".join(f"{k} = {_fmt(v)}" for k, v in c.lever.also.items())
            con.print(f"  {c.lever.field} -> {_fmt(c.to)}: {extra}{'; ' if extra and c.lever.note else ''}"
                      f"{c.lever.note}")
    if a.by_cost:
        con.print("By ΔU per unit cost: " + ", ".join(a.changes[i].lever.field for i in a.by_cost))
    con.print(f"U is in {unit if b.output == 'gain' else '°'} for angles and in the goal's unit for the gain. "
              f"To reproduce a row: set the field to 'to' in the rig file and run `thetabudget run FILE --seed "
              f"{a.seed}`{f' --trials {a.trials}' if a.trials else ''}.")
    return buf.getvalue()
