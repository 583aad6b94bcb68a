"""Speed of three things that used to be timed inside unit tests, as ratios against plain baselines.

Run by hand (never as a timed test)::

    python benchmarks/bench_render.py

1. ``render_target`` of 10 000 frames of 15 × 15 px (vectorized) against a plain numpy loop
   that renders the same Gaussian spots one frame at a time (expected mean image, Poisson and
   read noise, quantization). Aim: the vectorized call well below the loop (ratio < 1).
2. ``read_positions_csv`` of one position with 200 000 frames against 20 000 frames: a linear
   reader gives a ratio near 10 (a duplicate-frame check that compared each row with every
   earlier one gave about 100). Aim: ratio < 20.
3. ``thetabudget selftest`` (all reference cases, in process) against one plain 10⁶-trial Monte
   Carlo of the JCGM 101 9.3 model written with numpy alone. Aim: a few times the plain run.

Times are CPU seconds of this process, best of several alternating repeats (the machine is
shared), so the ratios, not the seconds, are the figures to compare.
"""

from __future__ import annotations

import contextlib
import io
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from budget.cli import main as cli_main  # noqa: E402
from budget.imaging.render import render_target  # noqa: E402
from budget.inputs.data_csv import read_positions_csv  # noqa: E402

REPEATS = 3


def best(fn, repeats: int = REPEATS) -> float:
    times = []
    for _ in range(repeats):
        t = time.process_time()
        fn()
        times.append(time.process_time() - t)
    return min(times)


def render_vectorized(centres: np.ndarray, rng: np.random.Generator) -> None:
    render_target(shape=(15, 15), centre_xy=centres, sigma_px=1.0, signal_e=1e4, background_e=100.0,
                  rng=rng, read_noise_e=3.0, full_well_e=2e4, bit_depth=12)


def render_loop(centres: np.ndarray, rng: np.random.Generator) -> None:
    yy, xx = np.mgrid[0:15, 0:15]
    gain = 2e4 / 4095
    for cx, cy in centres:
        mean = 100.0 + 1e4 / (2 * np.pi) * np.exp(-((xx - cx) ** 2 + (yy - cy) ** 2) / 2.0)
        e = rng.poisson(mean) + rng.normal(0.0, 3.0, mean.shape)
        np.clip(np.rint(e / gain), 0, 4095)


def reader(folder: Path, frames: int) -> Path:
    f = folder / f"d{frames}.csv"
    rows = "\n".join(f"Z,{k},1.0,2.0" for k in range(1, frames + 1))
    f.write_text("position,frame,x_px,y_px\n" + rows + "\n", encoding="utf-8")
    return f


def selftest() -> None:
    with contextlib.redirect_stdout(io.StringIO()):
        assert cli_main(["selftest"]) == 0


def plain_mass_mc(rng: np.random.Generator) -> None:
    m = 1_000_000
    y = ((rng.normal(100_000.0, 0.05, m) + rng.normal(1.234, 0.02, m))
         * (1 + (rng.uniform(1.1, 1.3, m) - 1.2)
            * (1 / rng.uniform(7000, 9000, m) - 1 / rng.uniform(7950, 8050, m))) - 100_000.0)
    y.sort()
    y.mean(), y.std()


def main() -> int:
    rng = np.random.default_rng(2)
    centres = rng.uniform(6.5, 7.5, size=(10_000, 2))
    vec = best(lambda: render_vectorized(centres, rng))
    loop = best(lambda: render_loop(centres, rng))
    print(f"render 10 000 frames: vectorized {vec:.2f} s, plain loop {loop:.2f} s, ratio {vec / loop:.2f}")
    with tempfile.TemporaryDirectory() as d:
        small, large = reader(Path(d), 20_000), reader(Path(d), 200_000)
        t_small = best(lambda: read_positions_csv(small))
        t_large = best(lambda: read_positions_csv(large))
    print(f"read 20 000 / 200 000 frames: {t_small:.2f} s / {t_large:.2f} s, ratio {t_large / t_small:.1f} "
          "(linear: about 10)")
    st = best(selftest, 1)
    plain = best(lambda: plain_mass_mc(rng))
    print(f"selftest {st:.2f} s, plain 1e6-trial mass Monte Carlo {plain:.2f} s, ratio {st / plain:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
