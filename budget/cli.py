"""The ``thetabudget`` command: a thin layer over the library.

Only :func:`main` turns exceptions into exit codes: 0 success, 1 a failed
selftest, 2 bad input or an input the computation cannot handle (one line on stderr naming
the field; nothing written), argument errors included. A caught signal (SIGINT, SIGTERM, SIGHUP)
becomes an exception, so that the one writer removes its temporary files; the exit status is then
128 + the signal's number, as a shell reports it.
"""

from __future__ import annotations

import argparse
import contextlib
import math
import os
import signal
import sys
import warnings
from collections.abc import Iterator, Sequence
from pathlib import Path

from budget import __version__
from budget.commands.new import KINDS
from budget.errors import BudgetComputationError, BudgetInputError, BudgetWarning
from budget.heap import keep_heap

__all__ = ["main", "build_parser", "MAX_TRIALS", "MAX_RENDERS", "MAX_FRAMES"]

MAX_TRIALS = 10_000_000
"""Most Monte Carlo trials a command takes (``--trials``): the adaptive procedure's own cap (JCGM 101 7.9,
:data:`budget.propagation.montecarlo.MAX_TRIALS`); the engine also caps trials × outputs by memory."""
MAX_RENDERS = 100_000
"""Most synthetic images ``verify-locator --renders`` draws."""
MAX_FRAMES = 1000
"""Most frames per position ``render --frames`` draws."""

last_warnings: list[str] = []
"""The library warnings (numpy, matplotlib, ...) the last :func:`main` call kept off stderr (for tests)."""


class _Parser(argparse.ArgumentParser):
    """argparse with one line per error (no usage block): ``thetabudget run: error: ... (see --help)``."""

    def error(self, message: str):
        text = " ".join(str(message).split())
        self.exit(2, f"{self.prog}: error: {text} (see '{self.prog} --help')\n")


class _Stopped(BaseException):
    """A caught signal: unwinds the stack so that temporary files are removed on the way."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def _at_most(limit: int):
    """A whole number in [1, limit]; the limit is in the message."""

    def parse(text: str) -> int:
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"must be a whole number in [1, {limit:,}], got {text[:40]!r}") from None
        if not 1 <= v <= limit:
            got = v if v < 1e15 else text[:40]
            raise argparse.ArgumentTypeError(f"must be a whole number in [1, {limit:,}], got {got}")
        return v

    return parse


_trials = _at_most(MAX_TRIALS)
_renders = _at_most(MAX_RENDERS)
_frames = _at_most(MAX_FRAMES)


def _seed(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number >= 0, got {text!r}") from None
    if v < 0:  # numpy's SeedSequence takes non-negative integers only
        raise argparse.ArgumentTypeError(f"must be a whole number >= 0, got {v}")
    return v


def _finite(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text!r}") from None
    if not math.isfinite(v):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text}")
    return v


def _angle(text: str) -> float:
    v = _finite(text)
    if not -360 < v < 360:
        raise argparse.ArgumentTypeError(f"must be an angle in (-360, 360) degrees, got {text}")
    return v


def _probability(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number in (0, 1), got {text!r}") from None
    if not 0 < v < 1:
        raise argparse.ArgumentTypeError(f"must be a number in (0, 1), got {v}")
    return v


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every sub-command."""
    ap = _Parser(
        prog="thetabudget",
        description="Uncertainty budgets (JCGM 100 / JCGM 101) for camera-based pointer angles and gains.",
    )
    ap.add_argument("--version", action="version", version=f"thetabudget {__version__}")
    sub = ap.add_subparsers(dest="command", required=True)

    run = sub.add_parser("run", help="full budget of a rig file by both methods")
    run.add_argument("file", type=Path)
    run.add_argument("--trials", type=_trials, default=None,
                     help="fixed Monte Carlo trials (default: adaptive, JCGM 101 7.9)")
    run.add_argument("--seed", type=_seed, default=None, help="seed of the random generator")
    run.add_argument("--p", type=_probability, default=None,
                     help="coverage probability (default: the [goal] p, else 0.95)")
    run.add_argument("--json", action="store_true", help="write only JSON to stdout")
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    run.add_argument("--detail", action="store_true",
                     help="print each output's budget (components, sensitivities, source notes) after the summary")
    _add_output_options(run)

    chk = sub.add_parser("check", help="validate a rig file and list its input quantities")
    chk.add_argument("file", type=Path)

    new = sub.add_parser("new", help="write a commented starter rig file")
    new.add_argument("kind", choices=sorted(KINDS))
    new.add_argument("path", type=Path)

    sub.add_parser("selftest", help="run the published reference cases through the engine")

    pred = sub.add_parser("predict", help="voltage for an angle, or angle for a voltage, from a sweep file")
    pred.add_argument("file", type=Path)
    grp = pred.add_mutually_exclusive_group(required=True)
    grp.add_argument("--angle", type=_angle, help="wanted angle in degrees")
    grp.add_argument("--volts", type=_finite, help="commanded voltage")
    pred.add_argument("--trials", type=_trials, default=None)
    pred.add_argument("--seed", type=_seed, default=None)
    pred.add_argument("--p", type=_probability, default=None)
    pred.add_argument("--json", action="store_true")
    adv = sub.add_parser("advise", help="what to change in a rig, and by how much, to meet its [goal]")
    adv.add_argument("file", type=Path)
    adv.add_argument("--seed", type=_seed, default=None, help="seed of every full run (recorded)")
    adv.add_argument("--trials", type=_trials, default=None,
                     help="fixed Monte Carlo trials of the full runs (default: adaptive, as run)")
    adv.add_argument("--costs", type=Path, help='TOML file of "section.key" = cost of each change')
    adv.add_argument("--json", action="store_true", help="write only JSON to stdout")
    _add_camera_commands(sub)
    return ap


def _add_camera_commands(sub) -> None:
    """Choosing a camera, checking the locator model, and reading real frames."""
    cho = sub.add_parser("choose", help="rank candidate cameras and lenses for a rig before buying")
    cho.add_argument("file", type=Path)
    cho.add_argument("--all", action="store_true", help="show every candidate, not only the best 25")
    cho.add_argument("--verify", action="store_true",
                     help="run the top pick through the rig model (both methods), as `run` would")
    cho.add_argument("--seed", type=_seed, default=None, help="seed of the --verify run")
    cho.add_argument("--trials", type=_trials, default=None, help="fixed trials of the --verify run")
    cho.add_argument("--rig-out", type=Path, help="write the top pick's rig file (for `thetabudget run`)")
    cho.add_argument("--json", action="store_true")
    cho.add_argument("--xlsx", type=Path)
    cho.add_argument("--plots", type=Path)
    cho.add_argument("--force", action="store_true")

    ver = sub.add_parser("verify-locator", help="render synthetic target images and test the locator model")
    ver.add_argument("file", type=Path)
    ver.add_argument("--renders", type=_renders, default=2000)
    ver.add_argument("--seed", type=_seed, default=None)
    ver.add_argument("--json", action="store_true")

    fr = sub.add_parser("frames", help="locate a still target in many positions' frames and write one per-frame CSV")
    fr.add_argument("--position", nargs="+", action="append", metavar=("LABEL", "IMAGE"),
                    help="a position's label (Z, P1, ... as in the rig) and its frames in acquisition order; repeat")
    fr.add_argument("--roi", help="x,y,w,h in pixels for every position (default: find each position's target)")
    fr.add_argument("--window", type=int, default=None,
                    help="locator window, odd px, centred on the target found (default 9: give your rig's "
                         "[locator] window_px); with --roi, a window around the brightest pixel in it "
                         "(default: the whole ROI)")
    fr.add_argument("--method", choices=("com", "gauss", "threshold"), default="com")
    fr.add_argument("--out", type=Path, help="the CSV to write (one row per frame)")
    fr.add_argument("--force", action="store_true")
    fr.add_argument("--json", action="store_true")

    ren = sub.add_parser("render", help="write synthetic frames of a rig for its zero image and positions")
    ren.add_argument("file", type=Path)
    ren.add_argument("outdir", type=Path)
    ren.add_argument("--frames", type=_frames, default=None,
                     help="frames per position (default: [frames] per_reading, at least 4)")
    ren.add_argument("--seed", type=_seed, default=None)


def _add_output_options(p: argparse.ArgumentParser) -> None:
    """Report files; the writers arrive with the reports module."""
    p.add_argument("--xlsx", type=Path, help="write the budget workbook")
    p.add_argument("--md", type=Path, help="write the Markdown tables")
    p.add_argument("--csv", type=Path, help="write the budget rows as CSV")
    p.add_argument("--html", type=Path, help="write the HTML report to print and sign (one self-contained file)")
    p.add_argument("--plots", type=Path, help="write PNG plots into this folder")
    p.add_argument("--force", action="store_true", help="replace existing output files")


_MODULES = {
    "run": "run", "check": "check", "new": "new", "selftest": "selftest", "predict": "predict",
    "choose": "choose", "verify-locator": "verify", "frames": "frames", "advise": "advise", "render": "render",
}
"""Sub-command name -> module of :mod:`budget.commands` that carries it out."""


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    with contextlib.suppress(AttributeError, ValueError):  # a path or text the terminal cannot show
        sys.stdout.reconfigure(errors="backslashreplace")
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed its message (one line) or the help
        return exc.code if isinstance(exc.code, int) else 2
    import importlib

    module = importlib.import_module(f"budget.commands.{_MODULES[args.command]}")  # heavy imports only now
    with _unraisable_kept():
        return _execute(module, args)


def _execute(module, args: argparse.Namespace) -> int:
    keep_heap()  # the model's large temporaries reuse the heap instead of faulting in fresh pages (budget/heap.py)
    try:
        with _signals_raise(), _library_warnings_kept():
            return int(module.execute(args))
    except (BudgetInputError, BudgetComputationError) as exc:  # bad input, or input the computation cannot handle
        return _fail(str(exc))
    except RecursionError:
        return _fail("an input is nested too deeply to read.")
    except MemoryError:
        return _fail("not enough memory for this input; give fewer trials, frames or candidates.")
    except OSError as exc:  # a file that vanished or cannot be read midway
        if isinstance(exc, BrokenPipeError):  # output piped into a reader that stopped early (e.g. head)
            with contextlib.suppress(OSError):
                sys.stderr.close()
            return 0
        where = f" '{exc.filename}'" if exc.filename else ""
        return _fail(f"a file{where} could not be read or written ({exc.strerror or exc}).")
    except _Stopped as exc:
        return _fail(f"stopped by {signal.Signals(exc.signum).name}; unfinished files were removed.",
                     128 + exc.signum)
    except KeyboardInterrupt:
        return _fail("interrupted; unfinished files were removed.", 128 + signal.SIGINT)
    except Exception as exc:  # a defect of the tool: one line, the details with THETABUDGET_DEBUG=1
        if os.environ.get("THETABUDGET_DEBUG"):
            raise
        return _fail(f"internal error ({type(exc).__name__}: {' '.join(str(exc).split())[:300]}); "
                     "please report it with the input file (THETABUDGET_DEBUG=1 shows the details).")
    finally:
        from budget.commands.common import remove_pending

        remove_pending()  # temporary files a signal left behind (the writer removes its own on the way out)


@contextlib.contextmanager
def _unraisable_kept() -> Iterator[None]:
    """Errors a library raises while its objects are collected (a half-written workbook's XML stream on
    a full disk) are kept off stderr: the command's own one line says what failed."""
    import gc

    if os.environ.get("THETABUDGET_DEBUG"):
        yield
        return
    saved = sys.unraisablehook
    sys.unraisablehook = lambda u: last_warnings.append(f"ignored {type(u.exc_value).__name__}: {u.exc_value}")
    try:
        yield
    finally:
        gc.collect()
        sys.unraisablehook = saved


def _fail(message: str, code: int = 2) -> int:
    print(f"thetabudget: error: {' '.join(message.splitlines())}", file=sys.stderr)
    return code


@contextlib.contextmanager
def _signals_raise() -> Iterator[None]:
    """Turn SIGTERM and SIGHUP into an exception (SIGINT already is one) while a command runs."""
    def stop(signum, frame):
        for sig in (signal.SIGTERM, signal.SIGHUP, signal.SIGINT):  # a second signal must not cut the clean-up
            signal.signal(sig, signal.SIG_IGN)
        raise _Stopped(signum)

    saved = {}
    try:
        saved[signal.SIGINT] = signal.getsignal(signal.SIGINT)  # put back after the clean-up ignored it
        for sig in (signal.SIGTERM, signal.SIGHUP):
            saved[sig] = signal.signal(sig, stop)
    except ValueError:  # not the main thread: signals stay as they are
        pass
    try:
        yield
    finally:
        for sig, old in saved.items():
            if old is not None:
                signal.signal(sig, old)


@contextlib.contextmanager
def _library_warnings_kept() -> Iterator[None]:
    """Keep numpy's and other libraries' warnings off stderr (THETABUDGET_DEBUG=1 shows them); a warning of
    the tool's own that no report collected is one line on stderr."""
    if os.environ.get("THETABUDGET_DEBUG"):
        yield
        return
    last_warnings.clear()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    for w in caught:
        if issubclass(w.category, BudgetWarning):
            print(f"thetabudget: warning: {' '.join(str(w.message).split())}", file=sys.stderr)
        else:
            last_warnings.append(f"{w.category.__name__}: {w.message}")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
