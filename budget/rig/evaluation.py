"""Evaluation mode: measured target positions give Type A scatter and the estimates.

The CSV has one row per frame: ``position,frame,x_px,y_px``. Position ids are the
rig's point labels: ``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm`` the
pivot-arc points (in ``pivot_csv`` or the same file), ``M`` a pivot mark.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError
from budget.rig.description import Positions, RigDescription, Sweep
from budget.rig.geometry import point_labels
from budget.rig.pivot import fit_circle

__all__ = ["read_positions_csv", "type_a_from_data", "load_evaluation", "Evaluation", "measured_angles_deg"]

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


@dataclass(frozen=True)
class Evaluation:
    """The rig as measured: reading angles from the data, Type A scatter, the raw angles."""

    rig: RigDescription
    type_a: dict[str, tuple[float, float, int]] | None
    measured_deg: tuple[float, ...] | None


def load_evaluation(rig: RigDescription) -> Evaluation:
    """Apply the rig's measured data, if any (design mode passes the rig through unchanged).

    Positions mode: the reading angles become those measured from the mean positions,
    so the budget is evaluated where the pointer really was. Sweep mode: the set
    points stay, the nominal gain becomes the measured OLS slope, and the measured
    angles go to the consistency check of the fit.
    """
    data = _load(rig)
    if data is None:
        return Evaluation(rig, None, None)
    type_a = type_a_from_data(rig)
    angles = tuple(float(a) for a in measured_angles_deg(rig, data))
    if rig.sweep is not None:
        x = np.array(rig.sweep.set_points_v)
        slope = float(np.polyfit(x, np.array(angles), 1)[0])
        new = replace(rig, sweep=Sweep(set_points_v=rig.sweep.set_points_v, nominal_gain_deg_per_v=slope))
    else:
        new = replace(rig, positions=Positions(angles_deg=angles))
    return Evaluation(new, type_a, angles)


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
    for k, nominal in zip(reads, rig.nominal_angles_deg, strict=True):
        r = mean[k] - c
        a = math.degrees(math.atan2(r0[0] * r[1] - r0[1] * r[0], r0[0] * r[0] + r0[1] * r[1]))
        out.append(nominal + (a - nominal + 180.0) % 360.0 - 180.0)  # the branch nearest the file's angle
    return np.array(out)
