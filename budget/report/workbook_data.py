"""The workbook Summary's rows on measured data: the files with their SHA-256, the located points,
the scatter check, the reference check of each angle and the sweep's lack of fit.

Everything here is the engine's result written as numbers and text; nothing is computed.
"""

from __future__ import annotations

from budget.report.workbook_cells import BOLD, FMT, NOTE, WRAP, header_row, number, text, title
from budget.results import RunResult

__all__ = ["write_data_rows", "write_reference_rows", "lack_of_fit_rows", "POINT_COLUMNS"]

POINT_COLUMNS = ["point", "frames n", "n_eff", "mean x [px]", "mean y [px]", "s_x [px]", "s_y [px]", "r_xy",
                 "drift [px]", "drift p", "lag-1 r", "s²/σ²", "frames' image files"]


def write_data_rows(ws, r: int, result: RunResult) -> int:
    """Files, one row per located point and the scatter check; returns the next free row."""
    d = result.data
    if d is None:
        return r
    title(ws, r, "Measured data (image coordinates: x right, y down, px from the centre of the top-left pixel)", 4)
    r += 1
    header_row(ws, r, ["file", "SHA-256", "kind", "note"])
    for f in d.files:
        r += 1
        text(ws, r, 1, f.path)
        text(ws, r, 2, f.sha256)
        text(ws, r, 3, f.kind)
        text(ws, r, 4, f.note, NOTE)
    r += 2
    header_row(ws, r, POINT_COLUMNS)
    for m in d.points:
        r += 1
        text(ws, r, 1, m.label)
        number(ws, r, 2, m.n, FMT["count"])
        for c, v in enumerate((m.n_eff, m.mean_x_px, m.mean_y_px, m.sd_x_px, m.sd_y_px, m.r_xy, m.drift_px,
                               m.drift_p, m.lag1), start=3):
            number(ws, r, c, v, "0.000000")
        if m.scatter_ratio is not None:
            number(ws, r, 12, m.scatter_ratio, "0.000")
        text(ws, r, 13, ", ".join(i for i in m.images if i) or "—").alignment = WRAP
    r += 1
    text(ws, r, 1, "scatter check", BOLD)
    text(ws, r, 2, d.scatter_check).alignment = WRAP
    r += 1
    text(ws, r, 1, "angle tolerance [°]", BOLD)
    number(ws, r, 2, d.angle_tolerance_deg, "0.###")
    return r + 2


def write_reference_rows(ws, r: int, result: RunResult) -> int:
    """E_n of every angle against its reference (ISO 13528); returns the next free row."""
    refs = [(ob, ob.reference) for ob in result.angles if ob.reference is not None]
    if not refs:
        return r
    title(ws, r, "Reference check: E_n = (y − y_ref)/√(U² + U_ref²), |E_n| ≤ 1 agrees (ISO 13528, ISO/IEC 17043)", 4)
    r += 1
    header_row(ws, r, ["output", "reference [°]", "U_ref [°]", "measured [°]", "U [°]", "E_n", "verdict", "source"])
    for ob, ref in refs:
        r += 1
        text(ws, r, 1, ob.label)
        for c, v in enumerate((ref.angle_deg, ref.U_deg, ref.measured_deg, ref.measured_U_deg, ref.E_n), start=2):
            number(ws, r, c, v, "0.000000")
        text(ws, r, 7, "agrees" if ref.ok else "DISAGREES")
        text(ws, r, 8, ref.source)
    return r + 2


def lack_of_fit_rows(result: RunResult) -> list[tuple[str, object, str | None]]:
    """(label, value, number format) rows of the sweep's lack of fit for the Summary's sweep block."""
    s = result.gain_summary
    lof = s.lack_of_fit if s is not None else None
    if lof is None:
        return []
    return [
        ("χ² of the measured angles about their line", lof.chi2, "0.000"),
        ("p-value of χ² (ν = degrees of freedom of the fit)", lof.p_value, "0.0000"),
        ("χ²_ν(0.95), the acceptance limit", lof.critical, "0.000"),
        ("lack of fit significant", "yes" if lof.significant else "no", None),
        ("per-point discrepancy s_d carried [°]", lof.misfit_deg, "0.000000"),
        ("lack of fit, in words", lof.verdict, None),
    ]
