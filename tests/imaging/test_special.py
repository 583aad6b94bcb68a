"""The error function of the spot formulas against scipy.special.erf (reference library)."""

import numpy as np
from scipy.special import erf as scipy_erf

from budget.imaging.special import erf


def test_erf_equals_scipy_to_double_precision():
    x = np.concatenate([np.linspace(-8, 8, 4001), np.random.default_rng(1).normal(0, 2, (30, 7)).ravel()])
    assert np.allclose(erf(x), scipy_erf(x), rtol=4e-16, atol=4e-16)
    assert erf(np.zeros((2, 3))).shape == (2, 3) and erf(0.5) == scipy_erf(0.5)
