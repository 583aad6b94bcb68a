"""The Python API: ``budget.run(rig)`` gives the same :class:`~budget.results.RunResult` as ``thetabudget run``.

It reads the rig file (and the measured data it names), runs both methods, and adds the file's goal
verdicts, conformity decisions and range claim, as the command does. Reports and DataFrames read the
result (:meth:`RunResult.summary`, :meth:`RunResult.table`, :meth:`RunResult.to_ufloats`).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

__all__ = ["run"]


def run(rig, *, seed: int | None = None, trials: int | None = None, p: float | None = None):
    """Run a rig's full budget by both methods.

    Parameters
    ----------
    rig : str, Path or RigDescription
        A rig file's path, or a rig already read (:func:`budget.inputs.rig_file.load_rig`); a rig that
        names measured data must be given as a path (its data file is read relative to it).
    seed : int, optional
        Seed of the random generator; None draws one (recorded in ``result.seed``, short enough to retype).
    trials : int, optional
        Fixed Monte Carlo trials; None runs the adaptive procedure (JCGM 101 7.9).
    p : float, optional
        Coverage probability; None (default) takes the ``[goal]`` p, else 0.95, as the command does. A value
        that differs from the ``[goal]`` p is refused (a target is judged at its own p).

    Returns
    -------
    RunResult

    Notes
    -----
    The command line also fixes glibc's malloc thresholds for its process (:func:`budget.heap.keep_heap`),
    which spares a long sweep's Monte Carlo many page faults; a program may call it once itself. It is
    not called here, because it changes how the whole process returns memory.
    """
    from budget.advice.range_claim import claim_for_range
    from budget.advice.targets import run_p, with_verdicts
    from budget.commands.common import make_rng
    from budget.inputs.data_csv import read_rig_data
    from budget.inputs.rig_file import load_rig
    from budget.propagation.lpu import check_p
    from budget.rig.budget import run_budget
    from budget.rig.evaluation import load_evaluation

    path = None
    if isinstance(rig, str | Path):
        path = Path(rig)
        rig = load_rig(path)
    ev = load_evaluation(rig, read_rig_data(rig))
    rng = make_rng(seed)
    p_run = run_p(None if p is None else check_p(p), rig, "p =")
    result = run_budget(ev.rig, rng=rng, p=p_run, trials=trials, input_path=path or "", evaluation=ev)
    result = with_verdicts(rig, result)
    if rig.range_claim is not None:
        result = replace(result, range_claim=claim_for_range(ev.rig, result, rng=rng, trials=trials))
    return result
