"""The special functions of the spot formulas against a reference library.

Source of every expected value: scipy.special (erf, j1, ndtr), the reference library; the formulas
implemented are DLMF 7.6.2 and 7.9.2 (erf), DLMF 10.9.2 (J1) and Abramowitz & Stegun 7.1.26 (the
coarse normal CDF, whose stated bound 1.5e-7 on erf is the tolerance).
"""

import numpy as np
from scipy.special import erf as scipy_erf
from scipy.special import j1 as scipy_j1

from budget.imaging.special import erf, j1


def test_erf_equals_scipy_to_double_precision():
    x = np.concatenate([np.linspace(-8, 8, 4001), np.random.default_rng(1).normal(0, 2, (30, 7)).ravel()])
    assert np.allclose(erf(x), scipy_erf(x), rtol=4e-16, atol=4e-16)
    assert erf(np.zeros((2, 3))).shape == (2, 3) and erf(0.5) == scipy_erf(0.5)



def test_j1_equals_scipy_from_small_to_large_arguments():
    # DLMF 10.9.2 by the periodic trapezoidal rule; scipy.special.j1 is the reference. The
    # absolute error grows slowly with x (more nodes summed); J1 itself is ~√(2/πx) there.
    for x in (np.linspace(1e-6, 50.0, 1001), np.geomspace(50.0, 2e4, 400), np.linspace(0.1, 300.0, 5000)):
        assert np.allclose(j1(x), scipy_j1(x), rtol=0, atol=1e-13)
    assert j1(np.zeros((2, 3))).shape == (2, 3)
    assert abs(float(j1(3.0)) - float(scipy_j1(3.0))) < 1e-15


def test_erf_vec_equals_scipy():
    # DLMF 7.6.2 series and 7.9.2 continued fraction, numpy only; scipy.special.erf is the reference.
    from budget.imaging.special import erf_vec
    x = np.concatenate([np.linspace(-9, 9, 20001), [0.0, 1e-300, -40.0, 40.0, np.inf, -np.inf]])
    assert np.allclose(erf_vec(x), scipy_erf(x), rtol=0, atol=3e-15)
    assert erf_vec(np.zeros((2, 3))).shape == (2, 3) and np.isnan(erf_vec(np.nan))


def test_phi_coarse_within_its_bound():
    # Abramowitz & Stegun 7.1.26: |error of erf| <= 1.5e-7, so |error of Φ| <= 7.5e-8; scipy.special.ndtr.
    from scipy.special import ndtr

    from budget.imaging.special import phi_cdf, phi_coarse
    z = np.linspace(-12, 12, 24001)
    assert np.max(np.abs(phi_coarse(z) - ndtr(z))) < 7.5e-8
    assert np.allclose(phi_cdf(z), ndtr(z), rtol=0, atol=3e-15)
