"""Data files of measured target positions: one row per located frame.

Columns ``position,frame,x_px,y_px`` and, as ``thetabudget frames`` writes them, ``image,sha256``
(the frame's image file, relative to the data file's folder, and its SHA-256). Positions are image
coordinates: x to the right, y down, in px, with the origin at the centre of the top-left pixel.
Position ids are the rig's point labels: ``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm``
the pivot-arc points, ``M`` a pivot mark. ``frame`` numbers give the acquisition order.
"""

from __future__ import annotations

import csv
import hashlib
import math
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError
from budget.rig.description import MeasuredData, RigDescription, point_labels

__all__ = ["COLUMNS", "OPTIONAL_COLUMNS", "read_positions_csv", "read_rig_data", "sha256_of"]

COLUMNS = ("position", "frame", "x_px", "y_px")
OPTIONAL_COLUMNS = ("image", "sha256")


def sha256_of(path: str | Path) -> str:
    """SHA-256 of a file's bytes, as hex."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _number(row: dict, col: str, row_no: int, p: Path) -> float:
    try:
        v = float(row[col])
    except (TypeError, ValueError):
        raise BudgetInputError(f"Row {row_no} of '{p}': the '{col}' cell must be a number. Got {row[col]!r}.") from None
    if not math.isfinite(v):
        raise BudgetInputError(f"Row {row_no} of '{p}': the '{col}' cell is {v}; it must be finite.")
    return v


def read_positions_csv(path: str | Path) -> tuple[dict[str, np.ndarray], dict[str, tuple[tuple[str, str], ...]]]:
    """Read located positions in frame order: ``({position: (n, 2)}, {position: ((image, sha256), …)})``.

    Raises
    ------
    BudgetInputError
        Missing file or columns, a non-numeric or NaN cell (naming the row), a frame number that is
        not a whole number or appears twice for one position.
    """
    p = Path(path)
    try:
        fh = open(p, newline="", encoding="utf-8-sig")
    except OSError as exc:
        raise BudgetInputError(f"The data file '{p}' cannot be read: {exc.strerror}.") from None
    rows: dict[str, list[tuple[float, float, float, str, str]]] = {}
    with fh:
        reader = csv.DictReader(fh)
        missing = [c for c in COLUMNS if c not in (reader.fieldnames or [])]
        if missing:
            raise BudgetInputError(f"The data file '{p}' lacks the column(s) {', '.join(missing)}; "
                                   f"it must have {', '.join(COLUMNS)}.")
        for row_no, row in enumerate(reader, start=2):
            pid = (row["position"] or "").strip()
            if not pid:
                raise BudgetInputError(f"Row {row_no} of '{p}': the 'position' cell is empty.")
            frame = _number(row, "frame", row_no, p)
            if not frame.is_integer():
                raise BudgetInputError(f"Row {row_no} of '{p}': the 'frame' cell must be a whole number. "
                                       f"Got {row['frame']!r}.")
            x, y = _number(row, "x_px", row_no, p), _number(row, "y_px", row_no, p)
            if any(f == frame for f, *_ in rows.get(pid, [])):
                raise BudgetInputError(f"Row {row_no} of '{p}': position '{pid}' has frame {frame:g} twice.")
            rows.setdefault(pid, []).append((frame, x, y, (row.get("image") or "").strip(),
                                             (row.get("sha256") or "").strip().lower()))
    points, images = {}, {}
    for pid, r in rows.items():
        r.sort(key=lambda t: t[0])
        points[pid] = np.array([(x, y) for _, x, y, _, _ in r])
        images[pid] = tuple((img, sha) for *_, img, sha in r)
    return points, images


def _image_files(csv_path: Path, images: dict[str, tuple[tuple[str, str], ...]]) -> list[tuple[str, str, str, str]]:
    """Every image named in a data file, with its SHA-256; a changed image is an input error."""
    out: dict[str, tuple[str, str, str, str]] = {}
    for pid, frames in images.items():
        for img, recorded in frames:
            if not img or img in out:
                continue
            f = Path(img) if Path(img).is_absolute() else csv_path.parent / img
            if f.is_file():
                actual = sha256_of(f)
                if recorded and actual != recorded:
                    raise BudgetInputError(
                        f"Position '{pid}': the image '{img}' has SHA-256 {actual[:12]}…, not the {recorded[:12]}… "
                        f"recorded in '{csv_path}' when it was located; the file changed since. Locate it again "
                        "with thetabudget frames.")
                out[img] = (img, actual, "image", "")
            else:
                out[img] = (img, recorded, "image", "not found beside the data file; SHA-256 as recorded")
    return list(out.values())


def read_rig_data(rig: RigDescription) -> MeasuredData | None:
    """The measured positions a rig file names in ``[data]``, or None (design mode).

    Raises
    ------
    BudgetInputError
        A file that cannot be read; a label the rig needs that no file gives, or one it does not
        have; an image changed since it was located. Each message names the position. (Too few
        frames at a position is refused by :func:`budget.rig.evaluation.load_evaluation`.)
    """
    if rig.data is None or rig.data.readings_csv is None:
        return None
    paths = [Path(rig.data.readings_csv)] + ([Path(rig.data.pivot_csv)] if rig.data.pivot_csv else [])
    points: dict[str, np.ndarray] = {}
    images: dict[str, tuple[str, ...]] = {}
    files: list[tuple[str, str, str, str]] = []
    for path in paths:
        pts, imgs = read_positions_csv(path)
        for pid in pts:
            if pid in points:
                raise BudgetInputError(f"Position '{pid}' is in more than one data file ('{path}' and another); "
                                       "give each position once.")
        points.update(pts)
        images.update({pid: tuple(img for img, _ in frames) for pid, frames in imgs.items()})
        files.append((str(path), sha256_of(path), "data", ""))
        files += _image_files(path, imgs)
    labels = point_labels(rig)
    needed = [lab for lab in labels if lab not in points]
    if needed:
        raise BudgetInputError(
            f"The data files lack the position(s) {', '.join(needed)}; the rig needs {', '.join(labels)}."
        )
    extra = [pid for pid in points if pid not in labels]
    if extra:
        raise BudgetInputError(
            f"The data files give the position(s) {', '.join(extra)}, which the rig does not have; "
            f"it has {', '.join(labels)} (Z the zero image, P1… the readings, C… pivot-arc points, M a mark)."
        )
    return MeasuredData(points={lab: points[lab] for lab in labels}, images={lab: images[lab] for lab in labels},
                        files=tuple(files))
