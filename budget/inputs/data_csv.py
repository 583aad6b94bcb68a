"""Data files of measured target positions: one row per located frame.

Columns ``position,frame,x_px,y_px``. Position ids are the rig's point labels: ``Z`` the zero
image, ``P1…Pn`` the readings, ``C1…Cm`` the pivot-arc points, ``M`` a pivot mark.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError
from budget.rig.description import RigDescription, point_labels

__all__ = ["COLUMNS", "read_positions_csv", "read_rig_data"]

COLUMNS = ("position", "frame", "x_px", "y_px")


def read_positions_csv(path: str | Path) -> dict[str, np.ndarray]:
    """Read located positions: ``{position id: array (n_frames, 2)}``.

    Raises
    ------
    BudgetInputError
        Missing file or columns, a non-numeric or NaN cell (naming the row).
    """
    p = Path(path)
    try:
        fh = open(p, newline="", encoding="utf-8")
    except OSError as exc:
        raise BudgetInputError(f"The data file '{p}' cannot be read: {exc.strerror}.") from None
    with fh:
        reader = csv.DictReader(fh)
        missing = [c for c in COLUMNS if c not in (reader.fieldnames or [])]
        if missing:
            raise BudgetInputError(f"The data file '{p}' lacks the column(s) {', '.join(missing)}; "
                                   f"it must have {', '.join(COLUMNS)}.")
        out: dict[str, list[tuple[float, float]]] = {}
        for row_no, row in enumerate(reader, start=2):
            vals = []
            for col in ("x_px", "y_px"):
                try:
                    v = float(row[col])
                except (TypeError, ValueError):
                    raise BudgetInputError(
                        f"Row {row_no} of '{p}': the '{col}' cell must be a number. Got {row[col]!r}."
                    ) from None
                if not math.isfinite(v):
                    raise BudgetInputError(f"Row {row_no} of '{p}': the '{col}' cell is {v}; it must be finite.")
                vals.append(v)
            pid = (row["position"] or "").strip()
            if not pid:
                raise BudgetInputError(f"Row {row_no} of '{p}': the 'position' cell is empty.")
            out.setdefault(pid, []).append((vals[0], vals[1]))
    return {k: np.array(v) for k, v in out.items()}


def read_rig_data(rig: RigDescription) -> dict[str, np.ndarray] | None:
    """The measured positions a rig file names in ``[data]``: ``{label: (n_frames, 2)}``, or None.

    Raises
    ------
    BudgetInputError
        A file that cannot be read, a label the rig needs that no file gives, or a position
        with fewer than 2 frames.
    """
    if rig.data is None or rig.data.readings_csv is None:
        return None
    data = read_positions_csv(rig.data.readings_csv)
    if rig.data.pivot_csv:
        data.update(read_positions_csv(rig.data.pivot_csv))
    needed = [lab for lab in point_labels(rig) if lab not in data]
    if needed:
        raise BudgetInputError(
            f"The data files lack the position(s) {', '.join(needed)}; the rig needs "
            f"{', '.join(point_labels(rig))}."
        )
    for lab, xy in data.items():
        if len(xy) < 2:
            raise BudgetInputError(f"Position '{lab}' has {len(xy)} frame; Type A needs at least 2.")
    return data
