"""Locators and spot optics against published formulas and standards.

Each test names its source and says why its tolerance is what it is.
"""

import numpy as np
import pytest
from scipy.optimize import least_squares
from scipy.special import j1, jn_zeros

from budget.imaging.locate import centre_of_mass, fit_gaussian_spots, integer_peak
from budget.imaging.optics import airy_radius_um, psf_sigma_um
from budget.imaging.render import expected_electrons, render_target
from budget.imaging.spot import adc_variance_e2, com_variance, mortensen_variance
from tests.oracles.closed_forms import thompson_variance


def _within_mc(var_hat, var_ref, m, k=4.0):
    """|var_hat - var_ref| < k standard errors of a variance estimate, sqrt(2/(m-1)) var
    (normal errors; the fit errors are close to normal at these photon counts)."""
    return abs(var_hat - var_ref) < k * np.sqrt(2.0 / (m - 1)) * var_ref


def test_gaussian_fit_scatter_matches_mortensen_2010():
    # Source: Mortensen et al. 2010, Nat. Methods 7:377, least-squares estimator without EM
    # gain: var = (sa^2/N)(16/9 + 8 pi sa^2 b^2/(N a^2)), sa^2 = s^2 + a^2/12.
    # N = 1e4 photons, b^2 = 100 photons/px, s = 1 px, 17 x 17 px window, random phases.
    # Tolerance: 4 Monte Carlo standard errors of a variance (m = 4000 renders: 8.9 %);
    # the formula itself is an approximation that the paper reports agrees with simulations
    # to a few per cent. Gain 1 e-/ADU: the ADC step adds 1/12 e^2 per pixel (JCGM 100
    # F.2.2.1), included in b^2.
    rng = np.random.default_rng(2010)
    m = 4000
    c = 8.0 + rng.uniform(-0.5, 0.5, size=(m, 2))
    out = render_target(shape=(17, 17), centre_xy=c, sigma_px=1.0, signal_e=1e4,
                        background_e=100.0, read_noise_e=0.0, full_well_e=65535.0,
                        bit_depth=16, gain_e_per_adu=1.0, rng=rng)
    fit = fit_gaussian_spots(out.images)
    assert fit.converged.all()
    ref = mortensen_variance(1.0, 1.0, 1e4, 100.0 + adc_variance_e2(1.0))
    assert ref == pytest.approx(2.2209e-4, rel=1e-3)  # [derived] from the inputs above
    for err in (fit.x_px - c[:, 0], fit.y_px - c[:, 1]):
        assert abs(err.mean()) < 4 * np.sqrt(ref / m)
        assert _within_mc(np.var(err, ddof=1), ref, m)


def test_centre_of_mass_scatter_matches_thompson_2002_at_zero_background():
    # Source: Thompson, Larson & Webb 2002, Biophys. J. 82:2775, eq. (14) with b = 0:
    # <dx^2> = (s^2 + a^2/12)/N. It applies to the centre of mass only at low background:
    # with background the centre-of-mass variance grows as W^4 b^2/N^2 (com_variance,
    # [derived], checked in tests/camera/test_locators.py), not as 8 pi s^4 b^2/N^2.
    # Tolerance: 4 Monte Carlo standard errors of a variance (m = 4000: 8.9 %).
    rng = np.random.default_rng(2002)
    m = 4000
    c = 7.0 + rng.uniform(-0.5, 0.5, size=(m, 2))
    out = render_target(shape=(15, 15), centre_xy=c, sigma_px=1.0, signal_e=1e4,
                        background_e=0.0, read_noise_e=0.0, full_well_e=65535.0,
                        bit_depth=16, gain_e_per_adu=1.0, rng=rng)
    x, y = centre_of_mass(out.images, background=None)
    ref = thompson_variance(1.0, 1.0, 1e4, 0.0)
    for err in (x - c[:, 0], y - c[:, 1]):
        assert _within_mc(np.var(err, ddof=1), ref, m)
    # At b^2 = 100 photons/px in an 11 px window the centre of mass is far worse than
    # Thompson's fit-based figure [derived]:
    assert com_variance(1.0, 1e4, 100.0, 11) > 3 * thompson_variance(1.0, 1.0, 1e4, 10.0)


def test_integer_peak_scatter_is_one_over_root_twelve():
    # Source: JCGM 100:2008 4.3.7 and F.2.2.1, quantization over a step q = 1 px is
    # rectangular with u = q/sqrt(12) [derived]. Noiseless spots at uniformly random phases.
    # Tolerance: 4 standard errors of the variance of a rectangular sample,
    # sqrt((mu4 - sigma^4)/m) with mu4 = 1/80, sigma^4 = 1/144 [derived].
    rng = np.random.default_rng(121)
    m = 10_000
    c = 5.0 + rng.uniform(-0.5, 0.5, size=(m, 2))
    img = expected_electrons(shape=(11, 11), centre_xy=c, sigma_px=0.8, signal_e=1e3)
    x, y = integer_peak(img)
    se = np.sqrt((1 / 80 - 1 / 144) / m)
    for err in (x - c[:, 0], y - c[:, 1]):
        assert abs(np.var(err, ddof=1) - 1 / 12) < 4 * se
        assert np.max(np.abs(err)) <= 0.5


def test_psf_sigma_zhang_2007():
    # Source: Zhang, Zerubia & Olivo-Marin 2007, Appl. Opt. 46:1819, paraxial 2-D wide-field
    # PSF: sigma = 0.21 lambda/NA (two digits quoted, so +-0.005, i.e. 2.4 %).
    lam, n_w = 0.55, 8.0
    na = 1 / (2 * n_w)
    assert psf_sigma_um(lam * 1e3, n_w) == pytest.approx(0.21 * lam / na, rel=1e-12)
    # Numerical check: least-squares fit of a Gaussian to the Airy intensity
    # (2 J1(v)/v)^2, v = 2 pi NA r / lambda (scipy.special.j1), area-weighted over the
    # plane to three Airy radii. Peak held at the Airy peak: 0.2103; peak free: 0.2059.
    r = np.linspace(1e-9, 3 * 0.61, 20001)  # units of lambda/NA
    v = 2 * np.pi * r
    airy = (2 * j1(v) / v) ** 2
    wt = np.sqrt(r)

    def fixed(p):
        return wt * (np.exp(-r**2 / (2 * p[0] ** 2)) - airy)

    def free(p):
        return wt * (p[1] * np.exp(-r**2 / (2 * p[0] ** 2)) - airy)

    s_fixed = least_squares(fixed, [0.25]).x[0]
    s_free = least_squares(free, [0.25, 1.0]).x[0]
    assert s_fixed == pytest.approx(0.21, abs=0.005)
    assert s_free == pytest.approx(0.21, rel=0.03)
    # Airy radius 1.22 lambda N_w: first zero of J1 is 3.8317 (scipy.special.jn_zeros), and
    # 3.8317/pi = 1.2197; 1.22 is the customary three-digit rounding (0.03 %).
    exact = jn_zeros(1, 1)[0] / np.pi * lam * n_w
    assert airy_radius_um(lam * 1e3, n_w) == pytest.approx(exact, rel=3e-4)
