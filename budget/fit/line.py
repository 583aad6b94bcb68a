"""The fitted straight line: estimates, covariance, checks and its use.

Parameter order everywhere is (slope, intercept): ``covariance[0, 0]`` is
u²(slope), ``covariance[1, 1]`` is u²(intercept).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from budget.errors import field_error
from budget.fit import _checks

METHODS = ("ols", "wls", "gls", "york")


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a


def _as_output(value: np.ndarray, *inputs: np.ndarray) -> float | np.ndarray:
    """A Python float when every input was a scalar, else the array."""
    if all(np.ndim(v) == 0 for v in inputs):
        return float(value)
    return value


def line_variance(covariance: np.ndarray, x0: float | np.ndarray) -> np.ndarray:
    """u²(a + b·x0) of a line from the covariance of (slope, intercept) alone.

    Notes
    -----
    [x0, 1] C [x0, 1]ᵀ (JCGM 100 eq. 13), written as a sum of non-negative terms about the
    abscissa where the band is narrowest, so rounding cannot make it negative.
    """
    c = np.asarray(covariance, dtype=float)
    x0 = np.asarray(x0, dtype=float)
    if c[0, 0] == 0.0:  # exact OLS fit: the whole covariance is zero
        return np.full(np.shape(x0), c[1, 1])
    x_min = -c[0, 1] / c[0, 0]
    return c[0, 0] * (x0 - x_min) ** 2 + (c[1, 1] - c[0, 1] ** 2 / c[0, 0])


@dataclass(frozen=True, eq=False)
class StraightLine:
    """Result of :func:`budget.fit.straight_line`: y = intercept + slope·x.

    Attributes
    ----------
    method : str
        ``"ols"``, ``"wls"``, ``"gls"`` or ``"york"``.
    slope, intercept : float
        The estimates b and a.
    covariance : numpy.ndarray
        2×2 covariance of (slope, intercept), in that order (read-only).
    chi2 : float
        Weighted sum of squared residuals (χ²obs of ISO/TS 28037); for ``"ols"``,
        which has no stated uncertainties, the plain residual sum of squares.
    dof : int
        Degrees of freedom, n − 2.
    residuals : numpy.ndarray
        y_i − (intercept + slope·x_i), in the units of y (read-only).
    residual_sd : float
        sqrt(Σ residuals² / (n − 2)); for ``"ols"`` the s that scales the covariance.
    span : tuple of float
        (min x, max x), the calibrated range.
    r_squared : float or None
        Coefficient of determination, for ``"ols"`` only (None if y has no spread).
    chi2_p95 : float or None
        95 % quantile of χ²(dof); None for ``"ols"``.
    chi2_consistent : bool or None
        ``chi2 <= chi2_p95`` (ISO/TS 28037 consistency check); None for ``"ols"``.
    iterations : int
        Iterations the York fit took; 0 for the direct methods.
    """

    method: str
    slope: float
    intercept: float
    covariance: np.ndarray
    chi2: float
    dof: int
    residuals: np.ndarray
    residual_sd: float
    span: tuple[float, float]
    r_squared: float | None = None
    chi2_p95: float | None = None
    chi2_consistent: bool | None = None
    iterations: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "covariance", _frozen(self.covariance))
        object.__setattr__(self, "residuals", _frozen(self.residuals))

    @property
    def u_slope(self) -> float:
        """Standard uncertainty of the slope."""
        return float(np.sqrt(self.covariance[0, 0]))

    @property
    def u_intercept(self) -> float:
        """Standard uncertainty of the intercept."""
        return float(np.sqrt(self.covariance[1, 1]))

    @property
    def correlation(self) -> float:
        """Correlation coefficient r(slope, intercept)."""
        return float(self.covariance[0, 1] / np.sqrt(self.covariance[0, 0] * self.covariance[1, 1]))

    def _line_variance(self, x0: np.ndarray) -> np.ndarray:
        return line_variance(self.covariance, x0)

    def predict(self, x0: float | np.ndarray, u_x0: float | np.ndarray = 0.0
                ) -> tuple[float | np.ndarray, float | np.ndarray]:
        """The value of the line at x0 and its standard uncertainty.

        Parameters
        ----------
        x0 : float or array_like
            Abscissa(e), e.g. a commanded voltage.
        u_x0 : float or array_like, optional
            Standard uncertainty of x0 (>= 0), uncorrelated with the fit.

        Returns
        -------
        y0, u_y0 : float or numpy.ndarray
            Floats when both inputs are scalars.

        Notes
        -----
        First-order propagation (JCGM 100 eq. 13; ISO/TS 28037 clause 11, use of the calibration
        function, clause number from memory):
        y0 = a + b·x0, u²(y0) = [x0, 1] C [x0, 1]ᵀ + (b·u(x0))².
        """
        where = "StraightLine.predict"
        x = _checks.finite(x0, "x0", where)
        ux = _checks.nonnegative(u_x0, "u_x0", where)
        y = self.intercept + self.slope * x
        u = np.sqrt(self._line_variance(x) + (self.slope * ux) ** 2)
        y, u = np.broadcast_arrays(y, u)
        return _as_output(y.copy(), x0, u_x0), _as_output(u.copy(), x0, u_x0)

    def inverse(self, y0: float | np.ndarray, u_y0: float | np.ndarray = 0.0
                ) -> tuple[float | np.ndarray, float | np.ndarray]:
        """The abscissa at which the line takes the value y0, and its uncertainty.

        Parameters
        ----------
        y0 : float or array_like
            Ordinate(s), e.g. a wanted angle.
        u_y0 : float or array_like, optional
            Standard uncertainty of y0 (>= 0), uncorrelated with the fit.

        Returns
        -------
        x0, u_x0 : float or numpy.ndarray
            Floats when both inputs are scalars.

        Notes
        -----
        First-order propagation (JCGM 100 eq. 13; ISO/TS 28037 clause 11, the
        inverse use of a calibration function, clause number from memory):
        x0 = (y0 − a)/b with
        u²(x0) = ([x0, 1] C [x0, 1]ᵀ + u²(y0)) / b², which includes the
        covariance of a and b.
        """
        where = "StraightLine.inverse"
        y = _checks.finite(y0, "y0", where)
        uy = _checks.nonnegative(u_y0, "u_y0", where)
        if self.slope == 0.0:
            raise field_error("slope", "non-zero to invert the line", self.slope, where)
        x = (y - self.intercept) / self.slope
        u = np.sqrt(self._line_variance(x) + uy**2) / abs(self.slope)
        x, u = np.broadcast_arrays(x, u)
        return _as_output(x.copy(), y0, u_y0), _as_output(u.copy(), y0, u_y0)

    def extrapolation(self, x0: float | np.ndarray) -> float | np.ndarray:
        """How far x0 lies outside the calibrated span, in units of x (0 inside).

        Parameters
        ----------
        x0 : float or array_like
            Abscissa(e) to test.

        Returns
        -------
        float or numpy.ndarray
            max(min x − x0, 0, x0 − max x).
        """
        x = _checks.finite(x0, "x0", "StraightLine.extrapolation")
        lo, hi = self.span
        return _as_output(np.maximum(np.maximum(lo - x, x - hi), 0.0), x0)

    def as_dict(self) -> dict[str, object]:
        """Plain-Python summary for JSON (floats, ints, lists, None)."""
        return {
            "method": self.method,
            "slope": float(self.slope),
            "intercept": float(self.intercept),
            "u_slope": self.u_slope,
            "u_intercept": self.u_intercept,
            "covariance_slope_intercept": self.covariance.tolist(),
            "correlation": self.correlation,
            "chi2": float(self.chi2),
            "dof": int(self.dof),
            "chi2_p95": self.chi2_p95,
            "chi2_consistent": self.chi2_consistent,
            "residual_sd": float(self.residual_sd),
            "r_squared": self.r_squared,
            "span": [float(v) for v in self.span],
            "residuals": self.residuals.tolist(),
            "iterations": int(self.iterations),
        }
