"""Tests of the locators and the locator physics (derived checks).

Source of the expected values: derivations stated beside each test ([derived]: the Poisson
summation formula for pixel-locking, JCGM 100 F.2.2.1 for quantization). Checks against
published formulas (Thompson et al. 2002, Mortensen et al. 2010) are in
tests/reference/test_locator_reference.py.
"""

import numpy as np
import pytest

from budget.errors import BudgetInputError
from budget.imaging.locate import (
    centre_of_mass,
    fit_gaussian_spots,
    gaussian_fit,
    integer_peak,
    threshold_centroid,
)
from budget.imaging.render import expected_electrons, render_target
from budget.imaging.spot import (
    adc_variance_e2,
    com_variance,
    integer_quantization_variance,
    pixel_locking_amplitude,
    pixel_locking_bias,
    window_truncation_bias,
)

DELTA = np.linspace(-0.5, 0.5, 41)


def _phase_stack(sigma, pixel, size=41):
    c = np.column_stack([size // 2 + DELTA, np.full(DELTA.size, size // 2 + 0.1)])
    img = expected_electrons(shape=(size, size), centre_xy=c, sigma_px=sigma, signal_e=1.0,
                             pixel=pixel)
    return img, c


@pytest.mark.parametrize("pixel", ["integrated", "sampled"])
@pytest.mark.parametrize("sigma", [0.3, 0.5, 0.7])
def test_pixel_locking_series_matches_noiseless_renders(pixel, sigma):
    # [derived] Poisson summation; noiseless renders, 41 px window (truncation < 1e-300).
    img, c = _phase_stack(sigma, pixel)
    x, _ = centre_of_mass(img, background=None)
    assert np.max(np.abs((x - c[:, 0]) - pixel_locking_bias(DELTA, sigma, pixel=pixel))) < 1e-12


def test_pixel_locking_amplitude_integrated_and_sampled():
    # [derived] exp(-2 pi^2 s^2)/pi for pixel-integrated spots (0.054 px at 0.3 px, 0.0023 px
    # at 0.5 px); point-sampled: 4 pi s^2 exp(-2 pi^2 s^2). The k >= 2 harmonics shift the
    # maximum by < 0.03 % (integrated) and < 0.5 % (sampled, s >= 0.4).
    d = np.linspace(-0.5, 0.5, 2001)
    for s, a in [(0.3, 0.0539), (0.5, 0.00229)]:
        c = np.column_stack([20 + d, np.full(d.size, 20.0)])
        img = expected_electrons(shape=(41, 41), centre_xy=c, sigma_px=s, signal_e=1.0)
        amp = np.max(np.abs(centre_of_mass(img, background=None)[0] - c[:, 0]))
        assert amp == pytest.approx(pixel_locking_amplitude(s), rel=3e-4)
        assert amp == pytest.approx(a, rel=2e-3)
    for s in (0.4, 0.5):
        c = np.column_stack([20 + d, np.full(d.size, 20.0)])
        img = expected_electrons(shape=(41, 41), centre_xy=c, sigma_px=s, signal_e=1.0,
                                 pixel="sampled")
        amp = np.max(np.abs(centre_of_mass(img, background=None)[0] - c[:, 0]))
        assert amp == pytest.approx(pixel_locking_amplitude(s, pixel="sampled"), rel=5e-3)


def test_pixel_locking_is_not_an_effective_sigma():
    # The brief's guess sqrt(s^2 + 1/12) for pixel-integrated spots does not hold [derived].
    s = 0.4
    img, c = _phase_stack(s, "integrated")
    bias = centre_of_mass(img, background=None)[0] - c[:, 0]
    guess = pixel_locking_bias(DELTA, np.sqrt(s * s + 1 / 12), pixel="sampled")
    assert np.max(np.abs(bias - guess)) > 0.3 * np.max(np.abs(bias))


@pytest.mark.parametrize("window, sigma", [(5, 1.0), (7, 1.0), (5, 0.5)])
def test_window_truncation_bias_matches_windowed_renders(window, sigma):
    # [derived] windowed centre of mass of noiseless renders, window on the brightest pixel.
    d = np.linspace(-0.49, 0.49, 25)
    c = np.column_stack([10 + d, np.full(d.size, 10.0)])
    img = expected_electrons(shape=(21, 21), centre_xy=c, sigma_px=sigma, signal_e=1.0)
    x, _ = centre_of_mass(img, window_px=window, background=None)
    expect = pixel_locking_bias(d, sigma) + window_truncation_bias(d, sigma, window)
    assert np.max(np.abs((x - c[:, 0]) - expect)) < 1e-12


def test_gaussian_fit_noiseless_recovers_centre_and_sigma():
    rng = np.random.default_rng(5)
    c = rng.uniform(7.0, 8.0, size=(50, 2))
    for pixel in ("integrated", "sampled"):
        img = expected_electrons(shape=(15, 15), centre_xy=c, sigma_px=1.3, signal_e=5e3,
                                 background_e=20.0, pixel=pixel)
        fit = fit_gaussian_spots(img, pixel=pixel)
        assert fit.converged.all()
        assert np.max(np.abs(fit.x_px - c[:, 0])) < 1e-6
        assert np.max(np.abs(fit.y_px - c[:, 1])) < 1e-6
        assert np.allclose(fit.sigma_px, 1.3, atol=1e-6)
        assert np.allclose(fit.background, 20.0, atol=1e-5)
    x, y = gaussian_fit(img[0], sigma_px=1.3, pixel="sampled", window_px=9)
    assert isinstance(x, float) and abs(x - c[0, 0]) < 1e-6 and abs(y - c[0, 1]) < 1e-6


def test_stack_equals_one_by_one():
    rng = np.random.default_rng(3)
    out = render_target(shape=(15, 15), centre_xy=rng.uniform(6.5, 7.5, size=(6, 2)),
                        sigma_px=1.0, signal_e=3e3, background_e=30.0, read_noise_e=2.0,
                        full_well_e=1e4, bit_depth=12, rng=rng)
    for loc in (centre_of_mass, gaussian_fit, threshold_centroid, integer_peak):
        xs, ys = loc(out.images)
        for k in range(6):
            x, y = loc(out.images[k])
            assert x == pytest.approx(xs[k], abs=1e-9) and y == pytest.approx(ys[k], abs=1e-9)


def test_threshold_and_integer_peak_on_symmetric_spot():
    img = expected_electrons(shape=(11, 11), centre_xy=(5.0, 4.0), sigma_px=1.0, signal_e=1e3,
                             background_e=5.0)
    assert threshold_centroid(img) == pytest.approx((5.0, 4.0))
    assert integer_peak(img) == (5.0, 4.0)
    assert centre_of_mass(img, window_px=7, threshold=1.0) == pytest.approx((5.0, 4.0))


def test_com_variance_at_high_background_and_adc_term():
    # [derived] centre of mass with the background known: (s^2+1/12)/N + b^2 W^2 (W^2-1)/(12 N^2)
    # (about 3x Thompson 2002 here). Spot centred on a pixel; tolerance 4 Monte Carlo standard
    # errors of a variance, sqrt(2/(m-1)).
    rng = np.random.default_rng(21)
    m, n_e, b, w = 3000, 1e4, 100.0, 11
    out = render_target(shape=(w, w), centre_xy=(5.0, 5.0), sigma_px=1.0, signal_e=n_e,
                        background_e=b, read_noise_e=0.0, full_well_e=65535.0, bit_depth=16,
                        gain_e_per_adu=1.0, rng=rng, n=m)
    x, _ = centre_of_mass(out.images, background=b)
    b2 = b + adc_variance_e2(1.0)
    var = com_variance(1.0, n_e, b2, w)
    assert abs(np.var(x, ddof=1) - var) < 4 * np.sqrt(2 / (m - 1)) * var
    assert adc_variance_e2(2.0) == pytest.approx(4.0 / 12.0)


@pytest.mark.parametrize(("sigma", "n_e", "b", "w", "m"), [
    # photon term alone (no background): (s² + 1/12)/N, the 1/12 being 7.7 % of it at s = 1;
    # m = 20 000 renders put one Monte Carlo standard error of the variance at 1.0 %
    (1.0, 1e4, 0.0, 9, 20_000),
    # background term dominant in a 3 × 3 window: b² W²(W² − 1)/(12 N²) (W² − 1 = 8, the
    # window's sum of squared pixel offsets); W² + 1 would be 25 % more; m = 5000: 2.0 %
    (0.5, 1e5, 1e5, 3, 5_000),
])
def test_com_variance_against_rendered_frames(sigma, n_e, b, w, m):
    """The centre-of-mass noise formula (imaging/spot.py, its one home) against a rendered-image
    Monte Carlo of the same spot, pixel-centred, background known and subtracted: each of its two
    terms on its own. Tolerance four standard errors of a sample variance, √(2/(m − 1)), plus 1 %
    for the first-order formula (Sheppard's 1/12 is exact to e^(−2π²s²) at s = 1)."""
    rng = np.random.default_rng(1401)
    c = w // 2
    out = render_target(shape=(w, w), centre_xy=(c, c), sigma_px=sigma, signal_e=n_e,
                        background_e=b, read_noise_e=0.0, full_well_e=1e9, bit_depth=32,
                        gain_e_per_adu=1.0, rng=rng, n=m)
    x, y = centre_of_mass(out.images, background=b, window_px=w)
    var = com_variance(sigma, n_e, b, w)
    tol = (4 * np.sqrt(2 / (m - 1)) + 0.01) * var
    assert abs(np.var(x, ddof=1) - var) < tol
    assert abs(np.var(y, ddof=1) - var) < tol


def test_integer_quantization_variance_against_the_integer_locator():
    """The integer locator over random sub-pixel phases (noise-free spots): its error is
    rectangular on ±1/2 px, variance 1/12 (JCGM 100 4.3.7); the formula's one home is
    imaging/spot.py. Tolerance four standard errors of the sample variance of a rectangular
    variable, √((μ4 − σ⁴)/m) with μ4 = 1/80."""
    rng = np.random.default_rng(12)
    m = 4000
    c = 7.0 + rng.uniform(-0.5, 0.5, size=(m, 2))
    img = expected_electrons(shape=(15, 15), centre_xy=c, sigma_px=1.0, signal_e=1e3)
    xs, ys = integer_peak(img)
    se = np.sqrt((1 / 80 - 1 / 144) / m)
    for err in (np.asarray(xs) - c[:, 0], np.asarray(ys) - c[:, 1]):
        assert np.max(np.abs(err)) <= 0.5 + 1e-12
        assert abs(np.mean(err**2) - integer_quantization_variance()) < 4 * se


def test_locator_errors():
    img = expected_electrons(shape=(11, 11), centre_xy=(1.0, 5.0), sigma_px=1.0, signal_e=1e3)
    with pytest.raises(BudgetInputError, match="window_px"):
        centre_of_mass(img, window_px=5)
    with pytest.raises(BudgetInputError, match="window_px"):
        centre_of_mass(img, window_px=4)
    with pytest.raises(BudgetInputError, match="background"):
        centre_of_mass(img, background="mean")
    with pytest.raises(BudgetInputError, match="images"):
        centre_of_mass(np.ones((5, 5)))
    with pytest.raises(BudgetInputError, match="images"):
        gaussian_fit(np.ones((5, 5)))
    with pytest.raises(BudgetInputError, match="images"):
        threshold_centroid(np.ones((5, 5)))
    with pytest.raises(BudgetInputError, match="level"):
        threshold_centroid(img, level=1.5)
    with pytest.raises(BudgetInputError, match="images"):
        integer_peak(np.ones(5))
    with pytest.raises(BudgetInputError, match="sigma_px"):
        pixel_locking_bias(0.1, 0.0)
    with pytest.raises(BudgetInputError, match="window_px"):
        window_truncation_bias(0.1, 1.0, 6)
