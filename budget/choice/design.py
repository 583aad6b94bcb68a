"""Camera-independent geometry of a choice: the sensitivity of every output to every located point.

The measurement geometry (which points are located, how the pivot is found, which angles and
gain are reported) does not depend on the camera, so these sensitivities, in units of the pointer
radius, are computed once and every candidate scales them (:mod:`budget.choice.model`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from budget.inputs.choose_file import ChooseSpec

__all__ = ["PointGradients", "design_geometry"]


@dataclass(frozen=True)
class PointGradients:
    """Unit-radius sensitivities of the outputs to the located points (camera independent).

    ``grad[o, i]`` is ∂θ_o/∂p_i·R (rad per unit displacement over the radius, 2 axes); ``pivot[i]``
    marks points located only to find the pivot; ``tilt_r``/``tilt_ox``/``tilt_oy`` give
    ∂θ_o/∂(wx, wy) = (R/D)·tilt_r + (ox/D)·tilt_ox + (oy/D)·tilt_oy; ``timing[o]`` is the sum of
    squared weights of the per-reading timing errors; ``mark[o]`` is |∂θ_o/∂c|² for a pivot mark.
    """

    outputs: tuple[str, ...]
    grad: np.ndarray  # (O, n, 2)
    pivot: np.ndarray  # (n,) bool
    tilt_r: np.ndarray  # (O, 2)
    tilt_ox: np.ndarray  # (O, 2)
    tilt_oy: np.ndarray  # (O, 2)
    timing: np.ndarray  # (O,)
    mark: np.ndarray  # (O,)
    is_gain: np.ndarray  # (O,) bool
    gain_deg_per_v: float
    read_dial_rad: np.ndarray  # (n_read,) dial angles of the readings (from the dial's x axis)
    gain_weights: np.ndarray  # (n_read,) OLS slope weights w_j (zeros without a sweep)


def _dial_angles(spec: ChooseSpec) -> tuple[np.ndarray, np.ndarray, list[str]]:
    m, pv = spec.measurement, spec.pivot
    z0 = spec.scene["zero_direction_deg"]
    if "angles_deg" in m:
        reads = np.array(m["angles_deg"])
    else:
        reads = m["nominal_gain_deg_per_v"] * np.array(m["set_points_v"])
    ang = [z0, *(z0 + reads)]
    labels = ["Z", *(f"P{i + 1}" for i in range(reads.size))]
    if pv["method"] == "arc":
        mid = 0.5 * (min(0.0, *reads) + max(0.0, *reads))
        half = pv["arc_half_angle_deg"]
        ang += list(z0 + mid + np.linspace(-half, half, pv["arc_points"]))
        labels += [f"C{i + 1}" for i in range(pv["arc_points"])]
    elif pv["method"] == "mark":
        ang.append(0.0)
        labels.append("M")
    return np.radians(np.array(ang, dtype=float)), reads, labels


def design_geometry(spec: ChooseSpec) -> PointGradients:
    """Sensitivities of every output to every located point, for a unit pointer radius.

    Notes
    -----
    Angle θ = atan2(r0 × r, r0 · r) about the estimated pivot c (DESIGN.md section 2):
    ∂θ/∂p = v_P/R, ∂θ/∂z = −v_Z/R, ∂θ/∂c = (v_Z − v_P)/R with v the unit tangent [derived].
    A circle-fit pivot moves by δ(a, b, R) = (JᵀJ)⁻¹Jᵀ(u_i·δp_i), J_i = [cos φ_i, sin φ_i, 1],
    u_i the radial unit vector: the linearized geometric fit whose covariance is Chernov (2010,
    ch. 7) σ²(JᵀJ)⁻¹. A pivot mark is c itself. Gain: the OLS slope of θ_j on V_j is Σ w_j θ_j,
    w_j = (V_j − V̄)/Σ(V − V̄)² [derived]. Tilt by a small rotation vector w = (wx, wy, 0)
    lifts a dial point by z = R(wx sin φ − wy cos φ); the pinhole image then moves by
    (p + o)·z/D relative to the pivot's image [derived from the projection in
    :mod:`budget.rig.model`], which splits into the perspective ellipse-centre term
    ∝ (R/D)·β (Ahn et al. 1999, Photogramm. Rec. 16:485) and the off-axis pivot term ∝ β·tan γ
    with tan γ = |o|/D (DESIGN.md section 3, camera skew).
    """
    phi, reads, labels = _dial_angles(spec)
    n = phi.size
    u = np.stack([np.cos(phi), np.sin(phi)], axis=1)
    v = np.stack([-np.sin(phi), np.cos(phi)], axis=1)
    method = spec.pivot["method"]
    pivot = np.array([lab.startswith("C") or lab == "M" for lab in labels])
    circle = {"readings": np.arange(1 + reads.size), "arc": np.flatnonzero(pivot)}.get(method)
    dcdp = np.zeros((2, n, 2))  # ∂c_a/∂p_i (a, i, axis)
    if circle is not None:
        jac = np.stack([np.cos(phi[circle]), np.sin(phi[circle]), np.ones(circle.size)], axis=1)
        k = np.linalg.solve(jac.T @ jac, jac.T)  # (3, m)
        for a in range(2):
            dcdp[a, circle] = k[a][:, None] * u[circle]
    else:
        dcdp[0, n - 1] = (1.0, 0.0)
        dcdp[1, n - 1] = (0.0, 1.0)
    n_read = reads.size
    grad = np.zeros((n_read, n, 2))
    dcs = np.zeros((n_read, 2))
    for j in range(n_read):
        grad[j, 1 + j] += v[1 + j]
        grad[j, 0] -= v[0]
        dc = v[0] - v[1 + j]
        dcs[j] = dc
        grad[j] += np.einsum("a,aik->ik", dc, dcdp)
    outputs = [f"P{j + 1}" for j in range(n_read)]
    timing = np.ones(n_read)
    mark = np.sum(dcs**2, axis=1) if method == "mark" else np.zeros(n_read)
    is_gain = [False] * n_read
    k_nom = 0.0
    w = np.zeros(n_read)
    if "set_points_v" in spec.measurement:
        volts = np.array(spec.measurement["set_points_v"])
        w = (volts - volts.mean()) / np.sum((volts - volts.mean()) ** 2)
        grad = np.concatenate([grad, np.einsum("j,jik->ik", w, grad)[None]])
        timing = np.append(timing, np.sum(w**2))
        mark = np.append(mark, np.sum((w @ dcs) ** 2) if method == "mark" else 0.0)
        outputs.append("gain")
        is_gain.append(True)
        k_nom = spec.measurement["nominal_gain_deg_per_v"]
    target = ~np.array([lab == "M" for lab in labels])
    s, c = np.sin(phi) * target, np.cos(phi) * target
    tilt_r = np.stack([np.einsum("oik,ik,i->o", grad, u, s), -np.einsum("oik,ik,i->o", grad, u, c)], axis=1)
    tilt_ox = np.stack([grad[:, :, 0] @ s, -(grad[:, :, 0] @ c)], axis=1)
    tilt_oy = np.stack([grad[:, :, 1] @ s, -(grad[:, :, 1] @ c)], axis=1)
    return PointGradients(tuple(outputs), grad, pivot, tilt_r, tilt_ox, tilt_oy, timing, mark,
                          np.array(is_gain), float(k_nom), phi[1:1 + n_read].copy(), w)
