"""The candidate cameras of a ``choose`` file: a CSV file, one camera per row, read with one-line errors.

UTF-8 (a byte-order mark, as spreadsheets save "CSV UTF-8", is skipped); lines starting with ``#`` are
comments; columns :data:`CAMERA_COLUMNS` in any order. Every cell is checked against the rig file's
ranges, names may not hold control characters, and the file may not list more than
:data:`MAX_CAMERAS` cameras.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError
from budget.inputs.schema import MAX_INPUT_BYTES, check_text

__all__ = ["CAMERA_COLUMNS", "CameraTable", "MAX_CAMERAS", "read_cameras_csv"]

MAX_CAMERAS = 10_000
"""Most rows a cameras file may hold."""
CAMERA_COLUMNS = ("name", "pixels_x", "pixels_y", "pitch_um", "bit_depth", "read_noise_e", "full_well_e",
                  "max_frame_rate_hz", "shutter", "price")



@dataclass(frozen=True)
class CameraTable:
    """Candidate cameras, one entry per CSV row (arrays of equal length)."""

    name: tuple[str, ...]
    pixels_x: np.ndarray
    pixels_y: np.ndarray
    pitch_um: np.ndarray
    bit_depth: np.ndarray
    read_noise_e: np.ndarray
    full_well_e: np.ndarray
    max_frame_rate_hz: np.ndarray
    rolling: np.ndarray  # bool
    price: np.ndarray
    path: str = ""


_CSV_CHECKS = {
    "pixels_x": ("an integer in [16, 100000]", lambda v: v == int(v) and 16 <= v <= 100_000),
    "pixels_y": ("an integer in [16, 100000]", lambda v: v == int(v) and 16 <= v <= 100_000),
    "pitch_um": ("a number in (0, 100]", lambda v: 0 < v <= 100),
    "bit_depth": ("an integer in [1, 32]", lambda v: v == int(v) and 1 <= v <= 32),
    "read_noise_e": ("a number >= 0 and <= 10000", lambda v: 0 <= v <= 1e4),  # the rig file's limits
    "full_well_e": ("a number in (0, 1e8]", lambda v: 0 < v <= 1e8),
    "max_frame_rate_hz": ("a number > 0", lambda v: v > 0),
    "price": ("a number >= 0", lambda v: v >= 0),
}


def read_cameras_csv(path: str | Path) -> CameraTable:
    """Read the candidate cameras.

    Parameters
    ----------
    path : str or Path
        CSV with the header :data:`CAMERA_COLUMNS` (any order, extra columns refused).

    Returns
    -------
    CameraTable

    Raises
    ------
    BudgetInputError
        A missing file or column, or a bad cell (naming the row, the column and the value).
    """
    p = Path(path)
    try:
        size = p.stat().st_size
        data = p.read_bytes() if size <= MAX_INPUT_BYTES else b""
        text = data.decode("utf-8-sig")  # spreadsheets save "CSV UTF-8" with a byte-order mark
    except UnicodeDecodeError as exc:
        raise BudgetInputError(f"The cameras file '{p}' is not UTF-8 text (byte {exc.start}); "
                               "save it as UTF-8.") from None
    except (OSError, ValueError) as exc:
        why = getattr(exc, "strerror", None) or exc
        raise BudgetInputError(f"The cameras file '{p}' cannot be read: {why}.") from None
    if size > MAX_INPUT_BYTES:
        raise BudgetInputError(f"The cameras file '{p}' has {size:,} bytes; at most {MAX_INPUT_BYTES:,} are read.")
    try:
        return _camera_table(text, p)
    except csv.Error as exc:
        raise BudgetInputError(f"The cameras file '{p}' is not a readable CSV file: {exc}.") from None


def _camera_table(text: str, p: Path) -> CameraTable:
    cols: dict[str, list] = {c: [] for c in CAMERA_COLUMNS}
    with io.StringIO(text, newline="") as fh:
        reader = csv.DictReader(line for line in fh if not line.lstrip().startswith("#"))
        header = reader.fieldnames or []
        missing = [c for c in CAMERA_COLUMNS if c not in header]
        extra = [c for c in header if c not in CAMERA_COLUMNS]
        if missing or extra:
            what = f"lacks {', '.join(missing)}" if missing else f"has unknown column(s) {', '.join(extra)}"
            raise BudgetInputError(f"The cameras file '{p}' {what}; its columns must be {', '.join(CAMERA_COLUMNS)}.")
        for row_no, row in enumerate(reader, start=2):
            if row_no - 1 > MAX_CAMERAS:
                raise BudgetInputError(f"The cameras file '{p}' lists more than {MAX_CAMERAS:,} cameras.")
            name = (row["name"] or "").strip()
            if not name:
                raise BudgetInputError(f"Row {row_no} of '{p}': the 'name' cell is empty.")
            check_text(name, "name", f"row {row_no} of '{p}'")
            cols["name"].append(name)
            shutter = (row["shutter"] or "").strip()
            if shutter not in ("global", "rolling"):
                raise BudgetInputError(f"Row {row_no} of '{p}': the 'shutter' cell must be 'global' or 'rolling'. "
                                       f"Got {shutter!r} instead.")
            cols["shutter"].append(shutter == "rolling")
            for col, (allowed, ok) in _CSV_CHECKS.items():
                try:
                    v = float(row[col])
                except (TypeError, ValueError):
                    v = math.nan
                if not math.isfinite(v) or not ok(v):
                    raise BudgetInputError(f"Row {row_no} of '{p}': the '{col}' cell must be {allowed}. "
                                           f"Got {row[col]!r} instead.")
                cols[col].append(v)
    if not cols["name"]:
        raise BudgetInputError(f"The cameras file '{p}' has no camera rows.")
    if len(set(cols["name"])) != len(cols["name"]):
        dup = next(n for n in cols["name"] if cols["name"].count(n) > 1)
        raise BudgetInputError(f"The cameras file '{p}' lists the camera name {dup!r} twice; names must be unique.")
    arr = {c: np.array(cols[c], dtype=float) for c in _CSV_CHECKS}
    return CameraTable(name=tuple(cols["name"]), rolling=np.array(cols["shutter"], dtype=bool), path=str(p), **arr)
