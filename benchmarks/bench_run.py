"""Wall time of a whole rig budget (``thetabudget run``) and where it goes.

Run by hand (never as a timed test)::

    python benchmarks/bench_run.py                       # the sweep template, best of 3
    python benchmarks/bench_run.py templates/gauge_static.toml --repeat 1 --profile

Rig: ``templates/gain_sweep.toml`` (demo data), in process through ``run_budget`` with
the adaptive Monte Carlo of JCGM 101 7.9 (u stable to two significant digits). The
phases are then timed one by one with the same engine calls ``run_budget`` makes:
the linear method (first order, and with the second-order terms of JCGM 100 eq. 14),
the adaptive Monte Carlo, and the one-component-at-a-time Monte Carlo of every budget
component. Baselines for the Monte Carlo: the model alone on pre-drawn inputs for the
same number of trials (in chunks of 10⁴, as the adaptive sequences are), and the same
with the input draws. The aim is a few seconds on a 2-core machine.
"""

from __future__ import annotations

import argparse
import cProfile
import platform
import pstats
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from budget.inputs.rig_file import load_rig  # noqa: E402
from budget.propagation import linear, monte_carlo  # noqa: E402
from budget.rig import components as comp  # noqa: E402
from budget.rig.budget import component_mc_u, run_budget  # noqa: E402
from budget.rig.model import VirtualRig  # noqa: E402

CHUNK = 10_000


def _best(fn, repeat: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _draw(inputs: dict, n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    return {k: q.distribution.sample(rng, n) for k, q in inputs.items()}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("file", nargs="?", default=str(ROOT / "templates" / "gain_sweep.toml"))
    ap.add_argument("--repeat", type=int, default=3, help="best of this many runs per phase")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--profile", action="store_true", help="cProfile one whole run_budget")
    args = ap.parse_args(argv)

    rig = load_rig(args.file)
    print(f"rig: {Path(args.file).name}; Python {platform.python_version()}, numpy {np.__version__}, "
          f"{platform.machine()}")

    t_total, res = _best(lambda: run_budget(rig, rng=np.random.default_rng(args.seed)), args.repeat)
    trials = res.angles[0].monte_carlo.trials
    print(f"run_budget, adaptive Monte Carlo: {t_total:.2f} s (best of {args.repeat}), {trials} trials")

    inputs, corr = comp.build_inputs(rig)
    model = VirtualRig(rig)
    corr_arg = corr or None
    phases: dict[str, float] = {}
    phases["linear, first order"], _ = _best(lambda: linear(model, inputs, correlation=corr_arg), args.repeat)
    if not corr:
        phases["linear, second order (eq. 14)"], _ = _best(
            lambda: linear(model, inputs, second_order=True), args.repeat)
    t_mc, mc = _best(lambda: monte_carlo(model, inputs, rng=np.random.default_rng(args.seed),
                                         correlation=corr_arg), args.repeat)
    phases["Monte Carlo, adaptive"] = t_mc
    groups: dict[str, tuple[str, ...]] = {}
    for name, q in inputs.items():
        groups.setdefault(q.group or name, ())
        groups[q.group or name] += (name,)
    per_group = {}
    for g, members in groups.items():
        per_group[g], _ = _best(lambda m=members: component_mc_u(model, inputs, corr, m,
                                                                 rng=np.random.default_rng(args.seed), p=0.95),
                                args.repeat)
    phases[f"Monte Carlo per component ({len(groups)} x 20 000)"] = sum(per_group.values())
    other = t_total - sum(phases.values())
    print(f"{'phase':<44} {'s':>7} {'share':>7}")
    for name, t in phases.items():
        print(f"{name:<44} {t:7.3f} {100 * t / t_total:6.1f} %")
    print(f"{'rest (summaries, non-linearity, warnings)':<44} {other:7.3f} {100 * other / t_total:6.1f} %")
    for g, t in per_group.items():
        print(f"  component '{g}' ({len(groups[g])} inputs): {t:.3f} s")

    m_trials = mc["gain"].trials if rig.sweep is not None else mc[mc.names[0]].trials
    rng = np.random.default_rng(args.seed)
    chunks = [_draw(inputs, CHUNK, rng) for _ in range(m_trials // CHUNK)]

    def bare_model():
        for kw in chunks:
            model(**kw)

    def bare_draw_model():
        r = np.random.default_rng(args.seed)
        for _ in range(m_trials // CHUNK):
            model(**_draw(inputs, CHUNK, r))

    t_bare, _ = _best(bare_model, args.repeat)
    t_bare_draw, _ = _best(bare_draw_model, args.repeat)
    print(f"bare loop, model only, {m_trials} trials in chunks of {CHUNK}: {t_bare:.3f} s; "
          f"with the draws: {t_bare_draw:.3f} s")
    print(f"ratio engine Monte Carlo / model only: {t_mc / t_bare:.2f}; / draws + model: {t_mc / t_bare_draw:.2f}")

    if args.profile:
        prof = cProfile.Profile()
        prof.enable()
        run_budget(rig, rng=np.random.default_rng(args.seed))
        prof.disable()
        pstats.Stats(prof).sort_stats("tottime").print_stats(12)
    return 0


if __name__ == "__main__":
    sys.exit(main())
