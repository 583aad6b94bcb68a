"""Wall time of a whole rig budget (``thetabudget run``) against the floor of its own Monte Carlo.

Run by hand (never as a timed test)::

    python benchmarks/bench_run.py                       # the sweep template, best of 5
    python benchmarks/bench_run.py --points 5 11 21 51   # sweeps of that many set points too
    python benchmarks/bench_run.py templates/gauge_static.toml --repeat 3 --profile

1. The command as a user types it, ``thetabudget run FILE --quiet --seed 1``, in a fresh
   process, against the floor of its own Monte Carlo: a plain numpy process (same
   interpreter) that draws the same variates (one normal or uniform variate per input of
   that kind per trial, for the run's number of trials) and sorts its outputs (one array of
   that many values per output). The two alternate, best of ``--repeat``, in CPU time of the
   child process (the machine is shared: wall time includes waiting for a core) and in wall
   time; aim (issue 14): the run ≤ 4 × the floor.
2. The phases of ``run_budget`` in process, each with the same engine calls it makes.
3. With ``--points``: the sweep template with that many set points (1 V to 9 V), the whole
   ``run_budget`` in CPU seconds against the same floor measured in process; aim: 51 points
   under 5 s. With ``--lean`` also the same sweeps without the pointer, fixed-pattern and
   camera-mount components (added after the aim was set: 366 inputs at 51 points, not 680).

In process the script fixes glibc's malloc thresholds as the command does (``budget/heap.py``), unless
``--default-heap``; the floor measured in process runs under the same setting.
"""

from __future__ import annotations

import argparse
import cProfile
import inspect
import platform
import pstats
import resource
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from budget.heap import keep_heap  # noqa: E402
from budget.inputs.rig_file import load_rig, parse_rig  # noqa: E402
from budget.propagation import Normal, linear, monte_carlo  # noqa: E402
from budget.rig import components as comp  # noqa: E402
from budget.rig.budget import component_mc_u, run_budget  # noqa: E402
from budget.rig.model import VirtualRig  # noqa: E402
from tests.rigdoc import merge_doc  # noqa: E402


def plain_floor(n_normal: int, n_uniform: int, n_out: int, m: int) -> None:
    """The floor of a run's own Monte Carlo in plain numpy: the same variates drawn (in blocks of
    trials, so that they stay in the cache: the fastest plain way), one array of the trials'
    values per output, each sorted."""
    import numpy as np

    rng = np.random.default_rng(1)
    outputs = [np.empty(m) for _ in range(n_out)]
    for s in range(0, m, 8192):
        n = min(8192, m - s)
        z = rng.standard_normal((n_normal, n))
        rng.random((n_uniform, n))
        for i, y in enumerate(outputs):
            y[s:s + n] = z[i % n_normal]
    for y in outputs:
        y.sort()


FLOOR = inspect.getsource(plain_floor) + "import sys\nplain_floor(*(int(a) for a in sys.argv[1:5]))\n"
"""The floor as a program for a fresh process that imports only numpy."""


def _best(fn, repeat: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _kinds(inputs: dict) -> tuple[int, int]:
    """Inputs drawn as standard normal and as uniform variates (others count as uniform)."""
    normal = sum(isinstance(q.distribution, Normal) for q in inputs.values())
    return normal, len(inputs) - normal


def floor_in_process(inputs: dict, n_out: int, trials: int) -> float:
    """CPU seconds of :func:`plain_floor` in this process (without interpreter start)."""
    normal, uniform = _kinds(inputs)
    t0 = time.process_time()
    plain_floor(normal, uniform, n_out, trials)
    return time.process_time() - t0


def whole_command(path: str, repeat: int) -> None:
    rig = load_rig(path)
    inputs, _ = comp.build_inputs(rig)
    res = run_budget(rig, rng=np.random.default_rng(np.random.SeedSequence(1)))  # what seed 1 draws
    trials = res.outputs[0].monte_carlo.trials
    normal, uniform = _kinds(inputs)
    n_out = len(res.outputs)
    cmd = [sys.executable, "-m", "budget", "run", path, "--quiet", "--seed", "1"]
    floor = [sys.executable, "-c", FLOOR, str(normal), str(uniform), str(n_out), str(trials)]
    cpu: dict[str, list[float]] = {"run": [], "floor": []}
    wall: dict[str, list[float]] = {"run": [], "floor": []}
    for _ in range(repeat):
        for name, argv in (("run", cmd), ("floor", floor)):
            before = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run(argv, check=True, capture_output=True)
            wall[name].append(time.perf_counter() - t0)
            after = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpu[name].append(after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime)
    c_run, c_floor = min(cpu["run"]), min(cpu["floor"])
    w_run, w_floor = min(wall["run"]), min(wall["floor"])
    print(f"thetabudget run {Path(path).name} --quiet --seed 1 (best of {repeat}): {c_run:.2f} s CPU "
          f"({w_run:.2f} s wall); floor ({normal} normal + {uniform} uniform variates x {trials} trials, "
          f"{n_out} outputs sorted): {c_floor:.2f} s CPU ({w_floor:.2f} s wall); ratio {c_run / c_floor:.2f} "
          f"CPU, {w_run / w_floor:.2f} wall (aim <= 4)")


def phases(path: str, repeat: int, seed: int) -> None:
    rig = load_rig(path)
    t_total, res = _best(lambda: run_budget(rig, rng=np.random.default_rng(seed)), repeat)
    trials = res.outputs[0].monte_carlo.trials
    print(f"run_budget in process: {t_total:.2f} s (best of {repeat}), {trials} trials")
    inputs, corr = comp.build_inputs(rig)
    model = VirtualRig(rig)
    corr_arg = corr or None
    sweep = rig.sweep is not None
    t: dict[str, float] = {}
    t["linear, first order"], _ = _best(lambda: linear(model, inputs, correlation=corr_arg), repeat)
    if not corr:
        t["linear, with second-order terms (eq. 14)"], _ = _best(
            lambda: linear(model, inputs, second_order=True), repeat)
    t["Monte Carlo, adaptive"], _ = _best(lambda: monte_carlo(
        model, inputs, rng=np.random.default_rng(seed), correlation=corr_arg,
        joint=("gain", "intercept") if sweep else False), repeat)
    groups: dict[str, tuple[str, ...]] = {}
    for name, q in inputs.items():
        groups[q.group or name] = (*groups.get(q.group or name, ()), name)
    t[f"Monte Carlo per component ({len(groups)} x 20 000)"], _ = _best(lambda: [
        component_mc_u(model, inputs, corr, members, rng=np.random.default_rng(seed), p=0.95)
        for members in groups.values()], repeat)
    for name, s in t.items():
        print(f"  {name:<44} {s:7.3f} s {100 * s / t_total:5.1f} %")
    rest = t_total - sum(t.values())
    print(f"  {'rest (validation, statements, warnings)':<44} {rest:7.3f} s {100 * rest / t_total:5.1f} %")


def lean(doc: dict) -> dict:
    """The sweep template without the components added after issue 14's aims were set (issue 10's
    pointer repeatability, settling and pivot play, fixed-pattern noise and camera-mount drift)."""
    doc = {k: (dict(v) if isinstance(v, dict) else v) for k, v in doc.items() if k != "pointer"}
    for section, keys in (("camera", ("prnu_pct", "dsnu_e")), ("geometry", ("mount_shift_um", "mount_roll_deg"))):
        for key in keys:
            doc[section].pop(key, None)
    return doc


def sweep_points(points: list[int], without_later: bool = False) -> None:
    doc = tomllib.loads((ROOT / "templates" / "gain_sweep.toml").read_text())
    if without_later:
        doc = lean(doc)
        print("without the pointer, fixed-pattern and camera-mount components:")
    for n in points:
        volts = [round(float(v), 6) for v in np.linspace(1.0, 9.0, n)]
        rig = parse_rig(merge_doc(doc, {"sweep": {"set_points_v": volts}}))
        inputs, _ = comp.build_inputs(rig)
        t0, w0 = time.process_time(), time.perf_counter()
        res = run_budget(rig, rng=np.random.default_rng(1))
        cpu, wall = time.process_time() - t0, time.perf_counter() - w0
        trials = res.outputs[0].monte_carlo.trials
        floor = floor_in_process(inputs, len(res.outputs), trials)
        print(f"{n:3d} set points, {len(inputs)} inputs, {trials} trials: run_budget {cpu:.2f} s CPU "
              f"({wall:.2f} s wall); floor {floor:.2f} s CPU; ratio {cpu / floor:.1f}"
              + ("  (aim: under 5 s)" if n == 51 else ""))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("file", nargs="?", default=str(ROOT / "templates" / "gain_sweep.toml"))
    ap.add_argument("--repeat", type=int, default=5, help="best of this many runs")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--points", type=int, nargs="*", default=[], help="sweeps of this many set points")
    ap.add_argument("--skip-phases", action="store_true")
    ap.add_argument("--lean", action="store_true", help="--points also without the components added after the aims")
    ap.add_argument("--profile", action="store_true", help="cProfile one whole run_budget (CPU time)")
    ap.add_argument("--default-heap", action="store_true",
                    help="in process, leave glibc's malloc thresholds as they are (the command sets them)")
    args = ap.parse_args(argv)
    kept = False if args.default_heap else keep_heap()
    print(f"Python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}; "
          f"in-process heap thresholds {'kept as the command keeps them' if kept else 'glibc defaults'}")
    whole_command(args.file, args.repeat)
    if not args.skip_phases:
        phases(args.file, max(1, args.repeat // 2), args.seed)
    if args.points:
        sweep_points(args.points)
        if args.lean:
            sweep_points(args.points, without_later=True)
    if args.profile:
        rig = load_rig(args.file)
        prof = cProfile.Profile(time.process_time)
        prof.enable()
        run_budget(rig, rng=np.random.default_rng(args.seed))
        prof.disable()
        pstats.Stats(prof).sort_stats("tottime").print_stats(15)
    return 0


if __name__ == "__main__":
    sys.exit(main())
