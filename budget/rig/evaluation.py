"""Evaluation mode: measured target positions give Type A scatter and the estimates.

The positions come from :func:`budget.inputs.data_csv.read_rig_data`, keyed by the rig's point
labels: ``Z`` the zero image, ``P1…Pn`` the readings, ``C1…Cm`` the pivot-arc points, ``M`` a
pivot mark. Nothing here reads a file.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from budget.errors import BudgetInputError
from budget.rig.description import Positions, RigDescription, Sweep, point_labels
from budget.rig.geometry import reading_angles_deg

__all__ = ["type_a_from_data", "load_evaluation", "Evaluation", "measured_angles_deg"]

def type_a_from_data(data: dict[str, np.ndarray] | None) -> dict[str, tuple[float, float, int]] | None:
    """Per point: (s_x/√n, s_y/√n, n) from the repeated frames (JCGM 100 4.2.3), or None.

    Notes
    -----
    The mean of n frames has standard uncertainty s/√n with n − 1 degrees of
    freedom; Monte Carlo samples the scaled and shifted t distribution (JCGM 101 6.4.9).
    """
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


def load_evaluation(rig: RigDescription, data: dict[str, np.ndarray] | None) -> Evaluation:
    """Apply the rig's measured data, if any (design mode passes the rig through unchanged).

    Positions mode: the reading angles become those measured from the mean positions,
    so the budget is evaluated where the pointer really was. Sweep mode: the set
    points stay, the nominal gain becomes the measured OLS slope, and the measured
    angles go to the consistency check of the fit. ``data`` is what
    :func:`budget.inputs.data_csv.read_rig_data` read for this rig (None in design mode).
    """
    if data is None:
        return Evaluation(rig, None, None)
    type_a = type_a_from_data(data)
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
    labels = point_labels(rig)
    img_x = np.array([[mean[k][0]] for k in labels])  # (n_points, 1): one trial
    img_y = np.array([[mean[k][1]] for k in labels])
    return reading_angles_deg(rig, img_x, img_y)[:, 0]
