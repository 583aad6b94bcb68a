"""Rounding of results for a statement (JCGM 100:2008 7.2.6; statement form 7.2.4).

Rounding is exact decimal arithmetic: strings are compared exactly.
"""

from __future__ import annotations

import math
from decimal import Decimal

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from budget.errors import BudgetInputError
from budget.propagation import interval_statement, round_pair, statement


@pytest.mark.parametrize(
    ("estimate", "u", "kwargs", "expected"),
    [
        # JCGM 100 7.2.6: at most two significant digits for u, the estimate to the same place.
        (1.23412, 0.001534, {}, ("1.2341", "0.0015")),
        (3.14159, 0.0996, {}, ("3.14", "0.10")),        # 99.6 → 100: the last digit moves a decade
        (1.23412, 0.001534, {"digits": 1}, ("1.234", "0.002")),
        (12345.6, 27.3, {}, ("12346", "27")),
        (12345.6, 273.0, {}, ("12350", "270")),
        (-0.000123456, 0.00000456, {}, ("-0.0001235", "0.0000046")),
        (0.0, 0.0015, {}, ("0.0000", "0.0015")),
        # 7.2.6 examples (value from memory): y = 10.057 62 Ω with u_c = 27 mΩ is stated as
        # 10.058 Ω; u_c = 10.47 mΩ may be rounded up to 11 mΩ.
        (10.05762, 0.027, {}, ("10.058", "0.027")),
        (1.0, 0.01047, {"mode": "up"}, ("1.000", "0.011")),
        (1.0, 0.01047, {}, ("1.000", "0.010")),
        (1.0, 0.0991, {"mode": "up"}, ("1.00", "0.10")),  # rounding up into the next decade
    ],
)
def test_round_pair(estimate, u, kwargs, expected):
    assert round_pair(estimate, u, **kwargs) == expected


def test_statement_format():
    # Form of JCGM 100 7.2.4: "y = (value ± U) unit, k = …, p ≈ … %".
    assert statement("y", 1.234, 0.0015, 2.12, 0.95, "mg") == "y = (1.2340 ± 0.0015) mg, k = 2.12, p ≈ 95 %"
    text = statement("K", 26.98, 0.0512, 2.0, 0.9545, "°/V")
    assert text == "K = (26.980 ± 0.051) °/V, k = 2.00, p ≈ 95.45 %"
    assert statement("n", 7.0, 0.25, 1.96, 0.95) == "n = (7.00 ± 0.25), k = 1.96, p ≈ 95 %"


def test_interval_statement_format():
    # JCGM 101 7.6–7.8: estimate, u and the coverage interval at the decimal place of u.
    text = interval_statement("y", 1.23412, 0.0754, (1.0834, 1.3825), 0.95, "mg")
    assert text == "y = 1.234 mg, u = 0.075 mg, 95 % coverage interval [1.083, 1.383] mg"


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"estimate": 1.0, "uncertainty": 0.1, "digits": 3}, "digits"),
        ({"estimate": 1.0, "uncertainty": 0.1, "digits": 0}, "digits"),
        ({"estimate": 1.0, "uncertainty": 0.1, "mode": "floor"}, "mode"),
        ({"estimate": 1.0, "uncertainty": 0.0}, "uncertainty"),
        ({"estimate": 1.0, "uncertainty": -0.1}, "uncertainty"),
        ({"estimate": 1.0, "uncertainty": math.nan}, "uncertainty"),
        ({"estimate": 1.0, "uncertainty": math.inf}, "uncertainty"),
        ({"estimate": math.nan, "uncertainty": 0.1}, "estimate"),
        ({"estimate": math.inf, "uncertainty": 0.1}, "estimate"),
    ],
)
def test_bad_rounding_input(kwargs, field):
    with pytest.raises(BudgetInputError, match=f"'{field}' field"):
        round_pair(**kwargs)


@settings(max_examples=100, deadline=None, derandomize=True)
@given(
    mantissa=st.floats(min_value=1.0, max_value=9.999),
    exponent=st.integers(min_value=-8, max_value=6),
    estimate=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False),
    digits=st.sampled_from([1, 2]),
)
def test_rounded_u_has_at_most_the_requested_digits(mantissa, exponent, estimate, digits):
    # 7.2.6 [derived]: the rounded u has at most `digits` significant digits, differs from u by
    # at most half a unit in its last kept place, and the estimate is rounded to that place.
    u = mantissa * 10.0**exponent
    y_txt, u_txt = round_pair(estimate, u, digits=digits)
    ud, yd = Decimal(u_txt), Decimal(y_txt)
    assert len(ud.normalize().as_tuple().digits) <= digits
    quantum = Decimal(1).scaleb(ud.adjusted() - digits + 1)  # place of the last kept digit
    assert abs(ud - Decimal(repr(u))) <= quantum / 2
    assert abs(yd - Decimal(repr(estimate))) <= quantum / 2
    assert yd % quantum == 0
    if quantum < 1:  # decimals shown: the same number for both
        assert yd.as_tuple().exponent == ud.as_tuple().exponent == quantum.as_tuple().exponent


@pytest.mark.parametrize(
    ("estimate", "u", "expected"),
    [
        # JCGM 100 7.2.6 [derived]: the estimate is rounded to the place of the last digit of u,
        # however many digits that leaves; 28 digits is only the default Decimal precision,
        # not a limit of the rule. Exact strings: the rounding is decimal and deterministic.
        (1e30, 0.001, ("1000000000000000000000000000000.0000", "0.0010")),
        (123456.789, 1.5e-30, ("123456.7890000000000000000000000000000", "0.0000000000000000000000000000015")),
        (-2.5e12, 3.3e-20, ("-2500000000000.000000000000000000000", "0.000000000000000000033")),
    ],
)
def test_round_pair_beyond_28_digits(estimate, u, expected):
    assert round_pair(estimate, u) == expected


@pytest.mark.parametrize(("estimate", "u", "expected"), [
    # [derived] an estimate that rounds to zero at the place of u is stated as 0, without a
    # sign: "-0.0000" would claim a sign the rounded value does not have.
    (-0.00001, 0.0015, ("0.0000", "0.0015")),
    (-0.4, 27.0, ("0", "27")),
])
def test_negative_estimate_rounding_to_zero_has_no_sign(estimate, u, expected):
    assert round_pair(estimate, u) == expected


def test_subnormal_uncertainty():
    # [derived] u = 1e-320 (subnormal): 10.0**e loses precision there, the decimal exponent does not.
    assert round_pair(1.0, 1.5e-320)[1] == "0." + "0" * 319 + "15"
