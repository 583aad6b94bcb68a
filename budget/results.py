"""Results of a budget run: plain frozen dataclasses that reports read and never recompute."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from budget.propagation import InputQuantity, LinearResult, MonteCarloResult, Validation

__all__ = ["ComponentLine", "OutputBudget", "GainSummary", "RunResult", "finite_or_none", "GoalVerdict",
           "Decision", "RangeClaim", "DataFile", "MeasuredPoint", "MeasuredDataSummary", "LackOfFit", "ReferenceCheck"]


def finite_or_none(x: float | None) -> float | None:
    """JSON has no NaN or Infinity: infinite degrees of freedom become null."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


@dataclass(frozen=True)
class ComponentLine:
    """One budget component (a named group of input quantities) for one output.

    ``contribution`` and ``percent`` are the linear method's (JCGM 100); ``mc_u``
    is the standard deviation of the output when only this component varies
    (Monte Carlo, the others at their estimates), which shows effects the linear
    method misses.
    """

    name: str
    evaluation: str
    distribution: str
    u_input: float | None
    unit: str
    sensitivity: float | None
    contribution: float
    percent: float
    dof: float
    mc_u: float | None
    sources: tuple[str, ...]
    inputs: tuple[str, ...]
    description: str = ""
    u_exact_pivot: float | None = None
    """With a fitted pivot: this component's linear contribution had the pivot been known exactly (the
    rest of ``contribution`` comes through the fit); None when the pivot is not fitted."""

    @property
    def effective_sensitivity(self) -> float | None:
        """c_i where the component is one input quantity, else contribution / u(x) (None without one u(x))."""
        if self.sensitivity is not None:
            return self.sensitivity
        return self.contribution / self.u_input if self.u_input else None


@dataclass(frozen=True)
class ReferenceCheck:
    """A measured angle against a reference angle: E_n = (y − y_ref)/√(U² + U_ref²) (ISO 13528, ISO/IEC 17043)."""

    angle_deg: float
    U_deg: float
    measured_deg: float
    measured_U_deg: float
    E_n: float
    ok: bool
    source: str


@dataclass(frozen=True)
class OutputBudget:
    """The full budget of one output (an angle position, the gain, the intercept)."""

    name: str
    label: str
    unit: str
    nominal: float
    linear: LinearResult
    u_second_order: float | None
    monte_carlo: MonteCarloResult
    validation: Validation
    components: tuple[ComponentLine, ...]
    statement: str
    mc_statement: str
    method: str  # "linear" when validated, "monte carlo" otherwise
    warnings: tuple[str, ...]
    reference: ReferenceCheck | None = None
    u_exact_pivot: float | None = None
    """With a fitted pivot: the linear u had the pivot been known exactly; u² − u_exact² comes through
    the fit (a pivot mark or a longer arc would remove it). None when the pivot is not fitted."""

    @property
    def result_estimate(self) -> float:
        """The estimate of the method the result rests on (``method``)."""
        return self.linear.estimate if self.method == "linear" else self.monte_carlo.estimate

    @property
    def result_u(self) -> float:
        """The standard uncertainty of the method the result rests on."""
        return self.linear.u if self.method == "linear" else self.monte_carlo.u

    @property
    def result_interval(self) -> tuple[float, float]:
        """The result's coverage interval: y ± U (linear) or the probabilistically symmetric one (Monte Carlo)."""
        return tuple(self.linear.interval) if self.method == "linear" else tuple(self.monte_carlo.interval)

    @property
    def result_statement(self) -> str:
        """The statement of the method the result rests on."""
        return self.statement if self.method == "linear" else self.mc_statement

    @property
    def dominant(self) -> ComponentLine | None:
        """The component with the largest effect, by either method (the linear contribution or Monte Carlo alone)."""
        return max(self.components, key=lambda c: max(c.contribution, c.mc_u or 0.0), default=None)


@dataclass(frozen=True)
class LackOfFit:
    """χ² of a sweep's measured angles about their straight line, and what was done about a misfit.

    ``misfit_deg`` is the per-point discrepancy s_d carried into u(K), the intercept and
    predictions when the fit is significantly bad (0 otherwise); ``method`` names how.
    """

    chi2: float
    dof: int
    p_value: float
    critical: float
    significant: bool
    misfit_deg: float
    method: str
    verdict: str


@dataclass(frozen=True)
class GainSummary:
    """What a sweep adds beyond the gain's own budget."""

    intercept: OutputBudget
    correlation_linear: float
    correlation_mc: float
    nonlinearity_mean_pct: float
    nonlinearity_p95_pct: float
    chi2: float | None
    dof: int
    set_points_v: tuple[float, ...]
    lack_of_fit: LackOfFit | None = None
    measured_deg: tuple[float, ...] | None = None


@dataclass(frozen=True)
class DataFile:
    """A file the measured data rest on: the data CSV, or an image named in it."""

    path: str
    sha256: str
    kind: str  # "data" or "image"
    note: str = ""


@dataclass(frozen=True)
class MeasuredPoint:
    """One located point's frames (image coordinates, px), as the reports tabulate them."""

    label: str
    n: int
    n_eff: float
    dof: float
    mean_x_px: float
    mean_y_px: float
    sd_x_px: float
    sd_y_px: float
    r_xy: float
    lag1: float
    autocorrelated: bool
    drift_px: float
    drift_p: float
    drifting: bool
    scatter_ratio: float | None
    images: tuple[str, ...]


@dataclass(frozen=True)
class MeasuredDataSummary:
    """The measured data of an evaluation run: its files, a table per point, the scatter check in words."""

    files: tuple[DataFile, ...]
    points: tuple[MeasuredPoint, ...]
    scatter_check: str
    scatter_ratio: float | None
    scatter_dof: float | None
    scatter_interval: tuple[float, float] | None
    angle_tolerance_deg: float


@dataclass(frozen=True)
class GoalVerdict:
    """Whether one output meets its target expanded uncertainty (computed by :mod:`budget.advice.targets`).

    ``U`` and ``U_target`` are in ``unit`` (° for an angle, % or °/V for the gain); ``margin_pct`` is
    100·(U_target − U)/U_target, negative when the target is missed; ``basis`` says how U was taken.
    """

    output: str
    label: str
    unit: str
    U_target: float
    U: float
    meets: bool
    margin_pct: float
    p: float
    basis: str


@dataclass(frozen=True)
class Decision:
    """A conformity decision for one output (JCGM 106:2012; the rule is stated per ISO/IEC 17025 7.8.6)."""

    output: str
    label: str
    unit: str
    rule: str
    value: float  # the result the decision is about (measured value, or the estimate in design mode)
    tolerance: tuple[float, float]
    acceptance: tuple[float, float]
    U: float
    decision: str  # "accept" or "reject"
    in_guard_band: bool
    p_conformity: float
    note: str


@dataclass(frozen=True)
class RangeClaim:
    """The claim for the whole range: a conservative envelope of U over the angles (° throughout)."""

    form: str  # "linear": U(θ) = a + b·|θ|; "table": linear interpolation between the rows
    a_deg: float | None
    b: float | None
    table: tuple[tuple[float, float], ...]  # (θ, U) rows of a table claim
    low_deg: float
    high_deg: float
    p: float
    points: tuple[tuple[float, float, float, bool], ...]  # (θ, U computed, envelope, midpoint?) all covered
    statement: str


@dataclass(frozen=True)
class RunResult:
    """Everything a report needs, with provenance."""

    title: str
    tool_version: str
    input_path: str
    input_sha256: str
    created: str
    seed: object
    p: float
    angles: tuple[OutputBudget, ...]
    gain: OutputBudget | None
    gain_summary: GainSummary | None
    warnings: tuple[str, ...]
    inputs: dict[str, InputQuantity]
    rig_raw: dict
    locator_notes: tuple[str, ...]
    joint: dict[str, np.ndarray] = field(repr=False, default_factory=dict)
    assumptions: tuple = ()  # rig.description.Assumption: values the tool supplied, with reasons
    mode: str = "design"  # "design": outputs are what the rig would read; "evaluation": true values
    data: MeasuredDataSummary | None = None
    goals: tuple[GoalVerdict, ...] = ()
    decisions: tuple[Decision, ...] = ()
    decision_rule: str = ""  # the rule in words (ISO/IEC 17025 7.8.6), when [conformity] is given
    range_claim: RangeClaim | None = None
    # The outputs' joint covariance by each method, rows and columns in ``covariance_names`` order
    # (JCGM 102 6.2 for the linear one; the trials' sample covariance for Monte Carlo).
    covariance_names: tuple[str, ...] = ()
    covariance_linear: np.ndarray | None = field(repr=False, default=None)
    covariance_mc: np.ndarray | None = field(repr=False, default=None)

    def component_descriptions(self) -> dict[str, str]:
        """Every component shown in the budgets, in order of first appearance, with what it is."""
        out: dict[str, str] = {}
        for ob in self.outputs:
            for c in ob.components:
                if c.description and c.name not in out:
                    out[c.name] = c.description
        return out

    @property
    def outputs(self) -> tuple[OutputBudget, ...]:
        """Every output budget in report order: angles, then gain and intercept."""
        extra = ()
        if self.gain is not None and self.gain_summary is not None:
            extra = (self.gain, self.gain_summary.intercept)
        return (*self.angles, *extra)

    def summary(self):
        """One row per output (a pandas DataFrame): estimate, u, the result's interval, method, dominant component."""
        from budget.dataframes import summary_frame

        return summary_frame(self)

    def table(self):
        """One row per component per output (a pandas DataFrame), the budget lines as the reports show them."""
        from budget.dataframes import table_frame

        return table_frame(self)

    def to_ufloats(self, method: str = "mc") -> dict:
        """The outputs as ``uncertainties`` values correlated through the joint covariance.

        ``method="mc"`` (Monte Carlo estimates and covariance) or ``"linear"`` (JCGM 100 / JCGM 102 6.2);
        keys are the output names (``P1``, ..., ``gain``, ``intercept``).
        """
        from budget.dataframes import correlated_outputs

        return correlated_outputs(self, method)
