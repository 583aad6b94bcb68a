"""The measurement models and input distributions that reference case files may name.

Each model is the one of its published example (JCGM 101:2008 9.2 and 9.3, JCGM 100:2008
Table G.2, G.4.1 and H.1), written as a vectorized function of named inputs, so that the
linear method and Monte Carlo evaluate the same function. Used by
:mod:`budget.reference_cases` and ``tools/reference_tolerances.py``.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from budget.propagation import (
    Arcsine,
    CurvilinearTrapezoid,
    Normal,
    Rectangular,
    StudentT,
    Trapezoidal,
    Triangular,
)

__all__ = ["MODELS", "DISTRIBUTIONS", "SD_FACTOR"]

# --- measurement models named by the case files ---------------------------------------------

def _sum(**x: np.ndarray) -> np.ndarray:
    """Y = X1 + ... + XN (JCGM 101 9.2, the additive model)."""
    return sum(x.values())


def _identity(**x: np.ndarray) -> np.ndarray:
    """Y = X for one input: u_c and ν_eff are those of the input (JCGM 100 Table G.2 cases)."""
    (value,) = x.values()
    return value


def _product_percent(**x: np.ndarray) -> np.ndarray:
    """Y = 100·X1·X2·…·XN: with estimates 1 the output is in percent of its estimate.

    Notes
    -----
    JCGM 100 G.4.1 example, Y = b·X1·X2·X3, whose relative uncertainties combine
    in quadrature (JCGM 100 5.1.6).
    """
    out = 100.0
    for v in x.values():
        out = out * v
    return out


def _mass_calibration(m_rc: np.ndarray, dm_rc: np.ndarray, rho_a: np.ndarray,
                      rho_w: np.ndarray, rho_r: np.ndarray) -> np.ndarray:
    """δm = (m_Rc + δm_Rc)(1 + (ρa − ρa0)(1/ρW − 1/ρR)) − m_nom, in mg.

    Notes
    -----
    JCGM 101:2008 9.3 (model recalled from memory): m_nom = 100 g = 10⁵ mg,
    ρa0 = 1.2 kg/m³; masses in mg, densities in kg/m³.
    """
    m_nom_mg = 100_000.0
    rho_a0 = 1.2
    return (m_rc + dm_rc) * (1.0 + (rho_a - rho_a0) * (1.0 / rho_w - 1.0 / rho_r)) - m_nom_mg


def _end_gauge(l_s: np.ndarray, d: np.ndarray, alpha_s: np.ndarray, theta_mean: np.ndarray,
               theta_cyclic: np.ndarray, delta_alpha: np.ndarray,
               delta_theta: np.ndarray) -> np.ndarray:
    """l = l_s + d − l_s(δα·θ + α_s·δθ), θ = θ̄ + Δ, lengths in nm.

    Notes
    -----
    JCGM 100:2008 H.1, the approximate model (H.3) with θ the deviation from
    20 °C split into its mean θ̄ and the cyclic variation Δ (inputs reconstructed
    from memory, see the case file).
    """
    theta = theta_mean + theta_cyclic
    return l_s + d - l_s * (delta_alpha * theta + alpha_s * delta_theta)


MODELS: dict[str, Callable[..., np.ndarray]] = {
    "sum": _sum,
    "identity": _identity,
    "product_percent": _product_percent,
    "mass_calibration": _mass_calibration,
    "end_gauge": _end_gauge,
}
"""Model functions a case file may name in its ``model`` key."""

DISTRIBUTIONS = {
    "Normal": Normal, "Rectangular": Rectangular, "Triangular": Triangular,
    "Trapezoidal": Trapezoidal, "CurvilinearTrapezoid": CurvilinearTrapezoid,
    "Arcsine": Arcsine, "StudentT": StudentT,
}
SD_FACTOR = {"Rectangular": math.sqrt(3.0), "Triangular": math.sqrt(6.0), "Arcsine": math.sqrt(2.0)}
"""Half-width over sd (JCGM 101 6.4.2, 6.4.4, 6.4.6): lets a file state a symmetric
distribution by its mean and sd, as JCGM 101 9.2 does."""
