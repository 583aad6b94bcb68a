"""erf and J1 of budget.imaging.spot: the plain path for a rig's few values (no scipy import)
and the scipy path for large arrays agree with scipy.special."""

from __future__ import annotations

import numpy as np
from scipy import special

from budget.imaging import spot


def test_erf_small_and_large_arrays_match_scipy():
    x = np.linspace(-7.0, 7.0, 3001)
    assert x.size <= spot._SMALL_ERF  # the math.erf path
    np.testing.assert_allclose(spot.erf(x), special.erf(x), rtol=4e-16, atol=4e-16)
    big = np.linspace(-7.0, 7.0, spot._SMALL_ERF + 1)  # the scipy path
    np.testing.assert_array_equal(spot.erf(big), special.erf(big))
    assert spot.erf(np.zeros((2, 3))).shape == (2, 3)
    assert float(spot.erf(0.5)) == float(special.erf(0.5))


def test_bessel_j1_matches_scipy_from_small_to_large_arguments():
    # DLMF 10.9.2 by the periodic trapezoidal rule; scipy.special.j1 is the reference. The
    # absolute error grows slowly with x (more nodes summed); J1 itself is ~√(2/πx).
    for x in (np.linspace(1e-6, 50.0, 1001), np.geomspace(50.0, 2e4, 400)):
        np.testing.assert_allclose(spot.bessel_j1(x), special.j1(x), rtol=0, atol=1e-13)
    big = np.linspace(0.1, 100.0, spot._SMALL_ERF + 1)
    np.testing.assert_array_equal(spot.bessel_j1(big), special.j1(big))
