"""Presenting a :class:`~budget.choice.rank.Choice`: text table, plain dict (JSON), workbook sheet, plot.

Nothing here computes an uncertainty; it formats what :mod:`budget.choice.model` predicted.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

from budget.choice.model import COMPONENTS
from budget.choice.rank import Choice
from budget.report.safe_write import atomic_write

__all__ = ["choice_rows", "choice_to_dict", "render_choice", "write_choice_plot", "write_choice_xlsx"]


def _f(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def choice_rows(ch: Choice) -> list[dict]:
    """One plain dict per candidate, best first (finite floats or None, no NaN)."""
    p, spec = ch.pred, ch.spec
    rows = []
    for rank_no, i in enumerate(ch.order, start=1):
        row = {
            "rank": rank_no, "camera": spec.cameras.name[ch.camera_index[i]], "lens": ch.lens_label[i],
            "price": _f(ch.price[i]), "meets": bool(p.meets[i]), "limiting": p.limiting[i],
            "margin_pct": _f(100 * p.margin[i]), "focal_length_mm": _f(p.focal_length_mm[i]),
            "working_distance_mm": _f(p.working_distance_mm[i]), "magnification": _f(p.magnification[i]),
            "mm_per_px": _f(p.mm_per_px[i]), "radius_px": _f(p.radius_px[i]),
            "px_across_field": _f(p.px_across_field[i]), "fits": bool(p.fits[i]),
            "airy_radius_px": _f(p.airy_radius_px[i]), "sigma_px": _f(p.sigma_px[i]),
            "window_px": int(p.window_px[i]), "exposure_ms": _f(p.exposure_ms[i]), "signal_e": _f(p.signal_e[i]),
            "locking_px": _f(p.locking_px[i]), "noise_px_per_frame": _f(p.noise_px[i]),
            "dof_mm": _f(p.dof_mm[i]), "dof_ok": bool(p.dof_ok[i]), "blur_px": _f(p.blur_px[i]),
            "frame_rate_ok": bool(p.frame_rate_ok[i]),
            "u_angle_deg": _f(p.u_angle_deg[i]), "U_angle_deg": _f(p.U_angle_deg[i]),
            "angle_components_deg": {c: _f(math.sqrt(p.variances_angle[k, i])) for k, c in enumerate(COMPONENTS)},
        }
        if p.u_gain_pct is not None:
            row["u_gain_pct"] = _f(p.u_gain_pct[i])
            row["U_gain_pct"] = _f(p.U_gain_pct[i])
        rows.append(row)
    return rows


def choice_to_dict(ch: Choice, input_path: str = "") -> dict:
    """Plain-dict summary for JSON."""
    spec, p = ch.spec, ch.pred
    least = None
    if ch.least is not None:
        least = {k: (_f(v) if isinstance(v, float) else v) for k, v in vars(ch.least).items()}
    return {
        "title": spec.title, "input": input_path, "cameras_csv": spec.cameras.path,
        "goal": {k: v for k, v in spec.goal.items()}, "coverage_factor": p.k, "candidates": len(ch.order),
        "meeting": int(p.meets.sum()), "dof_need_mm": _f(p.dof_need_mm),
        "frame_rate_needed_hz": _f(p.frame_rate_needed_hz), "least_pixels": least, "ranking": choice_rows(ch),
        "method": "JCGM 100 linear propagation with closed-form first-order sensitivities, all candidates at once",
    }


def render_choice(ch: Choice, top: int = 25, width: int = 170) -> str:
    """The ranking as a text table (rich), with the answers of the continuous model."""
    from rich.console import Console
    from rich.table import Table

    spec, p = ch.spec, ch.pred
    gain = p.u_gain_pct is not None
    table = Table(title=f"{spec.title}: {len(ch.order)} camera × lens candidates, best first")
    cols = ["#", "camera", "lens", "price", "D mm", "mm/px", "R px", "σ px", "lock px", "noise px",
            "U angle °"] + (["U gain %"] if gain else []) + ["meets", "limited by"]
    for col in cols:
        table.add_column(col, justify="left" if col in ("camera", "lens", "limited by", "meets") else "right")
    for row in choice_rows(ch)[:top]:
        cells = [str(row["rank"]), row["camera"], row["lens"], f"{row['price']:g}",
                 f"{row['working_distance_mm']:.0f}", f"{row['mm_per_px']:.4f}", f"{row['radius_px']:.0f}",
                 f"{row['sigma_px']:.2f}", f"{row['locking_px']:.2g}", f"{row['noise_px_per_frame']:.2g}",
                 f"{row['U_angle_deg']:.3g}"] + ([f"{row['U_gain_pct']:.3g}"] if gain else []) + \
            ["yes" if row["meets"] else "no", row["limiting"]]
        table.add_row(*cells)
    # markup off: square brackets in a title or a camera name are the user's text, not style tags
    con = Console(width=width, record=True, file=open(os.devnull, "w"), markup=False)  # noqa: SIM115
    con.print(table)
    lines = [con.export_text()]
    goal = ", ".join(f"{k} = {v:g}" for k, v in spec.goal.items() if k in ("angle_U_deg", "gain_U_pct", "p"))
    lines.append(f"goal: {goal} (k = {p.k:.3f}); {int(p.meets.sum())} of {len(ch.order)} candidates meet it.")
    lines.append(f"depth of field needed: {p.dof_need_mm:.3g} mm (dial tilt and target height).")
    if p.frame_rate_needed_hz > 0:
        lines.append(f"moving pointer: at least {p.frame_rate_needed_hz:.3g} frames/s for the angle step, "
                     f"exposure limited to keep the arc blur below {spec.motion['max_blur_px']:g} px.")
    if ch.least is not None:
        lp = ch.least
        if lp.pixels is None:
            lines.append(f"least pixels across the field: {lp.note}.")
        else:
            lines.append(f"least pixels across the field that meet the goal: {lp.pixels:.0f} "
                         f"(pitch {lp.pitch_um:.3g} µm on a {spec.pixel_model['sensor_width_mm']:g} mm sensor; "
                         f"{lp.note}).")
    lines.append("Tilt enters to first order only (off-axis pivot and perspective); the on-axis β²/4 term is "
                 "second order: run the chosen rig with `thetabudget run` for the Monte Carlo check.")
    return "\n".join(lines) + "\n"


def write_choice_xlsx(ch: Choice, path: Path, *, force: bool = False) -> Path:
    """One sheet 'choice' with every candidate, best first (through the one atomic writer)."""
    from openpyxl import Workbook

    rows = choice_rows(ch)
    wb = Workbook()
    ws = wb.active
    ws.title = "choice"
    ws.append([ch.spec.title])
    keys = [k for k in rows[0] if k != "angle_components_deg"] + [f"u {c} (°)" for c in COMPONENTS]
    ws.append(keys)
    for r in rows:
        ws.append([r[k] for k in keys[:-len(COMPONENTS)]] + [r["angle_components_deg"][c] for c in COMPONENTS])
    return atomic_write(Path(path), lambda tmp: wb.save(tmp), force=force)


def write_choice_plot(ch: Choice, path: Path, *, force: bool = False) -> Path:
    """PNG of U against pixels across the field: the continuous model and the candidates."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    spec, p = ch.spec, ch.pred
    is_angle = "angle_U_deg" in spec.goal
    u = p.U_angle_deg if is_angle else p.U_gain_pct
    goal = spec.goal["angle_U_deg"] if is_angle else spec.goal["gain_U_pct"]
    fig, ax = plt.subplots(figsize=(7, 4.5))
    if ch.curve is not None:
        ax.plot(ch.curve[0], ch.curve[1], "-", color="0.3", label="continuous sensor model")
    ax.scatter(p.px_across_field[p.meets], u[p.meets], marker="o", label="candidate, meets")
    ax.scatter(p.px_across_field[~p.meets], u[~p.meets], marker="x", label="candidate, does not meet")
    ax.axhline(goal, linestyle="--", color="k", linewidth=1, label="goal")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("pixels across the field")
    ax.set_ylabel("U angle (°)" if is_angle else "U gain (%)")
    ax.set_title(spec.title, fontsize=9)
    ax.legend(fontsize=8)
    fig.tight_layout()
    try:
        return atomic_write(Path(path), lambda tmp: fig.savefig(tmp, format="png", dpi=120), force=force)
    finally:
        plt.close(fig)
