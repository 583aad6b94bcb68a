"""The propagation engine: JCGM 100 linear method, JCGM 101 Monte Carlo, clause 8 validation.

It knows nothing of cameras: a model is any vectorized function of named inputs.
"""

from budget.propagation.distributions import (
    Arcsine,
    CurvilinearTrapezoid,
    Distribution,
    Normal,
    Rectangular,
    StudentT,
    Trapezoidal,
    Triangular,
)
from budget.propagation.joint import JointComponent, MultivariateT
from budget.propagation.lpu import (
    GroupRow,
    LinearResult,
    MultiLinearResult,
    Row,
    coverage_factor,
    linear,
)
from budget.propagation.montecarlo import (
    MonteCarloResult,
    MultiMonteCarloResult,
    coverage_intervals,
    monte_carlo,
    monte_carlo_u,
    numerical_tolerance,
)
from budget.propagation.quantities import InputQuantity
from budget.propagation.rounding import interval_statement, round_pair, statement
from budget.propagation.validation import Validation, validate

__all__ = [
    "Arcsine", "CurvilinearTrapezoid", "Distribution", "Normal", "Rectangular", "StudentT",
    "Trapezoidal", "Triangular", "MultivariateT", "JointComponent",
    "InputQuantity", "linear", "monte_carlo", "monte_carlo_u", "validate",
    "LinearResult", "MultiLinearResult", "Row", "GroupRow", "MonteCarloResult",
    "MultiMonteCarloResult", "Validation", "coverage_factor", "coverage_intervals",
    "numerical_tolerance", "round_pair", "statement", "interval_statement",
]
