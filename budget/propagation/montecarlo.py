"""Propagation of distributions by Monte Carlo (JCGM 101:2008 clause 7).

Inputs are sampled in chunks and the outputs streamed (:mod:`budget.propagation.streaming`),
so memory stays bounded by the outputs kept: one float per trial and output, sorted in
place for the intervals, plus a trial-order copy of the outputs asked for (``joint``).
10⁷ trials of a ten-input model never hold all input samples at once, nor a matrix of every
output of every trial.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Collection, Mapping
from dataclasses import dataclass, field

import numpy as np

from budget.errors import field_error
from budget.propagation.lpu import check_p
from budget.propagation.model import (
    SINGLE,
    Model,
    additive_sets,
    correlation_from_covariance,
    correlation_matrix,
    evaluate,
)
from budget.propagation.quantities import as_quantities
from budget.propagation.sampling import Sampler
from budget.propagation.streaming import Accumulator, Derived, Moments

__all__ = ["MonteCarloResult", "MultiMonteCarloResult", "monte_carlo", "monte_carlo_u",
           "coverage_intervals", "numerical_tolerance"]

CHUNK_VALUES = 1_048_576
"""Input values drawn per model call (trials × inputs): a call's own cost spread over many trials
(against 2^18: the sweep template's MC 0.79 → 0.57 s, benchmarks/README.md), arrays of a few MB."""
MIN_CHUNK = 1000
"""Fewest trials per model call, however many inputs."""
MAX_CHUNK = 16_384
"""Most trials per model call, however few inputs vary (a call's own cost spread over many trials: the
engine benchmark's models 1.04–1.17 → 0.82–0.91 of a plain numpy loop against 4096). A model whose own
arrays are larger per trial says how many trials a call should have at most (``model.max_chunk``: the
virtual rig's (points, trials) arrays stay in the cache at 4096)."""
MAX_TRIALS = 10_000_000
"""Upper bound of the adaptive procedure; reaching it is reported as a warning."""
MAX_VALUES = 100_000_000
"""Most output values kept (trials × outputs, 0.8 GB per copy): more is refused before it is drawn."""


def _check_size(trials: int, outputs: int) -> None:
    """Refuse, before the columns of the outputs are allocated, more values than :data:`MAX_VALUES`."""
    if trials * outputs > MAX_VALUES:
        raise field_error("trials", f"at most {MAX_VALUES // outputs:,} for a model with {outputs} outputs "
                          f"(trials × outputs <= {MAX_VALUES:,}, the memory the results take)", trials)


@dataclass(frozen=True)
class MonteCarloResult:
    """Monte Carlo result for one output (JCGM 101 7.6–7.8).

    ``interval`` is the probabilistically symmetric coverage interval (7.7),
    ``shortest`` the shortest one (7.8); both are (low, high). ``samples`` is
    the sorted output values (the discrete representation G of 7.5).

    The intervals read only the M − q smallest and the M − q largest values, so the engine
    sorts those tails (``tail_sorted``) and leaves the values between them, ``unsorted``
    (a slice), in any order; ``samples`` sorts them in place when first read. A run whose
    report does not need the whole distribution then never pays a full sort.
    """

    output: str
    estimate: float
    u: float
    interval: tuple[float, float]
    shortest: tuple[float, float]
    trials: int
    p: float
    seed: object
    adaptive: bool
    converged: bool
    tail_sorted: np.ndarray = field(repr=False)
    warnings: tuple[str, ...] = ()
    unsorted: tuple[int, int] = (0, 0)

    @property
    def samples(self) -> np.ndarray:
        """All M values, sorted (the middle between the sorted tails is sorted on first read)."""
        lo, hi = self.unsorted
        if hi - lo > 1:
            self.tail_sorted[lo:hi].sort()  # every value there lies between the two tails
            object.__setattr__(self, "unsorted", (0, 0))
        return self.tail_sorted


@dataclass(frozen=True)
class MultiMonteCarloResult:
    """Monte Carlo for several outputs: per-output results and their joint covariance.

    ``joint`` holds, in trial order, the outputs asked for with ``monte_carlo(joint=...)``
    (all of them by default) and the per-trial values of ``derived``.
    """

    results: dict[str, MonteCarloResult]
    names: tuple[str, ...]
    covariance: np.ndarray
    trials: int
    seed: object
    joint: dict[str, np.ndarray] = field(repr=False)

    def __getitem__(self, name: str) -> MonteCarloResult:
        return self.results[name]

    @property
    def correlation(self) -> np.ndarray:
        """Output correlations; 0 for an output with u = 0 (see ``correlation_from_covariance``)."""
        return correlation_from_covariance(self.covariance)


def _symmetric_ranks(m: int, p: float) -> tuple[int, int]:
    """q and r of JCGM 101 7.7.2 for M = m values (r 1-based); M >= q + 1 is required."""
    pm = p * m
    q = int(pm) if float(pm).is_integer() else int(pm + 0.5)
    if q >= m:  # y_(r+q) with r >= 1 needs M >= q + 1
        raise field_error("sorted_y", f"at least {q + 1} values for p = {p:g} (JCGM 101 7.7.2)",
                          f"{m} values")
    r = (m - q) // 2 if (m - q) % 2 == 0 else int((m - q + 1) / 2)
    return q, max(r, 1)


def coverage_intervals(sorted_y: np.ndarray, p: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """Probabilistically symmetric and shortest coverage intervals of sorted values.

    Only the M − q smallest and the M − q largest values are read, so values sorted in those
    tails alone (:func:`budget.propagation.streaming.sort_tails` with k = M − q) give the same
    intervals as a full sort.

    Notes
    -----
    JCGM 101 7.7: q = pM if integer, else int(pM + ½); y_low = y_(r),
    y_high = y_(r+q) with r = (M − q)/2 if an integer, else int((M − q + 1)/2)
    (1-based). JCGM 101 7.8: the shortest is y_(r*), y_(r*+q) with r* minimizing
    y_(r+q) − y_(r), r = 1, …, M − q. Both need M >= q + 1 values; fewer raise
    :class:`budget.errors.BudgetInputError`.
    """
    m = sorted_y.size
    q, r = _symmetric_ranks(m, p)
    symmetric = (float(sorted_y[r - 1]), float(sorted_y[r + q - 1]))
    widths = sorted_y[q:] - sorted_y[: m - q]
    rs = int(np.argmin(widths))
    shortest = (float(sorted_y[rs]), float(sorted_y[rs + q]))
    return symmetric, shortest


def numerical_tolerance(u: float, n_dig: int) -> float:
    """δ = ½·10^l where u written with n_dig significant digits is c·10^l (JCGM 101 7.9.2)."""
    if not (isinstance(n_dig, int) and n_dig >= 1):
        raise field_error("n_dig", "an integer >= 1", n_dig)
    if u <= 0 or not math.isfinite(u):
        return 0.0
    l = math.floor(math.log10(u)) - (n_dig - 1)
    # A u that rounds up to the next decade (e.g. 9.96 at two digits) moves l up.
    if round(u / 10.0**l) >= 10**n_dig:
        l += 1
    return 0.5 * 10.0**l


def _summaries(y: np.ndarray, p: float) -> tuple[float, float, float, float]:
    """Mean, u and the probabilistically symmetric interval of one sequence (JCGM 101 7.9.4 b-d).

    The interval needs two order statistics, so the values are partitioned in place (``y`` is the
    caller's own copy), not sorted.
    """
    q, r = _symmetric_ranks(y.size, p)
    mean, sd = float(y.mean()), float(y.std(ddof=1))
    y.partition((r - 1, r + q - 1))
    return mean, sd, float(y[r - 1]), float(y[r + q - 1])


def chunk_trials(model, n_inputs: int) -> int:
    """Trials per model call: :data:`CHUNK_VALUES` input values, within [:data:`MIN_CHUNK`, :data:`MAX_CHUNK`],
    and no more than the model's ``max_chunk`` if it declares one."""
    chunk = min(MAX_CHUNK, max(MIN_CHUNK, CHUNK_VALUES // max(1, n_inputs)))
    cap = getattr(model, "max_chunk", None)
    return chunk if cap is None else max(1, min(chunk, int(cap)))


def monte_carlo(
    model: Model,
    inputs: Mapping,
    p: float = 0.95,
    trials: int | None = None,
    *,
    rng: np.random.Generator,
    correlation: Mapping[tuple[str, str], float] | None = None,
    n_dig: int = 2,
    max_trials: int = MAX_TRIALS,
    progress: Callable[[int], None] | None = None,
    joint: bool | Collection[str] = True,
    derived: Derived | None = None,
) -> MonteCarloResult | MultiMonteCarloResult:
    """Propagate the input distributions through ``model`` by Monte Carlo.

    Parameters
    ----------
    model : callable
        Vectorized model ``f(**arrays) -> array`` or ``-> {name: array}``.
    inputs : mapping
        Input names to :class:`Distribution` or :class:`InputQuantity`.
    p : float
        Coverage probability.
    trials : int, optional
        Fixed number of trials M; ``None`` runs the adaptive procedure (JCGM 101 7.9).
    rng : numpy.random.Generator
        Source of random numbers; its seed entropy is recorded in the result.
    correlation : mapping, optional
        ``{(a, b): r}`` between Normal inputs (multivariate normal, JCGM 101 6.4.8).
    n_dig : int
        Significant digits of u(y) the adaptive procedure stabilizes (7.9.2).
    max_trials : int
        Cap of the adaptive procedure.
    progress : callable, optional
        Called with the number of trials done so far.
    joint : bool or collection of str
        Outputs of a multi-output model also kept in trial order in ``joint`` (True: all,
        False: none); the intervals and covariance never need them.
    derived : mapping, optional
        ``{name: f(outputs) -> array}``: one more value per trial computed from each chunk's
        outputs (a mapping of output arrays), kept in trial order in ``joint``.

    Notes
    -----
    Estimate and u from all M values (7.6, u with M − 1); intervals per 7.7 and
    7.8. Adaptive: sequences of M = max(J, 10⁴) trials with J the least integer
    ≥ 100/(1 − p), until twice the standard deviation of each sequence average
    (y, u, y_low, y_high) is at most δ of 7.9.2 for every output (7.9.4). Means and
    the covariance are accumulated chunk by chunk (:class:`streaming.Moments`).
    """
    p = check_p(p)
    q = as_quantities(inputs)
    if not isinstance(rng, np.random.Generator):
        raise field_error("rng", "a numpy.random.Generator", rng)
    r = correlation_matrix(list(q), correlation)
    sampler = Sampler(q, r, additive_sets(model, q))
    j_min = math.ceil(100.0 / (1.0 - p) - 1e-9)
    seed = getattr(getattr(rng.bit_generator, "seed_seq", None), "entropy", None)
    chunk = chunk_trials(model, len(q))
    warns: list[str] = []
    if trials is not None:
        if not isinstance(trials, int | np.integer) or trials < j_min:
            raise field_error("trials", f"an integer >= {j_min} (100/(1-p), JCGM 101 7.9.4)", trials)
        acc = Accumulator(int(trials), joint, derived)
        done = 0
        while done < trials:
            n = min(chunk, int(trials) - done)
            out = evaluate(model, sampler.draw(rng, n), n)
            if not done:
                _check_size(int(trials), len(out))
            acc.add(out)
            done += n
        if progress:
            progress(int(trials))
        converged, adaptive = True, False
    else:
        acc = Accumulator(None, joint, derived, blocks=True)  # each sequence's values kept as its own block
        seq = max(j_min, 10_000)
        stats: dict[str, list[tuple[float, float, float, float]]] = {}
        converged, adaptive, h = False, True, 0
        while h * seq < max_trials and not converged:
            # One sequence (7.9.4 b), drawn and streamed in chunks; its summaries (c, d) from
            # its own values, then the criterion after every sequence (f-h).
            parts: dict[str, list[np.ndarray]] = {}
            done = 0
            while done < seq:
                n = min(chunk, seq - done)
                out = evaluate(model, sampler.draw(rng, n), n)
                if not h and not done:  # the outputs kept must fit: the procedure stops there
                    max_trials = min(max_trials, max(seq, MAX_VALUES // len(out) // seq * seq))
                acc.add(out)
                for k, v in out.items():
                    parts.setdefault(k, []).append(v)
                done += n
            for k, v in parts.items():
                y = np.concatenate(v)
                stats.setdefault(k, []).append(_summaries(y, p))
                acc.add_block(k, y)
            h += 1
            converged = h >= 2 and all(_stable(np.array(st), n_dig) for st in stats.values())
            if progress:
                progress(h * seq)
        if not converged:
            warns.append(
                f"The adaptive Monte Carlo procedure did not stabilize {n_dig} significant "
                f"digits within {max_trials} trials (JCGM 101 7.9)."
            )
    m = acc.moments.n
    cov = np.atleast_2d(acc.moments.covariance())
    results: dict[str, MonteCarloResult] = {}
    for i, k in enumerate(acc.names):
        q, _ = _symmetric_ranks(m, p)
        s, middle = acc.tail_sorted_values(k, m - q)
        sym, short = coverage_intervals(s, p)
        results[k] = MonteCarloResult(
            output=k, estimate=float(acc.moments.mean[i]), u=math.sqrt(max(float(cov[i, i]), 0.0)),
            interval=sym, shortest=short, trials=m, p=p, seed=seed, adaptive=adaptive,
            converged=converged, tail_sorted=s, warnings=tuple(warns), unsorted=middle,
        )
    if acc.names == (SINGLE,):
        return results[SINGLE]
    return MultiMonteCarloResult(results=results, names=acc.names, covariance=cov,
                                 trials=m, seed=seed, joint=acc.joint_values())


def monte_carlo_u(
    model: Model,
    inputs: Mapping,
    trials: int,
    *,
    rng: np.random.Generator,
    correlation: Mapping[tuple[str, str], float] | None = None,
) -> dict[str, float]:
    """Standard uncertainty of every output from ``trials`` Monte Carlo trials, and nothing else.

    Parameters
    ----------
    model : callable
        Vectorized model, as for :func:`monte_carlo`.
    inputs : mapping
        Input names to :class:`Distribution` or :class:`InputQuantity`.
    trials : int
        Number of trials M (at least 2).
    rng : numpy.random.Generator
        Source of random numbers.
    correlation : mapping, optional
        ``{(a, b): r}`` between Normal inputs.

    Returns
    -------
    dict
        ``{output name: u}`` (the model's single output is named ``"y"``).

    Notes
    -----
    Same sampling as :func:`monte_carlo` with fixed trials (the same draws from the same
    generator state), but no output value is kept and nothing is sorted: for figures that
    need only u(y) = s with M − 1 (JCGM 101 7.6), such as one budget component at a time.
    """
    q = as_quantities(inputs)
    if not isinstance(rng, np.random.Generator):
        raise field_error("rng", "a numpy.random.Generator", rng)
    if not isinstance(trials, int | np.integer) or trials < 2:
        raise field_error("trials", "an integer >= 2", trials)
    sampler = Sampler(q, correlation_matrix(list(q), correlation), additive_sets(model, q))
    chunk = chunk_trials(model, len(q))
    moments: Moments | None = None
    names: tuple[str, ...] = ()
    done = 0
    while done < trials:
        n = min(chunk, int(trials) - done)
        out = evaluate(model, sampler.draw(rng, n), n)
        if moments is None:
            names, moments = tuple(out), Moments(len(out))
        moments.add([out[k] for k in names])
        done += n
    cov = moments.covariance()
    return {k: math.sqrt(max(float(cov[i, i]), 0.0)) for i, k in enumerate(names)}


def _stable(seq_stats: np.ndarray, n_dig: int) -> bool:
    """JCGM 101 7.9.4 step (f)-(g): 2·s ≤ δ for y, u, y_low and y_high."""
    h = seq_stats.shape[0]
    sds = seq_stats.std(axis=0, ddof=1) / math.sqrt(h)
    # u(y) of all h sequences pooled: within-sequence plus between-sequence variance
    # (sequences of equal length, so the weights cancel to this form).
    u_all = float(np.sqrt(np.mean(seq_stats[:, 1] ** 2) + np.var(seq_stats[:, 0])))
    delta = numerical_tolerance(u_all, n_dig)
    return bool(np.all(2.0 * sds <= delta))
