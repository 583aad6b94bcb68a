"""Histogram bins of Monte Carlo output values, shared by the workbook and the plots."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from budget.propagation import MonteCarloResult

__all__ = ["Histogram", "histogram"]

BINS = 50
TAIL = 5e-4
"""The bins span the central 99.9 % of the values, widened to hold every interval drawn."""


@dataclass(frozen=True)
class Histogram:
    """Equal-width bins; ``inside`` counts the values in the probabilistically symmetric interval."""

    edges: np.ndarray
    counts: np.ndarray
    inside: np.ndarray
    below: int
    above: int

    @property
    def centres(self) -> np.ndarray:
        return 0.5 * (self.edges[:-1] + self.edges[1:])


def histogram(mc: MonteCarloResult, extra: tuple[float, ...] = (), bins: int = BINS) -> Histogram:
    """Bin ``mc.samples`` (sorted) over a range that shows the tails and every interval end."""
    y = np.asarray(mc.samples, dtype=float)
    n = y.size
    lo_i, hi_i = int(TAIL * (n - 1)), int(np.ceil((1 - TAIL) * (n - 1)))
    ends = [y[lo_i], y[hi_i], *mc.interval, *mc.shortest, *extra]
    lo, hi = min(ends), max(ends)
    if not hi > lo:
        lo, hi = lo - 0.5, hi + 0.5
    edges = np.linspace(lo, hi, bins + 1)
    counts, _ = np.histogram(y, bins=edges)
    a, b = mc.interval
    inside, _ = np.histogram(y[(y >= a) & (y <= b)], bins=edges)
    below = int(np.searchsorted(y, lo, side="left"))
    above = int(n - np.searchsorted(y, hi, side="right"))
    return Histogram(edges=edges, counts=counts, inside=inside, below=below, above=above)
