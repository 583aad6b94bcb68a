"""Straight-line fits for calibration sweeps: OLS, WLS, GLS and York.

Scope: straight lines y = intercept + slope·x only, with uncertainties in y
(independent or with a full covariance) or independent ones in both x and y.
No polynomials, no correlated x–y errors, no robust or outlier-rejecting fits.

Parameter order in every covariance is (slope, intercept).
"""

from budget.fit.batch import ols_batch, ols_batch_residuals
from budget.fit.estimators import FitConvergenceError, straight_line
from budget.fit.line import StraightLine, line_variance

__all__ = [
    "FitConvergenceError",
    "StraightLine",
    "line_variance",
    "ols_batch",
    "ols_batch_residuals",
    "straight_line",
]
