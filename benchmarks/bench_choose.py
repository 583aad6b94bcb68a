"""Speed of ``choose``: 10^4 camera × lens candidates in one vectorized call against a plain loop.

Run by hand (never as a timed test)::

    python benchmarks/bench_choose.py            # 10^4 candidates, best of 3; loop over 300, scaled

Scenario: templates/choose_cameras.toml (invented demo data) with 10^4 random cameras (pixels,
pitch, read noise, full well, bit depth) and lenses (focal length, f-number). The plain
baseline calls the same prediction once per candidate (arrays of length 1) in a Python loop;
its time for 300 candidates is scaled to 10^4.
"""

from __future__ import annotations

import platform
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from budget.choice.model import Candidates, design_geometry, predict_candidates  # noqa: E402
from budget.inputs.choose_file import load_choose  # noqa: E402

N = 10_000
N_LOOP = 300


def candidates(n: int, rng: np.random.Generator) -> Candidates:
    px = rng.integers(640, 6000, n).astype(float)
    return Candidates(pixels_x=px, pixels_y=np.floor(px * 0.75), pitch_um=rng.uniform(1.5, 9.0, n),
                      bit_depth=rng.choice([8.0, 10.0, 12.0], n), read_noise_e=rng.uniform(1.5, 10.0, n),
                      full_well_e=rng.uniform(5e3, 4e4, n), max_frame_rate_hz=rng.uniform(10, 300, n),
                      rolling=rng.random(n) < 0.3, focal_length_mm=rng.choice([12.0, 16.0, 25.0, 35.0, 50.0], n),
                      f_number=rng.choice([2.8, 4.0, 5.6, 8.0, 11.0], n))


def one(c: Candidates, i: int) -> Candidates:
    return Candidates(**{k: getattr(c, k)[i:i + 1] for k in c.__dataclass_fields__})


def main() -> None:
    spec = load_choose(Path(__file__).resolve().parents[1] / "templates" / "choose_cameras.toml")
    cand = candidates(N, np.random.default_rng(np.random.SeedSequence(2026)))
    geo = design_geometry(spec)
    best_vec = best_loop = float("inf")
    for _ in range(3):
        t = time.perf_counter()
        pred = predict_candidates(spec, cand, geo)
        best_vec = min(best_vec, time.perf_counter() - t)
        t = time.perf_counter()
        loop_u = [predict_candidates(spec, one(cand, i), geo).U_angle_deg[0] for i in range(N_LOOP)]
        best_loop = min(best_loop, (time.perf_counter() - t) * N / N_LOOP)
    assert np.allclose(loop_u, pred.U_angle_deg[:N_LOOP], rtol=1e-12)
    print(f"Python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}")
    print(f"{N} candidates, vectorized: {best_vec:.3f} s (best of 3); {int(pred.meets.sum())} meet the goal")
    print(f"plain loop, scaled from {N_LOOP}: {best_loop:.1f} s; ratio loop / vectorized = {best_loop / best_vec:.0f}")


if __name__ == "__main__":
    main()
