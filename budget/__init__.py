"""thetabudget: uncertainty budgets for camera-based pointer-angle measurement.

Scope: JCGM 100 linear propagation and JCGM 101 Monte Carlo for the angle of a
pointer located in camera images, and for the static gain from a voltage sweep.
It does not control hardware, grab frames from a camera, or compute CMC claims.

Public names: :func:`run` (a rig file's full budget, :mod:`budget.api`) and :class:`RunResult`
(:mod:`budget.results`), loaded on first use (PEP 562) so that ``import budget`` stays light.
"""

__version__ = "0.1.0"
__all__ = ["run", "RunResult", "__version__"]


def __getattr__(name: str):
    if name == "run":
        from budget.api import run

        return run
    if name == "RunResult":
        from budget.results import RunResult

        return RunResult
    raise AttributeError(f"module 'budget' has no attribute {name!r}")
