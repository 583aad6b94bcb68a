"""What every sub-command shares: the one random-generator factory, progress, JSON text, the terminal's width.

Sub-commands live one per module in this package; each exposes ``execute(args) -> int`` and
raises :class:`budget.errors.BudgetInputError` for bad input (:mod:`budget.cli` maps it to
exit 2). This package is the only place a generator is made from a seed.
"""

from __future__ import annotations

import json
import secrets
import sys
from pathlib import Path

import numpy as np

from budget.report.safe_write import remove_pending

__all__ = ["SEED_BOUND", "make_rng", "seed_of", "progress_bar", "dumps", "rig_inputs", "remove_pending",
           "terminal_width"]


SEED_BOUND = 2**32
"""A seed drawn when none is given is below this: ten digits at most, short enough to retype."""


def make_rng(seed: int | None, stream: int = 0) -> np.random.Generator:
    """The one place a generator is made from a seed; a seed below :data:`SEED_BOUND` is drawn when none is given.

    The drawn seed is the generator's seed-sequence entropy, so :func:`seed_of` and every report give it,
    and ``--seed`` with that number repeats the run. ``stream`` > 0 gives an independent stream of the
    same seed (a spawned seed sequence), for draws that follow a run made from ``seed`` and must not
    repeat its numbers.
    """
    if seed is None:
        seed = secrets.randbelow(SEED_BOUND)
    if stream:
        return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(stream,)))
    return np.random.default_rng(np.random.SeedSequence(seed))


def seed_of(rng: np.random.Generator) -> object:
    """The seed a generator from :func:`make_rng` was made from (its seed sequence's entropy)."""
    return getattr(getattr(rng.bit_generator, "seed_seq", None), "entropy", None)


def progress_bar(enabled: bool):
    """A progress callback on stderr, or None (not a terminal, --quiet or --json)."""
    if not enabled or not sys.stderr.isatty():
        return None, None
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn

    prog = Progress(TextColumn("Monte Carlo"), BarColumn(), TextColumn("{task.completed:,.0f} trials"),
                    console=Console(stderr=True), transient=True)
    task = prog.add_task("mc", total=None)
    return prog, (lambda done: prog.update(task, completed=done))


def dumps(obj: dict) -> str:
    """Strict JSON text (no NaN or Infinity), UTF-8 kept readable."""
    return json.dumps(obj, indent=2, allow_nan=False, ensure_ascii=False)


def rig_inputs(path: Path, rig=None, data=None) -> list[Path]:
    """Every file a command on a rig file reads: the rig file, the data files its ``[data]`` names and
    the images they name (relative to the data file's folder). None of them is ever an output."""
    out = [Path(path)]
    if rig is not None and rig.data is not None:
        out += [Path(p) for p in (rig.data.readings_csv, rig.data.pivot_csv) if p]
    folder = Path(path).parent
    for name, _, kind, _ in (data.files if data is not None else ()):
        if kind == "data":
            folder = Path(name).parent
        elif kind == "image":
            out.append(Path(name) if Path(name).is_absolute() else folder / name)
    return out


def terminal_width(default: int | None = 120) -> int | None:
    """The terminal's width (``COLUMNS`` when set), at least 80; ``default`` when the text goes to a file or a
    pipe (None: no limit)."""
    import os
    import shutil

    if default is None and not (sys.stdout.isatty() or "COLUMNS" in os.environ):
        return None
    return max(80, shutil.get_terminal_size((default or 120, 24)).columns)
