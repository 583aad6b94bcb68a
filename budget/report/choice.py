"""Presenting a :class:`~budget.choice.rank.Choice`: text table, plain dict (JSON), workbook sheet, plot.

Nothing here computes an uncertainty; it formats what :mod:`budget.choice.model` predicted.
"""

from __future__ import annotations

import math
from pathlib import Path

from budget.choice.model import COMPONENTS, OMITTED
from budget.choice.rank import Choice
from budget.report.safe_write import clean_text

__all__ = ["choice_rows", "choice_to_dict", "render_choice", "write_choice_plot", "write_choice_xlsx", "SHOWN"]

SHOWN = 25
"""Rows of the ranking shown unless ``--all``."""


def _f(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def choice_rows(ch: Choice, limit: int | None = None) -> list[dict]:
    """One plain dict per candidate, best first (finite floats or None, no NaN); only the first ``limit``."""
    p, spec, sh = ch.pred, ch.spec, ch.shortest
    rows = []
    for rank_no, i in enumerate(ch.order[:limit], start=1):
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
            "f_number": _f(p.f_number[i]), "bias_angle_deg": _f(p.bias_angle_deg[i]),
            "u_angle_deg": _f(p.u_angle_deg[i]), "U_angle_deg": _f(p.U_angle_deg[i]),
            "angle_components_deg": {c: _f(math.sqrt(p.variances_angle[k, i])) for k, c in enumerate(COMPONENTS)},
        }
        if p.u_gain_pct is not None:
            row["u_gain_pct"] = _f(p.u_gain_pct[i])
            row["U_gain_pct"] = _f(p.U_gain_pct[i])
        if sh is not None:
            row["shortest_distance_mm"] = _f(sh.working_distance_mm[i])
            row["U_angle_deg_at_shortest"] = _f(sh.U_angle_deg[i])
            row["meets_at_shortest"] = bool(sh.meets[i])
            if sh.U_gain_pct is not None:
                row["U_gain_pct_at_shortest"] = _f(sh.U_gain_pct[i])
        rows.append(row)
    return rows


def omitted_line() -> str:
    """The components every candidate's U leaves out, in words."""
    return ("Optimistic omissions (not in any candidate's U; add them to the rig before relying on a margin): "
            + "; ".join(f"{c} ({why})" for c, why in OMITTED) + ".")


def _confirmation(c) -> dict | None:
    if c is None:
        return None
    return {"U_angle_deg": c.U_angle_deg, "U_gain_pct": c.U_gain_pct, "meets": c.meets, "margin_pct": c.margin_pct,
            "result_methods": list(c.methods), "trials": c.trials,
            "method": "the rig model (run_budget on the equivalent rig), as `thetabudget run` on --rig-out"}


def choice_to_dict(ch: Choice, input_path: str = "", limit: int | None = SHOWN, confirmation=None,
                   seed: object = None) -> dict:
    """Plain-dict summary for JSON: the first ``limit`` rows (None: every one) and how many are not shown."""
    spec, p = ch.spec, ch.pred
    rows = choice_rows(ch, limit)
    least = None
    if ch.least is not None:
        least = {k: (_f(v) if isinstance(v, float) else v) for k, v in vars(ch.least).items()}
    return {
        "title": spec.title, "input": input_path, "cameras_csv": spec.cameras.path,
        "goal": {k: v for k, v in spec.goal.items()}, "coverage_factor": p.k, "candidates": len(ch.order),
        "meeting": int(p.meets.sum()), "dof_need_mm": _f(p.dof_need_mm),
        "frame_rate_needed_hz": _f(p.frame_rate_needed_hz), "least_pixels": least,
        "meeting_at_shortest_distance": None if ch.shortest is None else int(ch.shortest.meets.sum()),
        "shown": len(rows), "not_shown": len(ch.order) - len(rows), "ranking": rows,
        "top_pick": {**rows[0], "rig_model": _confirmation(confirmation), "seed": seed} if rows else None,
        "omitted": [{"component": c, "reason": why} for c, why in OMITTED],
        "method": "surrogate: JCGM 100 linear propagation with closed-form first-order sensitivities, all candidates "
                  "and settings at once (tested against the rig model); the top pick's rig_model block, where "
                  "given, is the rig model itself",
    }


def _top_lines(ch: Choice, row: dict, confirmation) -> list[str]:
    gain = "U_gain_pct" in row
    what = f"U gain {row['U_gain_pct']:.3g} %" if gain and "gain_U_pct" in ch.spec.goal else \
        f"U angle {row['U_angle_deg']:.3g}°"
    lines = [f"top pick: {row['camera']} with {row['lens']} at {row['working_distance_mm']:.0f} mm, "
             f"f/{row['f_number']:g}, exposure {row['exposure_ms']:.3g} ms: {what} (surrogate), margin "
             f"{row['margin_pct']:+.1f} %, {'meets' if row['meets'] else 'does not meet'} the goal."]
    if "U_angle_deg_at_shortest" in row:
        short = f"U gain {row['U_gain_pct_at_shortest']:.3g} %" if gain and "gain_U_pct" in ch.spec.goal else \
            f"U angle {row['U_angle_deg_at_shortest']:.3g}°"
        lines.append(f"  at its shortest distance ({row['shortest_distance_mm']:.0f} mm, lens as listed) it would "
                     f"give {short}.")
    if confirmation is not None:
        c = confirmation
        g = f", U gain {c.U_gain_pct:.3g} %" if c.U_gain_pct is not None else ""
        verdict = "meets" if c.meets else "DOES NOT MEET"
        lines.append(f"  rig model (run_budget on the equivalent rig, as `thetabudget run`): U angle "
                     f"{c.U_angle_deg:.3g}°{g}, margin {c.margin_pct:+.1f} %, {verdict} "
                     f"the goal ({', '.join(sorted(set(c.methods)))} result).")
    else:
        lines.append("  the surrogate's figure; `--verify` runs the top pick through the rig model as `run` does, "
                     "`--rig-out FILE` writes its rig file.")
    return lines


NARROW_DROPS = ("mm/px", "σ px", "R px", "t ms", "f/N", "price", "U at shortest D", "D mm", "limited by")
"""Columns of the console table a narrow terminal goes without, first the first (the JSON and the
workbook keep every one)."""


def _plain_table(cols: list[str], body: list[list[str]], left: set[str]) -> list[str]:
    """A plain text table (user text printed verbatim; only the rows given are formatted)."""
    widths = [max(len(c), *(len(r[j]) for r in body)) if body else len(c) for j, c in enumerate(cols)]

    def line(cells):
        return "  ".join(c.ljust(w) if cols[j] in left else c.rjust(w)
                         for j, (c, w) in enumerate(zip(cells, widths, strict=True))).rstrip()

    return [line(cols), "  ".join("-" * w for w in widths), *(line(r) for r in body)]


def render_choice(ch: Choice, top: int | None = SHOWN, width: int | None = None, confirmation=None) -> str:
    """The ranking as a text table, the top pick with its margin, and the continuous model's answer.

    Only the first ``top`` rows are built (None: every one); the title says how many are not shown.
    ``width`` (a terminal's columns; None: no limit) leaves out the columns of :data:`NARROW_DROPS`, in
    that order, until the table fits, says which, and wraps the text at words.
    """
    spec, p = ch.spec, ch.pred
    gain = p.u_gain_pct is not None
    rows = choice_rows(ch, top)
    hidden = len(ch.order) - len(rows)
    more = f": best {len(rows)} shown, {hidden} not shown (--all shows every one)" if hidden else ", all shown"
    cols = ["#", "camera", "lens", "price", "D mm", "f/N", "t ms", "mm/px", "R px", "σ px", "U angle °"] + \
        (["U gain %"] if gain else []) + ["U at shortest D", "margin %", "meets", "limited by"]
    body = []
    for row in rows:
        at_short = row.get("U_gain_pct_at_shortest") if gain and "gain_U_pct" in spec.goal else \
            row.get("U_angle_deg_at_shortest")
        body.append([str(row["rank"]), row["camera"], row["lens"], f"{row['price']:g}",
                     f"{row['working_distance_mm']:.0f}", f"{row['f_number']:g}", f"{row['exposure_ms']:.3g}",
                     f"{row['mm_per_px']:.4f}", f"{row['radius_px']:.0f}", f"{row['sigma_px']:.2f}",
                     f"{row['U_angle_deg']:.3g}"] + ([f"{row['U_gain_pct']:.3g}"] if gain else []) +
                    ["—" if at_short is None else f"{at_short:.3g}", f"{row['margin_pct']:+.1f}",
                     "yes" if row["meets"] else "no", row["limiting"]])
    left = {"camera", "lens", "meets", "limited by"}
    dropped: list[str] = []
    table = _plain_table(cols, body, left)
    for name in NARROW_DROPS:
        if width is None or max(map(len, table)) <= width:
            break
        j = cols.index(name)
        cols, body = cols[:j] + cols[j + 1:], [r[:j] + r[j + 1:] for r in body]
        dropped.append(name)
        table = _plain_table(cols, body, left)
    lines = [f"{spec.title}: {len(ch.order)} camera × lens candidates, best first{more}", "", *table, ""]
    if dropped:
        lines.append(f"Columns left out at this width ({width}): {', '.join(dropped)}; a wider terminal, --json or "
                     "--xlsx shows them.")
    goal = ", ".join(f"{k} = {v:g}" for k, v in spec.goal.items() if k in ("angle_U_deg", "gain_U_pct", "p"))
    short = "" if ch.shortest is None else f" ({int(ch.shortest.meets.sum())} at their shortest distance)"
    lines.append(f"goal: {goal} (k = {p.k:.3f}); {int(p.meets.sum())} of {len(ch.order)} candidates meet it at "
                 f"their best setting{short}.")
    if rows:
        lines += _top_lines(ch, rows[0], confirmation)
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
    lines.append(omitted_line())
    lines.append("Each candidate's working distance is searched over the allowed range (and f-number and exposure "
                 "where [search] lists them); U includes any known offset (rolling-shutter rows). Tilt enters the "
                 "surrogate to first order only: the rig model (--verify, or run on --rig-out) has the rest.")
    if width is not None:  # the text at words; the table's lines as they are
        n_table = 2 + len(table)
        lines = [*_wrapped(lines[:1], width), *lines[1:n_table], *_wrapped(lines[n_table:], width)]
    return "\n".join(lines) + "\n"


def _wrapped(lines: list[str], width: int) -> list[str]:
    import textwrap

    return [w for line in lines
            for w in (textwrap.wrap(line, width, subsequent_indent="  ", break_on_hyphens=False) or [""])]


def write_choice_xlsx(ch: Choice, path: Path, provenance: list[tuple[str, str]] | None = None) -> None:
    """The candidates, best first, and the provenance, saved to ``path`` (the caller's temporary file:
    :class:`budget.report.safe_write.FileSet`, so the file follows the user's umask).

    Sheets: 'choice' (the title, then one row per candidate: header row (printed at full size over pages
    across, rank, camera and lens repeated on each), frozen panes, fitted widths) and 'Provenance'
    (tool, input files and their SHA-256, date, the assumptions the search made). Text from the input is
    inert (:func:`budget.report.workbook_cells.text`); both sheets print as the budget workbook does
    (:mod:`budget.report.workbook_print`); the file asks to be recalculated on opening.
    """
    import datetime as _dt

    from openpyxl import Workbook

    from budget import __version__
    from budget.report.workbook_cells import BOLD, TITLE, WRAP, fit_row_heights, header_row, number, set_widths, text
    from budget.report.workbook_print import make_printable, recalc_on_open

    rows = choice_rows(ch)
    wb = Workbook()
    ws = wb.active
    ws.title = "choice"
    keys = [k for k in rows[0] if k != "angle_components_deg"] + [f"u {c} (°)" for c in COMPONENTS]
    text(ws, 1, 1, ch.spec.title, TITLE)
    header_row(ws, 2, keys)
    for i, r in enumerate(rows, start=3):
        values = [r[k] for k in keys[:-len(COMPONENTS)]] + [r["angle_components_deg"][c] for c in COMPONENTS]
        for j, v in enumerate(values, start=1):
            if isinstance(v, bool):
                text(ws, i, j, "yes" if v else "no")
            elif isinstance(v, str):
                text(ws, i, j, v)
            elif v is not None:
                number(ws, i, j, v, "0" if isinstance(v, int) else "0.000E+00" if abs(v) < 1e-3 and v else "0.0###")
    ws.freeze_panes = "C3"
    set_widths(ws, {j: 10 for j in range(4, len(keys) + 1)}, hi=24)
    prov = wb.create_sheet("Provenance")
    text(prov, 1, 1, f"Camera choice: {ch.spec.title}", TITLE)
    stamp = _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")
    items = [("tool", f"thetabudget {__version__}"), *(provenance or []), ("written (UTC)", stamp),
             ("candidates", f"{len(rows)}, best first (ranked as the console shows them)"),
             ("not modelled", omitted_line())]
    for r, (label, value) in enumerate(items, start=3):
        text(prov, r, 1, label, BOLD)
        text(prov, r, 2, value).alignment = WRAP
    set_widths(prov, {1: 30, 2: 90})
    sha = next((v for k, v in (provenance or []) if k.endswith("SHA-256")), "")
    for sheet, rows_ in ((ws, "1:2"), (prov, "1:1")):
        make_printable(sheet, sha256=sha, title_rows=rows_, tool=f"thetabudget {__version__}", title_cols="A:C")
        fit_row_heights(sheet)
    recalc_on_open(wb)
    wb.properties.title = clean_text(f"Camera choice: {ch.spec.title}", 255)
    wb.properties.creator = f"thetabudget {__version__}"
    wb.save(path)


def write_choice_plot(ch: Choice, path: Path) -> None:
    """PNG of U against pixels across the field (the continuous model and the candidates), saved to ``path``
    (the caller's temporary file). The title is the input's text, drawn as it is (no mathtext)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    spec, p = ch.spec, ch.pred
    is_angle = "angle_U_deg" in spec.goal
    u = p.U_angle_deg if is_angle else p.U_gain_pct
    goal = spec.goal["angle_U_deg"] if is_angle else spec.goal["gain_U_pct"]
    fig, ax = plt.subplots(figsize=(7, 4.5))
    try:
        if ch.curve is not None:
            ax.plot(ch.curve[0], ch.curve[1], "-", color="0.3", label="continuous sensor model")
        ax.scatter(p.px_across_field[p.meets], u[p.meets], marker="o", label="candidate, meets")
        ax.scatter(p.px_across_field[~p.meets], u[~p.meets], marker="x", label="candidate, does not meet")
        ax.axhline(goal, linestyle="--", color="k", linewidth=1, label="goal")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("pixels across the field")
        ax.set_ylabel("U angle (°)" if is_angle else "U gain (%)")
        ax.set_title(clean_text(spec.title, 200), fontsize=9, parse_math=False)
        ax.legend(fontsize=8)
        fig.tight_layout()
        fig.savefig(path, format="png", dpi=120, metadata={"Software": "thetabudget (matplotlib)"})
    finally:
        plt.close(fig)
