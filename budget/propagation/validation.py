"""Validating the linear method against Monte Carlo (JCGM 101:2008 clause 8)."""

from __future__ import annotations

from dataclasses import dataclass

from budget.errors import field_error
from budget.propagation.lpu import LinearResult
from budget.propagation.montecarlo import MonteCarloResult, numerical_tolerance

__all__ = ["Validation", "validate"]


@dataclass(frozen=True)
class Validation:
    """Outcome of the clause 8 comparison.

    ``delta`` is the numerical tolerance of u(y) at ``n_dig`` significant digits;
    ``d_low = |y − U − y_low|`` and ``d_high = |y + U − y_high|``.
    """

    delta: float
    d_low: float
    d_high: float
    validated: bool
    n_dig: int
    interval: str

    def verdict(self) -> str:
        """The comparison in words, for reports."""
        if self.validated:
            return (
                f"The linear method is validated by Monte Carlo at {self.n_dig} significant "
                f"digits (d_low = {self.d_low:.2g}, d_high = {self.d_high:.2g} <= "
                f"delta = {self.delta:.2g}; JCGM 101 clause 8)."
            )
        return (
            f"The linear method is NOT validated at {self.n_dig} significant digits "
            f"(d_low = {self.d_low:.2g}, d_high = {self.d_high:.2g}, delta = {self.delta:.2g}; "
            "JCGM 101 clause 8): report the Monte Carlo coverage interval."
        )


def validate(lin: LinearResult, mc: MonteCarloResult, n_dig: int = 2,
             interval: str = "symmetric") -> Validation:
    """Compare the linear interval y ± U with the Monte Carlo coverage interval.

    Parameters
    ----------
    lin, mc : results for the same output at the same p.
    n_dig : int
        Significant digits of u(y) that matter (JCGM 101 7.9.2, 8.2).
    interval : {"symmetric", "shortest"}
        Which Monte Carlo interval to compare with: the probabilistically
        symmetric one suits a symmetric output PDF, the shortest one otherwise.

    Notes
    -----
    JCGM 101 8.2: δ = ½·10^l from u(y) = c·10^l with n_dig digits in c;
    validated when both d_low and d_high are at most δ.
    """
    if abs(lin.p - mc.p) > 1e-12:
        raise field_error("p", f"the same for both methods ({lin.p:g})", mc.p)
    if interval not in ("symmetric", "shortest"):
        raise field_error("interval", "'symmetric' or 'shortest'", interval)
    lo, hi = mc.interval if interval == "symmetric" else mc.shortest
    delta = numerical_tolerance(lin.u, n_dig)
    d_low = abs(lin.estimate - lin.U - lo)
    d_high = abs(lin.estimate + lin.U - hi)
    return Validation(delta=delta, d_low=d_low, d_high=d_high,
                      validated=bool(d_low <= delta and d_high <= delta),
                      n_dig=n_dig, interval=interval)
