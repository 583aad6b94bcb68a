"""The derived numbers and tolerances of references/*.toml come from tools/reference_tolerances.py.

The script recomputes each Monte Carlo tolerance from its standard error (and each exact
output quantile from the exact output distribution); here every case-file tolerance must lie
between the script's value and 10 % above it (rounded up, never down), and the exact numbers
that the case files and tests quote must be the script's.
"""

from __future__ import annotations

import math

import pytest
from scipy import stats

from budget.reference_cases import load_cases
from tests.paths import REFERENCES, load_tool

tool = load_tool("reference_tolerances")
FILE_TOL = {(c.id, e.quantity): e.tolerance for c in load_cases(REFERENCES) for e in c.expected}
COMPUTED = tool.tolerances()


@pytest.mark.parametrize("key", sorted(COMPUTED), ids=lambda k: f"{k[0]}:{k[1]}")
def test_case_file_tolerance_is_the_scripts(key):
    assert key in FILE_TOL, key
    assert COMPUTED[key] <= FILE_TOL[key] <= 1.1 * COMPUTED[key]


def test_every_monte_carlo_tolerance_is_recomputed():
    mc = {k for k in FILE_TOL if k[1].startswith(("mc.", "validation."))}
    assert mc <= set(COMPUTED), sorted(mc - set(COMPUTED))


def test_exact_outputs_agree_with_independent_references():
    ex = tool.exact_outputs()
    # 9.2.2: N(0, 4) (scipy); 9.2.3, 9.2.4: Irwin-Hall and a convolution, checked here by
    # their moments: the CDF integrates to the right mean and variance (numerically).
    assert ex["q_9.2.2"] == pytest.approx(2 * stats.norm.ppf(0.975), rel=1e-12)
    assert tool.rect_sum_cdf(ex["q_9.2.3"], 4) == pytest.approx(0.975, abs=1e-12)
    assert tool.sum_9_2_4_cdf(ex["q_9.2.4"]) == pytest.approx(0.975, abs=1e-9)
    # the Irwin-Hall CDF of n = 1 is the uniform one; the 9.2.4 density integrates to 1
    assert tool.irwin_hall_cdf(0.3, 1) == pytest.approx(0.3)
    from scipy import integrate
    a = 3 * math.sqrt(3.0) + 10 * math.sqrt(3.0)
    assert integrate.quad(tool.sum_9_2_4_pdf, -a, a, limit=200)[0] == pytest.approx(1.0, abs=1e-8)
    var = integrate.quad(lambda y: y * y * tool.sum_9_2_4_pdf(y), -a, a, limit=200)[0]
    assert var == pytest.approx(103.0, rel=1e-7)


def test_numbers_quoted_in_the_jcgm100_files_are_the_scripts():
    h1, g41 = tool.h1_values(), tool.g41_values()
    text = (REFERENCES / "jcgm100_h1_end_gauge.toml").read_text(encoding="utf-8")
    for quoted, value in (("31.67", h1["u"]), ("16.76", h1["nu_eff"]), ("92.50", h1["U"]),
                          ("33.81", h1["second_order.u"]), ("2.89", h1["contribution.delta_alpha"]),
                          ("16.60", h1["contribution.delta_theta"]),
                          ("11.7", h1["cross.delta_alpha.theta"]),
                          ("1.7", h1["cross.alpha_s.delta_theta"])):
        assert quoted in text
        decimals = len(quoted.split(".")[1])
        assert round(value, decimals) == pytest.approx(float(quoted)), quoted
    text = (REFERENCES / "jcgm100_g4_1_welch_satterthwaite.toml").read_text(encoding="utf-8")
    for quoted, value in (("1.02947", g41["u"]), ("18.999", g41["nu_eff"]),
                          ("19.04", g41["nu_eff_rounded_u"]), ("18.78", g41["nu_box_low"]),
                          ("19.21", g41["nu_box_high"]), ("2.0915", g41["k_low"]),
                          ("2.1009", g41["k_high"])):
        assert quoted in text
        decimals = len(quoted.split(".")[1])
        assert round(value, decimals) == pytest.approx(float(quoted)), quoted
