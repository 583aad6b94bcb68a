"""Speed and memory of the Monte Carlo engine against plain numpy, as ratios measured in one run.

Run by hand (never as a timed test)::

    python benchmarks/bench_engine.py                 # 10⁶ trials, best of 7, then 10⁷ memory
    python benchmarks/bench_engine.py --skip-memory

Models: the mass calibration of JCGM 101:2008 9.3,
δm = (m_Rc + δm_Rc)(1 + (ρa − ρa0)(1/ρW − 1/ρR)) − m_nom, m_nom = 100 g, ρa0 = 1.2 kg/m³,
inputs as listed in the shared REFERENCES.md beside the repository (values from memory there),
and a cheap additive model y = a + b + c + d (two normal, two rectangular inputs; invented),
where the engine's own overhead shows most. Both sides produce the same outputs: mean, standard
deviation, and the probabilistically symmetric (JCGM 101 7.7) and shortest (7.8) 95 % intervals
from one sort.

Memory: peak resident set size of child processes: the engine alone at 10⁷ trials of the
mass model against the plain loop; and a whole ``thetabudget run`` of the four-angle template
(templates/gauge_static.toml) at 10⁷ trials against a plain process that holds the floor of
any exact method, the four outputs' 10⁷ values each, sorted.

Aims (issue 14): engine ≤ 1.15 × the plain loop on both models; the four-angle run at 10⁷
trials under 500 MB.
"""

from __future__ import annotations

import argparse
import inspect
import json
import math
import platform
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from budget.propagation import Normal, Rectangular, monte_carlo  # noqa: E402

M_NOM = 100_000.0  # mg
RHO_A0 = 1.2  # kg/m³
P = 0.95

MASS = {
    "m_rc": Normal(mean=100_000.000, sd=0.050),  # mg
    "dm_rc": Normal(mean=1.234, sd=0.020),  # mg
    "rho_a": Rectangular(low=1.10, high=1.30),  # kg/m³
    "rho_w": Rectangular(low=7000.0, high=9000.0),  # kg/m³
    "rho_r": Rectangular(low=7950.0, high=8050.0),  # kg/m³
}
ADDITIVE = {
    "a": Normal(mean=1.0, sd=0.1),
    "b": Normal(mean=-2.0, sd=0.3),
    "c": Rectangular(low=-0.5, high=0.5),
    "d": Rectangular(low=0.0, high=2.0),
}


def mass_model(m_rc, dm_rc, rho_a, rho_w, rho_r):
    """δm of JCGM 101 9.3, in mg."""
    return (m_rc + dm_rc) * (1.0 + (rho_a - RHO_A0) * (1.0 / rho_w - 1.0 / rho_r)) - M_NOM


def additive_model(a, b, c, d):
    return a + b + c + d


MODELS = {"mass": (mass_model, MASS), "additive": (additive_model, ADDITIVE)}


def run_engine(which: str, trials: int, seed: int) -> tuple:
    model, inputs = MODELS[which]
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    res = monte_carlo(model, inputs, p=P, trials=trials, rng=rng)
    return res.estimate, res.u, res.interval, res.shortest


def _plain_draw(rng: np.random.Generator, inputs: dict, trials: int) -> list[np.ndarray]:
    out = []
    for d in inputs.values():
        if isinstance(d, Normal):
            out.append(rng.normal(loc=d.mean, scale=d.sd, size=trials))
        else:
            out.append(rng.uniform(low=d.low, high=d.high, size=trials))
    return out


def run_plain(which: str, trials: int, seed: int) -> tuple:
    """The same Monte Carlo written directly in numpy: no checks, no chunks, one sort."""
    model, inputs = MODELS[which]
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    y = model(*_plain_draw(rng, inputs, trials))
    mean, sd = float(y.mean()), float(y.std(ddof=1))
    y.sort()
    q = int(P * trials + 0.5)
    r = (trials - q) // 2 + (trials - q) % 2  # JCGM 101 7.7.2, 1-based
    sym = (float(y[r - 1]), float(y[r + q - 1]))
    rs = int(np.argmin(y[q:] - y[: trials - q]))
    return mean, sd, sym, (float(y[rs]), float(y[rs + q]))


def best_of(fns, repeat: int) -> list[tuple[float, tuple]]:
    """Best CPU time of each function over ``repeat`` rounds.

    CPU time (both sides run on one thread), not wall time: on the shared machine a side can
    wait for a core for as long as it computes. The functions alternate within each round,
    so a burst of load from other processes hits both sides instead of biasing the ratio.
    """
    times: list[list[float]] = [[] for _ in fns]
    outs: list[tuple] = [() for _ in fns]
    for i in range(repeat):
        for j, fn in enumerate(fns):
            t0 = time.process_time()
            outs[j] = fn(1000 + i)
            times[j].append(time.process_time() - t0)
    return [(min(t), o) for t, o in zip(times, outs, strict=True)]


def peak_mib() -> float:
    """This process's own peak resident set size, MiB (VmHWM).

    ru_maxrss would also count the parent's peak, which Linux carries across fork and exec.
    """
    try:
        with open("/proc/self/status") as f:
            return next(int(line.split()[1]) for line in f if line.startswith("VmHWM:")) / 1024
    except (OSError, StopIteration):
        import resource

        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


PEAK = inspect.getsource(peak_mib)
"""The same function, as source for the child processes that import nothing of the package."""


def child_memory(trials: int, which: str) -> None:
    """Run one Monte Carlo of the mass model in this (child) process; print its peak RSS as JSON."""
    base = peak_mib()
    t0 = time.perf_counter()
    out = (run_engine if which == "engine" else run_plain)("mass", trials, 7)
    elapsed = time.perf_counter() - t0
    peak = peak_mib()
    print(json.dumps({"which": which, "trials": trials, "baseline_mib": base,
                      "peak_mib": peak, "seconds": elapsed, "u": out[1]}))


FLOOR = PEAK + """
import json, sys
import numpy as np
trials, outputs = int(sys.argv[1]), int(sys.argv[2])
rng = np.random.default_rng(7)
kept = [rng.standard_normal(trials) for _ in range(outputs)]
for y in kept:
    y.sort()
print(json.dumps({"peak_mib": peak_mib()}))
"""
"""The floor of an exact run, in a process that imports only numpy: ``outputs`` arrays of
``trials`` values, each sorted in place."""


def _child(args: list[str]) -> dict:
    done = subprocess.run([sys.executable, str(Path(__file__).resolve()), *args], check=True,
                          capture_output=True, text=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def _run_peak(trials: int) -> tuple[float, float]:
    """Peak RSS (MiB) and wall time of ``thetabudget run`` of the four-angle template."""
    code = (PEAK + "import sys, contextlib, io; from budget.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    rc = main(['run', {str(ROOT / 'templates' / 'gauge_static.toml')!r}, '--quiet', "
            f"'--seed', '1', '--trials', '{trials}'])\n"
            "print(rc, peak_mib())")
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True)
    rc, peak = done.stdout.split()
    assert rc == "0", done.stderr
    return float(peak), time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=10**6)
    ap.add_argument("--repeat", type=int, default=7)
    ap.add_argument("--memory-trials", type=int, default=10**7)
    ap.add_argument("--skip-memory", action="store_true")
    ap.add_argument("--child", choices=["engine", "plain"], help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child_memory(args.memory_trials, args.child)
        return

    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}, "
          f"{platform.processor() or 'cpu'}")
    for which, title in (("mass", "JCGM 101 9.3 mass calibration"), ("additive", "additive model a+b+c+d")):
        run_engine(which, 10_000, 1)  # warm-up (first-call caches) outside the timings
        run_plain(which, 10_000, 1)
        (t_engine, e), (t_plain, b) = best_of(
            [lambda s, w=which: run_engine(w, args.trials, s), lambda s, w=which: run_plain(w, args.trials, s)],
            args.repeat)
        print(f"{title}, M = {args.trials:.0e} trials, best CPU time of {args.repeat}")
        for name, (mean, sd, sym, short) in (("engine", e), ("plain", b)):
            print(f"  {name:6s} mean {mean:.4f}  u {sd:.4f}  symmetric [{sym[0]:.4f}, {sym[1]:.4f}]"
                  f"  shortest [{short[0]:.4f}, {short[1]:.4f}]")
        print(f"  engine {t_engine:.3f} s   plain numpy {t_plain:.3f} s   ratio {t_engine / t_plain:.2f}"
              f"  (aim <= 1.15)")
        # Different chunks draw different numbers from the same seed, so the results are
        # compared statistically: u agrees to a few times u/√(2M).
        se_u = b[1] / math.sqrt(2 * args.trials)
        print(f"  |u_engine - u_plain| = {abs(e[1] - b[1]):.2e} (se of u {se_u:.1e})")

    if not args.skip_memory:
        m = args.memory_trials
        for which in ("engine", "plain"):
            r = _child(["--child", which, "--memory-trials", str(m)])
            print(f"peak RSS, mass model, {which}, M = {m:.0e}: {r['peak_mib']:.0f} MiB "
                  f"(after imports {r['baseline_mib']:.0f} MiB; {r['seconds']:.1f} s)")
        done = subprocess.run([sys.executable, "-c", FLOOR, str(m), "4"], check=True, capture_output=True, text=True)
        floor = json.loads(done.stdout)["peak_mib"]
        peak, wall = _run_peak(m)
        print(f"peak RSS, thetabudget run gauge_static.toml --trials {m:.0e}: {peak:.0f} MiB "
              f"= {peak * 1.048576:.0f} MB ({wall:.0f} s; aim < 500 MB); plain floor (4 outputs "
              f"x M sorted): {floor:.0f} MiB; ratio {peak / floor:.2f}")


if __name__ == "__main__":
    main()
