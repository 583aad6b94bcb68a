"""Streamed Monte Carlo statistics (budget.propagation.streaming) and what monte_carlo keeps:
chunked means and covariance against numpy's two-pass np.cov, trial-order outputs on request,
per-trial derived values, growing columns, tails sorted for the intervals."""

from __future__ import annotations

import numpy as np
import pytest

from budget.errors import BudgetInputError
from budget.propagation import Normal, Rectangular, monte_carlo, monte_carlo_u
from budget.propagation import montecarlo as mc_module
from budget.propagation.montecarlo import coverage_intervals
from budget.propagation.streaming import Column, Moments, sort_tails


def _rng(seed: int) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed))


@pytest.mark.parametrize("offset", [0.0, 1e6])
def test_chunked_moments_equal_two_pass_covariance(offset):
    # Chan, Golub and LeVeque (1979) pairwise update against numpy's two-pass np.cov (ddof 1),
    # on chunks of unequal length; the offset checks that a large common mean costs no digits
    # (a one-pass Σy² formula would lose about 12 of them here).
    rng = _rng(1)
    y = rng.normal(size=(3, 10_007)) * np.array([[1.0], [1e-3], [50.0]]) + offset
    y[1] += 0.3 * y[0]
    mom = Moments(3)
    for a, b in ((0, 1), (1, 4000), (4000, 4001), (4001, 10_007)):
        mom.add([row[a:b] for row in y])
    np.testing.assert_allclose(mom.mean, y.mean(axis=1), rtol=1e-13)
    np.testing.assert_allclose(mom.covariance(), np.cov(y), rtol=1e-9, atol=0)


def test_column_preallocated_and_growing_hold_the_same_values():
    v = np.arange(200_003, dtype=float)
    fixed, grown = Column(v.size), Column(None)
    for a in range(0, v.size, 30_000):
        fixed.extend(v[a:a + 30_000])
        grown.extend(v[a:a + 30_000])
    np.testing.assert_array_equal(fixed.array(), v)
    np.testing.assert_array_equal(grown.array(), v)


def _model(a, b):
    return {"x": a, "y": a * b, "z": a + b}


INPUTS = {"a": Normal(1.0, 0.1), "b": Rectangular(-1.0, 1.0)}


@pytest.mark.parametrize("trials", [30_000, None])
def test_joint_keeps_the_outputs_asked_for_in_trial_order(trials, monkeypatch):
    # Small chunks, so the fixed-trial run streams many of them.
    monkeypatch.setattr(mc_module, "CHUNK_VALUES", 7_000)
    res = monte_carlo(_model, INPUTS, trials=trials, rng=_rng(2), joint=("x", "z"),
                      derived={"b_again": lambda out: out["z"] - out["x"]})
    assert set(res.joint) == {"x", "z", "b_again"}
    m = res.trials
    assert all(v.shape == (m,) for v in res.joint.values())
    # The derived values and the kept outputs are aligned trial by trial.
    np.testing.assert_allclose(res.joint["b_again"], res.joint["z"] - res.joint["x"], rtol=0, atol=0)
    np.testing.assert_array_equal(np.sort(res.joint["x"]), res["x"].samples)
    # The streamed covariance is the two-pass covariance of the kept values (ddof 1).
    cov_xz = np.cov(res.joint["x"], res.joint["z"])
    ix, iz = res.names.index("x"), res.names.index("z")
    np.testing.assert_allclose(res.covariance[np.ix_([ix, iz], [ix, iz])], cov_xz, rtol=1e-10)
    assert res["x"].estimate == pytest.approx(float(np.mean(res.joint["x"])), rel=1e-13)


def test_joint_false_keeps_nothing_and_the_results_stay():
    kept = monte_carlo(_model, INPUTS, trials=20_000, rng=_rng(3))
    bare = monte_carlo(_model, INPUTS, trials=20_000, rng=_rng(3), joint=False)
    assert set(kept.joint) == {"x", "y", "z"} and bare.joint == {}
    for k in kept.names:
        assert bare[k].u == kept[k].u and bare[k].interval == kept[k].interval
        np.testing.assert_array_equal(bare[k].samples, kept[k].samples)


def test_joint_and_derived_names_are_checked():
    with pytest.raises(BudgetInputError, match="'joint'"):
        monte_carlo(_model, INPUTS, trials=2_000, rng=_rng(4), joint=("w",))
    with pytest.raises(BudgetInputError, match="'derived'"):
        monte_carlo(_model, INPUTS, trials=2_000, rng=_rng(4), derived={"x": lambda out: out["x"]})


def test_adaptive_run_keeps_exactly_its_trials():
    # JCGM 101 7.9.4: the batch drawn in one model call is cut back to the sequence that met
    # the criterion; the kept columns, the moments and the order statistics agree on M.
    res = monte_carlo(_model, INPUTS, rng=_rng(5), n_dig=1)
    m = res.trials
    assert m % 10_000 == 0
    assert all(res[k].samples.size == m for k in res.names)
    assert all(v.size == m for v in res.joint.values())
    assert res["z"].u == pytest.approx(float(np.std(res.joint["z"], ddof=1)), rel=1e-12)


def test_monte_carlo_u_is_the_u_of_the_same_run():
    # Same draws from the same generator state as monte_carlo with fixed trials; only u is kept.
    full = monte_carlo(_model, INPUTS, trials=30_000, rng=_rng(6), joint=False)
    only = monte_carlo_u(_model, INPUTS, 30_000, rng=_rng(6))
    assert only == {k: full[k].u for k in full.names}
    with pytest.raises(BudgetInputError, match="'trials'"):
        monte_carlo_u(_model, INPUTS, 1, rng=_rng(6))


@pytest.mark.parametrize(("m", "k"), [(1, 1), (7, 1), (100, 5), (100, 25), (10_001, 500), (10_001, 0)])
def test_sort_tails_sorts_both_tails_as_a_full_sort_does(m, k):
    # Against numpy's full sort: the k smallest and k largest values in place, ties and a nan
    # included (nan sorts last in both), and every value of the middle between the tails.
    rng = _rng(m + k)
    y = np.round(rng.normal(size=m), 1)
    if m > 10:
        y[3] = np.nan
    ref = np.sort(y)
    a = y.copy()
    lo, hi = sort_tails(a, k)
    np.testing.assert_array_equal(np.sort(a), ref)  # the same values
    if hi - lo:
        np.testing.assert_array_equal(a[:lo], ref[:lo])
        np.testing.assert_array_equal(a[hi:], ref[hi:])
        assert lo == k and hi == m - k
        assert np.all(a[lo:hi] >= a[lo - 1]) and np.all(a[lo:hi] <= a[hi])
    else:
        np.testing.assert_array_equal(a, ref)


@pytest.mark.parametrize("p", [0.9, 0.95, 0.99])
def test_intervals_from_sorted_tails_equal_those_of_a_full_sort(p):
    # JCGM 101 7.7 and 7.8 read only the M - q smallest and largest values: the result's
    # intervals equal those of numpy's full sort of the same values, and .samples is that sort.
    rng = _rng(5)
    res = monte_carlo(lambda a, b: a * b + np.exp(a), {"a": Normal(0.3, 0.5), "b": Rectangular(-1.0, 2.0)},
                      p=p, trials=50_001, rng=rng)
    assert res.unsorted != (0, 0)
    values = res.tail_sorted.copy()
    full = np.sort(values)
    sym, short = coverage_intervals(full, p)
    assert res.interval == sym and res.shortest == short
    np.testing.assert_array_equal(res.samples, full)
    assert res.unsorted == (0, 0)
    np.testing.assert_array_equal(res.samples, full)
