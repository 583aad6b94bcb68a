"""Frames of many positions in one call: locate each position's frames, check that they belong
together, and write one per-frame CSV that ``run`` reads (:mod:`budget.inputs.data_csv`).

Coordinates are image coordinates (x right, y down, px, origin at the centre of the top-left
pixel; :mod:`budget.imaging.frames`).
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from budget.errors import BudgetInputError, field_error
from budget.imaging.frames import FramesResult, check_position_label, locate_frames
from budget.propagation.type_a import MIN_OBSERVATIONS

__all__ = ["PositionFrames", "locate_positions", "frames_csv_text", "CSV_COLUMNS"]

CSV_COLUMNS = ("position", "frame", "x_px", "y_px", "image", "sha256")


@dataclass(frozen=True)
class PositionFrames:
    """One position's label and its located frames."""

    label: str
    result: FramesResult


def locate_positions(positions: Sequence[tuple[str, Sequence[str | os.PathLike]]], *,
                     roi: tuple[int, int, int, int] | None = None, method: str = "com",
                     window_px: int | None = 9) -> tuple[PositionFrames, ...]:
    """Locate the target in every position's frames.

    Parameters
    ----------
    positions : sequence of (label, image files)
        Each position's label (``Z``, ``P1``, … as in the rig) and its frames in acquisition order.
    roi : (x, y, w, h), optional
        One region of interest for every position; None finds each position's target itself
        (:func:`budget.imaging.frames.find_target_roi`) and centres a ``window_px`` window on it.
    method : {"com", "gauss", "threshold"}
        The locator (:func:`budget.imaging.frames.locate_frames`).
    window_px : int, optional
        Side of the locator window, odd; required without ``roi``. With ``roi``: a window around
        the brightest pixel inside it, or None for the whole ROI.

    Raises
    ------
    BudgetInputError
        One line naming the position: a bad or repeated label, fewer than 4 frames (the mean's
        t distribution would have no variance, JCGM 101 6.4.9), a file given twice, frames of
        mixed size or bit depth (within a position or across positions), no target found.
    """
    seen: dict[str, str] = {}
    out = []
    for label, paths in positions:
        check_position_label(label, "--position")
        if any(p.label == label for p in out):
            raise BudgetInputError(f"Position '{label}' is given twice; give each position's frames once.")
        paths = [str(p) for p in paths]
        if len(paths) < MIN_OBSERVATIONS:
            raise BudgetInputError(
                f"Position '{label}' has {len(paths)} frame{'s' if len(paths) != 1 else ''}; at least "
                f"{MIN_OBSERVATIONS} are needed: the mean of n frames has n − 1 degrees of freedom, and a t "
                "distribution with ν <= 2 has no variance (JCGM 101 6.4.9).")
        for p in paths:
            key = os.path.realpath(p)
            if key in seen:
                raise BudgetInputError(f"Position '{label}': the file '{p}' is also given for position '{seen[key]}'.")
            seen[key] = label
        try:
            res = locate_frames(paths, roi=roi if roi is not None else "auto", method=method, window_px=window_px)
        except BudgetInputError as exc:
            raise BudgetInputError(f"Position '{label}': {exc}") from None
        if out and res.image_kind != out[0].result.image_kind:
            raise BudgetInputError(f"Position '{label}': its frames are {res.image_kind}, those of position "
                                   f"'{out[0].label}' {out[0].result.image_kind}; frames of mixed size or bit depth "
                                   "are not one camera setting.")
        out.append(PositionFrames(label, res))
    if not out:
        raise field_error("--position", "at least one position with its frames", "none")
    return tuple(out)


def _relative(path: str, folder: Path) -> str:
    """The image's path as the CSV records it: relative to the CSV's folder when possible."""
    try:
        return os.path.relpath(os.path.abspath(path), os.path.abspath(folder))
    except ValueError:  # another drive
        return os.path.abspath(path)


def frames_csv_text(sets: Sequence[PositionFrames], sha256: dict[str, str], folder: str | Path) -> str:
    """Every position's per-frame rows as CSV text: ``position,frame,x_px,y_px,image,sha256``.

    Notes
    -----
    Frames are numbered from 1 in the order given; positions are written with 6 decimals
    (1e-6 px); ``image`` is relative to ``folder`` (the CSV's folder) and ``sha256`` is the
    image file's (``sha256`` maps each path given to it). Writing the file is the caller's job
    (one atomic writer: :func:`budget.report.safe_write.atomic_write`).
    """
    lines = [",".join(CSV_COLUMNS)]
    for ps in sets:
        check_position_label(ps.label)
        r = ps.result
        for k, (x, y, p) in enumerate(zip(r.x_px, r.y_px, r.paths, strict=True), start=1):
            img = _relative(p, Path(folder))
            if img.startswith(("=", "+", "-", "@", "\t")):  # the same file, inert in a spreadsheet (CWE-1236)
                img = os.path.join(".", img)
            if any(c in img for c in ',"\r\n'):
                raise field_error("image", "a file name without commas, quotes or line breaks", img, "frames")
            lines.append(f"{ps.label},{k},{x:.6f},{y:.6f},{img},{sha256[p]}")
    return "\n".join(lines) + "\n"
