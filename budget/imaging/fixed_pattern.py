"""Fixed-pattern noise of a located position: pixel-to-pixel gain (PRNU) and dark-signal (DSNU)
differences, the same in every frame, so averaging frames does not reduce them.

The one home of these formulas; :mod:`budget.rig.components` makes them budget inputs.
"""

from __future__ import annotations

import math

__all__ = ["prnu_sd_px", "dsnu_sd_px", "FORMULA"]

FORMULA = ("fixed-pattern noise of the centre of mass: PRNU p/√(8π) px (Gaussian spot) or p/(2√π) px (disk), "
           "DSNU d_e·√(Σx²)/N over the window [derived]; the same in every frame, not averaged")


def prnu_sd_px(prnu_pct: float, shape: str = "spot") -> float:
    """Standard deviation per axis of the centre of mass from a fixed gain pattern of rms ``prnu_pct`` %.

    Notes
    -----
    x̂ = Σ x_i S_i(1 + ε_i)/Σ S_i with independent ε_i of variance p² gives, to first order,
    var(x̂) = p² Σ (x_i − x̄)² S_i²/N² [derived]. For a Gaussian spot of N electrons and spread σ,
    S = N/(2πσ²)·exp(−r²/2σ²) per pixel (of area 1 px²), so Σ x² S² ≈ ∫ x² S² dA = N²/(8π) px²:
    sd = p/√(8π) px, whatever σ and N. For a uniform disk of radius a, S = N/(πa²) and
    ∫ x² dA = πa⁴/4: sd = p/(2√π) px. The sums are integrals while the spot covers several pixels
    (σ ≳ 0.7 px, a ≳ 4 px: within about 10 %); a window that does not hold the whole target, or
    moves with the pattern, changes it. Checked against rendered frames with a drawn gain pattern
    in tests/imaging/test_fixed_pattern.py.
    """
    p = prnu_pct * 1e-2
    if p <= 0:
        return 0.0
    if shape == "disk":
        return p / (2.0 * math.sqrt(math.pi))
    return p / math.sqrt(8.0 * math.pi)


def dsnu_sd_px(dsnu_e: float, signal_e: float, window_px: int) -> float:
    """Standard deviation per axis of the centre of mass from a fixed dark-signal pattern of rms ``dsnu_e``.

    Notes
    -----
    An additive offset δ_i per pixel moves the centre of mass by Σ (x_i − x̄) δ_i/N [derived]; over a
    w × w window centred on the spot, var = d²·w·Σ_k k²/N² with k = −h…h, h = (w − 1)/2, i.e.
    Σ x² = w·h(h + 1)(2h + 1)/3.
    """
    if dsnu_e <= 0 or signal_e <= 0:
        return 0.0
    h = (window_px - 1) // 2
    sum_x2 = window_px * h * (h + 1) * (2 * h + 1) / 3.0
    return dsnu_e * math.sqrt(sum_x2) / signal_e
