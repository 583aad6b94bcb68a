"""Evaluation mode: measured target positions give Type A scatter and the estimates.

The CSV has one row per frame: ``position,frame,x_px,y_px``. Position ids are the
rig's point labels: ``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm`` the
pivot-arc points (in ``pivot_csv`` or the same file), ``M`` a pivot mark.
"""

from __future__ import annotations

import csv
import math
from dataclasses import replace
from pathlib import Path

import numpy as np

from budget.camera.circle import fit_circle
from budget.camera.components import point_labels
from budget.camera.description import Positions, RigDescription
from budget.errors import BudgetInputError

__all__ = ["read_positions_csv", "type_a_from_data", "apply_data"]

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


def _load(rig: RigDescription) -> dict[str, np.ndarray] | None:
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


def type_a_from_data(rig: RigDescription) -> dict[str, tuple[float, float, int]] | None:
    """Per point: (s_x/√n, s_y/√n, n) from the repeated frames (JCGM 100 4.2.3), or None.

    Notes
    -----
    The mean of n frames has standard uncertainty s/√n with n − 1 degrees of
    freedom; Monte Carlo samples the scaled and shifted t distribution (JCGM 101 6.4.9).
    """
    data = _load(rig)
    if data is None:
        return None
    out = {}
    for lab, xy in data.items():
        n = len(xy)
        s = xy.std(axis=0, ddof=1) / math.sqrt(n)
        if np.any(s <= 0):
            raise BudgetInputError(
                f"Position '{lab}': the {n} frames have zero scatter in x or y; the locator output is "
                "quantized or repeated. Use a sub-pixel locator or describe the noise in [target]."
            )
        out[lab] = (float(s[0]), float(s[1]), n)
    return out


def apply_data(rig: RigDescription) -> RigDescription:
    """The rig with its reading angles replaced by those measured from the mean positions.

    The pivot is found as the rig says (circle through the zero image and readings,
    a separate arc, or the mark) and each angle is atan2 about it relative to the
    zero image. Positions mode only; a sweep keeps its set points and the measured
    angles go to the gain fit.
    """
    data = _load(rig)
    if data is None:
        return rig
    angles = measured_angles_deg(rig, data)
    if rig.sweep is not None:
        return rig
    return replace(rig, positions=Positions(angles_deg=tuple(float(a) for a in angles)))


def measured_angles_deg(rig: RigDescription, data: dict[str, np.ndarray]) -> np.ndarray:
    """Angles of the readings about the pivot, relative to the zero image, from mean positions."""
    mean = {k: v.mean(axis=0) for k, v in data.items()}
    n = len(rig.nominal_angles_deg)
    reads = [f"P{i + 1}" for i in range(n)]
    if rig.pivot.method == "mark":
        c = mean["M"]
    else:
        labs = ["Z", *reads] if rig.pivot.method == "readings" else \
            [f"C{i + 1}" for i in range(rig.pivot.arc_points)]
        xs = np.array([mean[k][0] for k in labs])
        ys = np.array([mean[k][1] for k in labs])
        xc, yc, _ = fit_circle(xs, ys)
        c = np.array([float(xc), float(yc)])
    r0 = mean["Z"] - c
    out = []
    for k in reads:
        r = mean[k] - c
        out.append(math.degrees(math.atan2(r0[0] * r[1] - r0[1] * r[0], r0[0] * r[0] + r0[1] * r[1])))
    return np.array(out)
