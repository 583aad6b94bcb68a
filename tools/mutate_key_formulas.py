"""Hand-picked mutants of the key formulas, each run against the fast test folders.

Run by hand from the repository root (it edits a source file, runs pytest, and restores the
file from memory, one mutant at a time; do not run two copies at once)::

    python tools/mutate_key_formulas.py            # all mutants
    python tools/mutate_key_formulas.py M1 M6      # some

A mutant is "caught" when the tests fail with it. The formulas are those with one home since
issue 15: centre-of-mass noise and integer quantization (imaging/spot.py), the angle about the
pivot and the projection and tilt (rig/geometry.py).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TESTS = ["tests/imaging", "tests/rig", "tests/choice", "tests/reference", "tests/advice",
         "tests/propagation", "tests/fit"]

MUTANTS = {
    # centre-of-mass noise (Thompson et al. 2002 pixelation term, window background term)
    "M1": ("budget/imaging/spot.py", "(s**2 + 1.0 / 12.0) / n", "(s**2) / n"),
    "M2": ("budget/imaging/spot.py", "b2 * w**2 * (w**2 - 1.0)", "b2 * w**2 * (w**2 + 1.0)"),
    "M3": ("budget/imaging/spot.py", "(w**2 - 1.0) / (12.0 * n**2)", "(w**2 - 1.0) / (6.0 * n**2)"),
    # integer quantization: rectangular on ±1/2 px
    "M4": ("budget/imaging/spot.py", "INTEGER_HALF_WIDTH_PX**2 / 3.0", "INTEGER_HALF_WIDTH_PX**2 / 6.0"),
    # the angle about the pivot
    "M5": ("budget/rig/geometry.py", "np.arctan2(y0 * x - x0 * y, x0 * x + y0 * y)",
           "np.arctan2(x0 * y - y0 * x, x0 * x + y0 * y)"),
    "M6": ("budget/rig/geometry.py", "np.arctan2(y0 * x - x0 * y, x0 * x + y0 * y)",
           "np.arctan2(y0 * x - x0 * y, x0 * x - y0 * y)"),
    "M7": ("budget/rig/geometry.py", "d -= 360.0 * np.round(d / 360.0)", "d -= 360.0 * np.floor(d / 360.0)"),
    # projection, distortion and tilt
    "M8": ("budget/rig/geometry.py", "s = np.subtract(distance_mm, z)", "s = np.add(distance_mm, z)"),
    "M9": ("budget/rig/geometry.py", "r2 = (u * u + v * v) / focal_px**2", "r2 = (u * u + v * v) / focal_px"),
    "M10": ("budget/rig/geometry.py", "yr -= awx * z", "yr += awx * z"),
    "M11": ("budget/rig/geometry.py", "zr -= np.multiply(awy, x, out=tmp)", "zr += np.multiply(awy, x, out=tmp)"),
}


def run(name: str) -> bool:
    path, old, new = MUTANTS[name]
    f = ROOT / path
    text = f.read_text(encoding="utf-8")
    if text.count(old) != 1:
        print(f"{name}: the text to mutate is not found once in {path}; skipped")
        return False
    try:
        f.write_text(text.replace(old, new), encoding="utf-8")
        r = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider", *TESTS],
                           cwd=ROOT, capture_output=True, text=True)
    finally:
        f.write_text(text, encoding="utf-8")
    caught = r.returncode != 0
    first = next((ln for ln in r.stdout.splitlines() if ln.startswith("FAILED")), "")
    print(f"{name} {'caught' if caught else 'SURVIVED'}: {path}: {old!r} -> {new!r}  {first}", flush=True)
    return caught


def main(argv: list[str]) -> int:
    names = argv or list(MUTANTS)
    caught = sum(run(n) for n in names)
    print(f"{caught} of {len(names)} mutants caught")
    return 0 if caught == len(names) else 1


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
