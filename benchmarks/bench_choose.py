"""Speed and memory of ``choose``: 10^4 camera × lens options, as ratios against plain baselines.

Run by hand (never as a timed test)::

    python benchmarks/bench_choose.py

Scenario: templates/choose_cameras.toml (invented demo data) with random cameras (pixels, pitch, read
noise, full well, bit depth, frame rate, shutter) and lenses. Three figures, each against a baseline
measured in the same run:

1. the whole command, ``python -m budget choose FILE`` over 2500 cameras × 4 lenses = 10^4 options
   (each searched over its working-distance range), against the floor of any such command: a Python
   process that imports numpy and reads the same CSV (wall time best of 3; peak RSS of the child); once
   with 12-bit cameras only and once with bit depths drawn from 8, 10 and 12 (where most candidates get
   the ADC's rounding exactly);
2. the window-truncation term over 10^4 candidates: once per window size and σ node against the
   former single call padded to the widest window (both with scipy's vectorized erf);
3. the surrogate over 10^4 candidates in one vectorized call against a plain Python loop calling it
   once per candidate (300 candidates, scaled);
4. that call (exact rounding for the 8- and 10-bit candidates) against the linear-ADC screening call.
"""

from __future__ import annotations

import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from budget.choice import model as choice_model  # noqa: E402
from budget.choice.model import Candidates, design_geometry, predict_candidates  # noqa: E402
from budget.imaging import pixel_model  # noqa: E402
from budget.imaging.spot import window_truncation_max  # noqa: E402
from budget.inputs.choose_file import load_choose  # noqa: E402

N = 10_000
N_LOOP = 300
CHILD = ("import resource, subprocess, sys, time; t = time.perf_counter(); "
         "subprocess.run(sys.argv[1:], check=True, stdout=subprocess.DEVNULL); "
         "print(time.perf_counter() - t, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
FLOOR = "import csv, sys, numpy; rows = list(csv.DictReader(open(sys.argv[1], encoding='utf-8')))"


def candidates(n: int, rng: np.random.Generator) -> Candidates:
    px = rng.integers(640, 6000, n).astype(float)
    return Candidates(pixels_x=px, pixels_y=np.floor(px * 0.75), pitch_um=rng.uniform(1.5, 9.0, n),
                      bit_depth=rng.choice([8.0, 10.0, 12.0], n), read_noise_e=rng.uniform(1.5, 10.0, n),
                      full_well_e=rng.uniform(5e3, 4e4, n), max_frame_rate_hz=rng.uniform(10, 300, n),
                      rolling=rng.random(n) < 0.3, focal_length_mm=rng.choice([12.0, 16.0, 25.0, 35.0, 50.0], n),
                      f_number=rng.choice([2.8, 4.0, 5.6, 8.0, 11.0], n))


def one(c: Candidates, i: int) -> Candidates:
    return Candidates(**{k: getattr(c, k)[i:i + 1] for k in c.__dataclass_fields__})


def _files(folder: Path, rng: np.random.Generator, bits: tuple[int, ...] = (12,)) -> Path:
    """A choose file with 2500 random cameras × 4 lenses (invented demo data), bit depths drawn from ``bits``."""
    lines = ["# invented demo data for the benchmark",
             "name,pixels_x,pixels_y,pitch_um,bit_depth,read_noise_e,full_well_e,max_frame_rate_hz,shutter,price"]
    for k in range(2500):
        px = int(rng.integers(640, 6000))
        bd = bits[0] if len(bits) == 1 else int(rng.choice(bits))
        lines.append(f"cam-{k},{px},{int(px * 0.75)},{rng.uniform(1.5, 9.0):.3f},{bd},{rng.uniform(1.5, 10):.2f},"
                     f"{rng.uniform(5e3, 4e4):.0f},{rng.uniform(10, 300):.0f},"
                     f"{'rolling' if rng.random() < 0.3 else 'global'},{rng.integers(200, 3000)}")
    (folder / "cameras.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    text = (ROOT / "templates" / "choose_cameras.toml").read_text(encoding="utf-8")
    path = folder / "choose.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _child(args: list[str]) -> tuple[float, float]:
    out = subprocess.run([sys.executable, "-c", CHILD, *args], check=True, capture_output=True, text=True).stdout
    t, rss = out.split()
    return float(t), float(rss) / 1024.0


def main() -> None:
    print(f"Python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}")
    for label, bits in (("12-bit", (12,)), ("8/10/12-bit", (8, 10, 12))):
        with tempfile.TemporaryDirectory() as tmp:
            path = _files(Path(tmp), np.random.default_rng(np.random.SeedSequence(2026)), bits)
            cmd = [sys.executable, "-m", "budget", "choose", str(path)]
            floor = [sys.executable, "-c", FLOOR, str(Path(tmp) / "cameras.csv")]
            runs = [(_child(cmd), _child(floor)) for _ in range(3)]
        t_cmd = min(r[0][0] for r in runs)
        t_floor = min(r[1][0] for r in runs)
        rss_cmd = max(r[0][1] for r in runs)
        rss_floor = max(r[1][1] for r in runs)
        print(f"1. whole command over 10^4 options, {label} cameras: {t_cmd:.2f} s, peak RSS {rss_cmd:.0f} MiB; floor "
              f"(numpy + CSV) {t_floor:.2f} s, {rss_floor:.0f} MiB; ratio {t_cmd / t_floor:.2f} (time), "
              f"{rss_cmd / rss_floor:.2f} (memory)")

    spec = load_choose(ROOT / "templates" / "choose_cameras.toml")
    cand = candidates(N, np.random.default_rng(np.random.SeedSequence(2026)))
    geo = design_geometry(spec)
    pred = predict_candidates(spec, cand, geo)
    sigma, window = pred.sigma_px, pred.window_px
    from scipy.special import erf as vector_erf  # both sides with scipy's vectorized erf: only the grouping differs

    from budget.imaging import spot
    spot.erf = vector_erf
    best_new = best_old = float("inf")
    for _ in range(3):
        choice_model._TRUNCATION.clear()
        t = time.perf_counter()
        new = choice_model.truncation_by_window(sigma, window)
        best_new = min(best_new, time.perf_counter() - t)
        t = time.perf_counter()
        old = window_truncation_max(sigma, window)
        best_old = min(best_old, time.perf_counter() - t)
    assert np.all(np.abs(new - old) <= np.maximum(0.01 * old, 1e-7))
    print(f"2. truncation term, 10^4 candidates ({np.unique(window).size} window sizes): per window {best_new:.3f} s, "
          f"padded single call {best_old:.3f} s; ratio padded / per window = {best_old / best_new:.1f}")

    best_vec = best_loop = float("inf")
    for _ in range(3):
        pixel_model._EXACT_MEMO.clear()  # each call computes afresh (choose's memo serves its second call)
        t = time.perf_counter()
        pred = predict_candidates(spec, cand, geo)
        best_vec = min(best_vec, time.perf_counter() - t)
        pixel_model._EXACT_MEMO.clear()
        t = time.perf_counter()
        loop_u = [predict_candidates(spec, one(cand, i), geo).U_angle_deg[0] for i in range(N_LOOP)]
        best_loop = min(best_loop, (time.perf_counter() - t) * N / N_LOOP)
    # a batch interpolates the linear camera's spot sums between σ nodes (pixel_model._spot_coefficients, 2e-4 here)
    assert np.allclose(loop_u, pred.U_angle_deg[:N_LOOP], rtol=1e-3)
    print(f"3. surrogate, {N} candidates at one distance, vectorized: {best_vec:.3f} s; plain loop scaled from "
          f"{N_LOOP}: {best_loop:.1f} s; ratio loop / vectorized = {best_loop / best_vec:.0f}")

    best_lin = float("inf")
    for _ in range(3):
        t = time.perf_counter()
        predict_candidates(spec, cand, geo, exact_adc=False)
        best_lin = min(best_lin, time.perf_counter() - t)
    print(f"4. the same {N} candidates ({int(np.sum(cand.bit_depth < 12))} of them 8- or 10-bit): exact rounding "
          f"{best_vec:.3f} s against the linear-ADC screening call {best_lin:.3f} s; ratio {best_vec / best_lin:.1f}")


if __name__ == "__main__":
    main()
