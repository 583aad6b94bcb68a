"""Speed and memory of the Monte Carlo engine against a plain numpy loop.

Run by hand (never as a timed test)::

    python benchmarks/bench_engine.py                 # 10⁶ trials, best of 3, then 10⁷ memory
    python benchmarks/bench_engine.py --skip-memory

Model: the mass calibration of JCGM 101:2008 9.3,
δm = (m_Rc + δm_Rc)(1 + (ρa − ρa0)(1/ρW − 1/ρR)) − m_nom, m_nom = 100 g, ρa0 = 1.2 kg/m³,
inputs as listed in the shared REFERENCES.md beside the repository (values from memory there). Both sides
produce the same outputs: mean, standard deviation, and the probabilistically symmetric
(JCGM 101 7.7) and shortest (7.8) 95 % intervals from one sort.

Aims: engine time ≤ 1.3 × the plain loop at 10⁶ trials; peak resident memory of a process
running only 10⁷ engine trials under 500 MB.
"""

from __future__ import annotations

import argparse
import json
import math
import platform
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from budget.propagation import Normal, Rectangular, monte_carlo  # noqa: E402

M_NOM = 100_000.0  # mg
RHO_A0 = 1.2  # kg/m³
P = 0.95

INPUTS = {
    "m_rc": Normal(mean=100_000.000, sd=0.050),  # mg
    "dm_rc": Normal(mean=1.234, sd=0.020),  # mg
    "rho_a": Rectangular(low=1.10, high=1.30),  # kg/m³
    "rho_w": Rectangular(low=7000.0, high=9000.0),  # kg/m³
    "rho_r": Rectangular(low=7950.0, high=8050.0),  # kg/m³
}


def mass_model(m_rc, dm_rc, rho_a, rho_w, rho_r):
    """δm of JCGM 101 9.3, in mg."""
    return (m_rc + dm_rc) * (1.0 + (rho_a - RHO_A0) * (1.0 / rho_w - 1.0 / rho_r)) - M_NOM


def run_engine(trials: int, seed: int) -> tuple[float, float, tuple[float, float], tuple[float, float]]:
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    res = monte_carlo(mass_model, INPUTS, p=P, trials=trials, rng=rng)
    return res.estimate, res.u, res.interval, res.shortest


def run_plain(trials: int, seed: int) -> tuple[float, float, tuple[float, float], tuple[float, float]]:
    """The same Monte Carlo written directly in numpy: no checks, no chunks, one sort."""
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    y = mass_model(
        rng.normal(loc=100_000.000, scale=0.050, size=trials),
        rng.normal(loc=1.234, scale=0.020, size=trials),
        rng.uniform(low=1.10, high=1.30, size=trials),
        rng.uniform(low=7000.0, high=9000.0, size=trials),
        rng.uniform(low=7950.0, high=8050.0, size=trials),
    )
    mean, sd = float(y.mean()), float(y.std(ddof=1))
    y.sort()
    q = int(P * trials + 0.5)
    r = (trials - q) // 2 + (trials - q) % 2  # JCGM 101 7.7.2, 1-based
    sym = (float(y[r - 1]), float(y[r + q - 1]))
    rs = int(np.argmin(y[q:] - y[: trials - q]))
    return mean, sd, sym, (float(y[rs]), float(y[rs + q]))


def best_of(fns, trials: int, repeat: int) -> list[tuple[float, tuple]]:
    """Best wall time of each function over ``repeat`` rounds.

    The functions alternate within each round, so a burst of load from other processes on
    the shared machine hits both sides instead of biasing the ratio.
    """
    times: list[list[float]] = [[] for _ in fns]
    outs: list[tuple] = [() for _ in fns]
    for i in range(repeat):
        for j, fn in enumerate(fns):
            t0 = time.perf_counter()
            outs[j] = fn(trials, 1000 + i)
            times[j].append(time.perf_counter() - t0)
    return [(min(t), o) for t, o in zip(times, outs, strict=True)]


def child_memory(trials: int, which: str) -> None:
    """Run one Monte Carlo in this (child) process and print its peak RSS as JSON."""
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.perf_counter()
    out = (run_engine if which == "engine" else run_plain)(trials, 7)
    elapsed = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
    print(json.dumps({"which": which, "trials": trials, "baseline_mib": base / 1024,
                      "peak_mib": peak / 1024, "seconds": elapsed, "u": out[1]}))


def measure_memory(trials: int, which: str) -> dict:
    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", which, "--memory-trials", str(trials)]
    done = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=10**6)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--memory-trials", type=int, default=10**7)
    ap.add_argument("--skip-memory", action="store_true")
    ap.add_argument("--child", choices=["engine", "plain"], help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child_memory(args.memory_trials, args.child)
        return

    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}, "
          f"{platform.processor() or 'cpu'}")
    # Warm-up (imports, first-call caches) outside the timings.
    run_engine(10_000, 1)
    run_plain(10_000, 1)
    (t_engine, e), (t_plain, b) = best_of([run_engine, run_plain], args.trials, args.repeat)
    print(f"JCGM 101 9.3 mass calibration, M = {args.trials:.0e} trials, best of {args.repeat}")
    for name, (mean, sd, sym, short) in (("engine", e), ("plain", b)):
        print(f"  {name:6s} mean {mean:.4f} mg  u {sd:.4f} mg  symmetric [{sym[0]:.4f}, {sym[1]:.4f}]"
              f"  shortest [{short[0]:.4f}, {short[1]:.4f}]")
    print(f"  engine {t_engine:.3f} s   plain numpy {t_plain:.3f} s   ratio {t_engine / t_plain:.2f}"
          f"  (aim <= 1.3)")
    # Same seed on both sides draws the same numbers only when the engine uses one chunk, so
    # the results are compared statistically: u agrees to a few times u/√(2M).
    se_u = b[1] / math.sqrt(2 * args.trials)
    print(f"  |u_engine - u_plain| = {abs(e[1] - b[1]):.2e} mg (se of u {se_u:.1e} mg)")

    if not args.skip_memory:
        for which in ("engine", "plain"):
            m = measure_memory(args.memory_trials, which)
            print(f"peak RSS, {which}, M = {m['trials']:.0e}: {m['peak_mib']:.0f} MiB "
                  f"(after imports {m['baseline_mib']:.0f} MiB; {m['seconds']:.1f} s)"
                  + ("  (aim < 500 MB)" if which == "engine" else ""))


if __name__ == "__main__":
    main()
