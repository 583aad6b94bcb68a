"""Validation of the linear method by Monte Carlo (JCGM 101:2008 7.9.2 and clause 8).

The tolerance δ and the endpoint differences are exact arithmetic on given numbers, checked to
rounding (1e-12 relative) [derived from the rules of 7.9.2 and 8.2].
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from budget.errors import BudgetInputError
from budget.propagation import (
    MonteCarloResult,
    Normal,
    linear,
    monte_carlo,
    numerical_tolerance,
    validate,
)


@pytest.mark.parametrize(
    ("u", "n_dig", "delta"),
    [
        # JCGM 101 7.9.2: write u(y) as c·10^l with c an n_dig-digit integer; δ = ½·10^l.
        (0.0539, 2, 0.5e-3),   # 0.0539 → 54·10⁻³ (two digits) → δ = ½·10⁻³ [derived]
        (0.0539, 1, 0.5e-2),   # 5·10⁻² → δ = ½·10⁻²
        (0.0539, 3, 0.5e-4),   # 539·10⁻⁴
        (0.0996, 2, 0.5e-2),   # rounds up into the next decade: 10·10⁻² → δ = ½·10⁻²
        (0.0996, 1, 0.5e-1),   # 1·10⁻¹
        (9.96, 2, 0.5),        # 10·10⁰
        (35.0, 2, 0.5),
        (1234.0, 2, 50.0),     # 12·10²
        # 7.9.2 examples (value from memory): a 100 g standard with u(y) = 0.000 35 g:
        # two digits 35·10⁻⁵ g → δ = 0.000 005 g; one digit 4·10⁻⁴ g → δ = 0.000 05 g.
        (0.00035, 2, 0.5e-5),
        (0.00035, 1, 0.5e-4),
    ],
)
def test_numerical_tolerance(u, n_dig, delta):
    assert numerical_tolerance(u, n_dig) == pytest.approx(delta, rel=1e-12)


@pytest.mark.parametrize("n_dig", [0, -1, 2.0, "2"])
def test_bad_n_dig(n_dig):
    with pytest.raises(BudgetInputError, match=r"'n_dig' field.*integer >= 1"):
        numerical_tolerance(0.1, n_dig)


def _lin(estimate: float = 1.234, u: float = 0.0539):
    return linear(lambda a: a, {"a": Normal(estimate, u)})


def _mc(low: float, high: float, short: tuple[float, float] | None = None, p: float = 0.95):
    return MonteCarloResult(
        output="y", estimate=0.5 * (low + high), u=0.05, interval=(low, high),
        shortest=short or (low, high), trials=10**6, p=p, seed=1, adaptive=False,
        converged=True, tail_sorted=np.array([low, high]),
    )


def test_d_low_d_high_and_verdict_validated():
    # JCGM 101 8.2: d_low = |y − U − y_low|, d_high = |y + U − y_high|, validated when both ≤ δ.
    lin = _lin()
    lo, hi = lin.estimate - lin.U, lin.estimate + lin.U
    v = validate(lin, _mc(lo - 0.0003, hi + 0.0004), n_dig=2)
    assert v.delta == pytest.approx(0.5e-3, rel=1e-12)
    assert v.d_low == pytest.approx(0.0003, rel=1e-9)
    assert v.d_high == pytest.approx(0.0004, rel=1e-9)
    assert v.validated
    text = v.verdict()
    assert text.startswith("The linear method is validated by Monte Carlo at 2 significant digits")
    assert "JCGM 101 clause 8" in text and "NOT" not in text


def test_verdict_not_validated():
    lin = _lin()
    lo, hi = lin.estimate - lin.U, lin.estimate + lin.U
    v = validate(lin, _mc(lo + 0.0002, hi + 0.0006), n_dig=2)
    assert v.d_low == pytest.approx(0.0002, rel=1e-9)
    assert v.d_high == pytest.approx(0.0006, rel=1e-9)
    assert not v.validated
    text = v.verdict()
    assert "NOT validated at 2 significant digits" in text
    assert "report the Monte Carlo coverage interval" in text
    # At one significant digit δ = 0.005, and the same intervals agree.
    assert validate(lin, _mc(lo + 0.0002, hi + 0.0006), n_dig=1).validated


def test_shortest_interval_can_be_compared():
    lin = _lin()
    lo, hi = lin.estimate - lin.U, lin.estimate + lin.U
    mc = _mc(lo - 0.01, hi - 0.01, short=(lo, hi))
    assert not validate(lin, mc).validated
    v = validate(lin, mc, interval="shortest")
    assert v.validated and v.interval == "shortest" and v.d_low == pytest.approx(0.0, abs=1e-15)


def test_validation_errors():
    lin = _lin()
    with pytest.raises(BudgetInputError, match=r"'p' field.*same for both methods"):
        validate(lin, _mc(1.0, 1.5, p=0.99))
    with pytest.raises(BudgetInputError, match="'interval' field"):
        validate(lin, _mc(1.0, 1.5), interval="widest")
    with pytest.raises(BudgetInputError, match="'n_dig' field"):
        validate(lin, _mc(1.0, 1.5), n_dig=0)


def test_end_to_end_linear_normal_model_validates():
    # Linear model, normal inputs: the MC endpoints differ from y ± 1.96u by sampling error
    # only (se ≈ 0.008u at M = 2·10⁵), far inside δ = 0.5 at one significant digit of u = 1.3.
    inputs = {"a": Normal(0.0, 1.0), "b": Normal(0.0, 0.8)}
    lin = linear(lambda a, b: a + b, inputs)
    mc = monte_carlo(lambda a, b: a + b, inputs, trials=200_000,
                     rng=np.random.default_rng(np.random.SeedSequence(8)))
    assert validate(lin, mc, n_dig=1).validated


def test_end_to_end_zero_sensitivity_fails():
    # y = x² at x = 0: the linear method gives u = 0 while the true 95 % interval is
    # [~0.001, ~5]·u² (chi-square with one degree of freedom) [derived]: never validated.
    inputs = {"x": Normal(0.0, 1.0)}
    lin = linear(lambda x: x**2, inputs)
    mc = monte_carlo(lambda x: x**2, inputs, trials=20_000,
                     rng=np.random.default_rng(np.random.SeedSequence(9)))
    v = validate(lin, mc)
    assert not v.validated
    assert v.d_high == pytest.approx(mc.interval[1], rel=1e-12)


def test_validation_is_frozen():
    v = validate(_lin(), _mc(1.0, 1.5))
    with pytest.raises(dataclasses.FrozenInstanceError):
        v.validated = True  # type: ignore[misc]
