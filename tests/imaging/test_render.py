"""Tests of the target renderer (budget.imaging.render)."""


import numpy as np
import pytest
from scipy import integrate

from budget.errors import BudgetInputError
from budget.imaging.optics import airy_radius_um, psf_sigma_um, working_f_number
from budget.imaging.render import expected_electrons, render_target

COMMON = dict(read_noise_e=0.0, full_well_e=65535.0, bit_depth=16, gain_e_per_adu=1.0)


def test_gaussian_pixel_values_are_exact_integrals():
    # Reference: scipy.integrate.dblquad of the Gaussian density over one pixel.
    s, x0, y0 = 0.8, 7.3, 6.6
    img = expected_electrons(shape=(15, 15), centre_xy=(x0, y0), sigma_px=s, signal_e=1.0)

    def dens(y, x):
        return np.exp(-((x - x0) ** 2 + (y - y0) ** 2) / (2 * s * s)) / (2 * np.pi * s * s)

    for i, j in [(7, 7), (6, 8), (9, 5)]:
        ref, _ = integrate.dblquad(dens, j - 0.5, j + 0.5, i - 0.5, i + 0.5, epsabs=1e-13)
        assert img[i, j] == pytest.approx(ref, rel=1e-9, abs=1e-14)
    # Total signal is conserved when the spot is well inside the image [derived].
    assert img.sum() == pytest.approx(1.0, abs=1e-12)


def test_point_sampled_pixel_is_density_at_centre():
    img = expected_electrons(shape=(9, 9), centre_xy=(4.0, 4.0), sigma_px=1.0, signal_e=1.0,
                             pixel="sampled")
    assert img[4, 4] == pytest.approx(1.0 / (2 * np.pi))  # density at the peak [derived]


def test_tiny_disk_tends_to_gaussian_and_disk_conserves_signal():
    # A disk of diameter 0.01 px blurred by sigma is the Gaussian to O(d^2/sigma^2) [derived].
    c = (7.2, 6.9)
    g = expected_electrons(shape=(15, 15), centre_xy=c, sigma_px=1.0, signal_e=1e4)
    d = expected_electrons(shape=(15, 15), centre_xy=c, kind="disk", diameter_px=0.01,
                           sigma_px=1.0, signal_e=1e4, supersample=16)
    assert np.max(np.abs(d - g)) < 1e-3 * g.max()
    big = expected_electrons(shape=(21, 21), centre_xy=(10.3, 9.8), kind="disk",
                             diameter_px=6.0, sigma_px=0.7, signal_e=1e4)
    assert big.sum() == pytest.approx(1e4, rel=1e-4)


def test_disk_supersampling_accuracy_documented():
    # Docstring claim: 8 x 8 agrees with 32 x 32 to < 1e-4 px in the centroid at sigma >= 0.5.
    rng = np.random.default_rng(7)
    c = rng.uniform(9.5, 10.5, size=(20, 2))
    jj = np.arange(21.0)
    out = []
    for s in (8, 32):
        img = expected_electrons(shape=(21, 21), centre_xy=c, kind="disk", diameter_px=4.0,
                                 sigma_px=0.5, signal_e=1.0, supersample=s)
        out.append((img.sum(axis=1) * jj).sum(axis=1) / img.sum(axis=(1, 2)))
    assert np.max(np.abs(out[0] - out[1])) < 1e-4


def test_noise_chain_variance_with_adc_step():
    # Background only, gain g: variance in ADU = (b + r^2)/g^2 + 1/12 (ADC step, JCGM 100
    # F.2.2.1; Poisson and Gaussian read noise [derived]). Tolerance: 4 Monte Carlo standard
    # errors of a variance, sqrt(2/(m-1)) relative (normal approximation).
    rng = np.random.default_rng(11)
    g, b, r = 2.0, 50.0, 3.0
    out = render_target(shape=(50, 50), centre_xy=(25.0, 25.0), sigma_px=1.0, signal_e=0.0,
                        background_e=b, read_noise_e=r, full_well_e=1e5, bit_depth=16,
                        gain_e_per_adu=g, black_level_adu=100, rng=rng, n=20)
    v = out.images.var(ddof=1)
    expect = (b + r * r) / g**2 + 1.0 / 12.0
    m = out.images.size
    assert abs(v - expect) < 4 * np.sqrt(2 / (m - 1)) * expect
    assert out.images.mean() == pytest.approx(100 + b / g, abs=0.05)


def test_default_gain_saturation_and_clipping():
    rng = np.random.default_rng(1)
    out = render_target(shape=(9, 9), centre_xy=(4.0, 4.0), sigma_px=0.5, signal_e=1e6,
                        background_e=10.0, read_noise_e=2.0, full_well_e=1e4, bit_depth=8,
                        rng=rng)
    assert out.gain_e_per_adu == pytest.approx(1e4 / 255)
    assert out.images.max() == 255 and out.images.min() >= 0
    assert np.all(out.images == np.rint(out.images))
    assert out.centres_xy.shape == (2,) and out.images.shape == (9, 9)


def test_vectorized_shapes():
    # Its speed is measured by benchmarks/bench_render.py against a plain loop, not here.
    rng = np.random.default_rng(2)
    c = rng.uniform(6.5, 7.5, size=(200, 2))
    out = render_target(shape=(15, 15), centre_xy=c, sigma_px=1.0, signal_e=1e4,
                        background_e=100.0, rng=rng, read_noise_e=3.0, full_well_e=2e4,
                        bit_depth=12)
    assert out.images.shape == (200, 15, 15)
    assert np.array_equal(out.centres_xy, c)
    same = render_target(shape=(5, 5), centre_xy=(2.0, 2.0), sigma_px=1.0, signal_e=10.0,
                         background_e=1.0, rng=rng, n=3, **COMMON)
    assert same.images.shape == (3, 5, 5) and same.centres_xy.shape == (3, 2)


@pytest.mark.parametrize(
    "change",
    [dict(sigma_px=0.0), dict(sigma_px=-1.0), dict(kind="square"), dict(kind="disk"),
     dict(signal_e=-1.0), dict(centre_xy=(1.0, 2.0, 3.0)), dict(shape=(0, 5)),
     dict(bit_depth=0), dict(gain_e_per_adu=0.0), dict(rng=np.random.RandomState(0)),
     dict(centre_xy=[[1.0, 2.0]], n=2), dict(full_well_e=0.0), dict(read_noise_e=-1.0)],
)
def test_bad_inputs_raise(change):
    kw = dict(shape=(9, 9), centre_xy=(4.0, 4.0), sigma_px=1.0, signal_e=100.0,
              background_e=1.0, rng=np.random.default_rng(0), **COMMON)
    kw.update(change)
    with pytest.raises(BudgetInputError, match="field"):
        render_target(**kw)


def test_optics_helpers():
    # NA = 1/(2 N_w): 0.21 lambda / NA = 0.42 lambda N_w (Zhang, Zerubia & Olivo-Marin 2007).
    assert working_f_number(8.0, 0.25) == pytest.approx(10.0)
    assert psf_sigma_um(550.0, 10.0) == pytest.approx(0.42 * 0.55 * 10.0)
    assert airy_radius_um(550.0, 10.0) == pytest.approx(1.22 * 0.55 * 10.0)
    with pytest.raises(BudgetInputError):
        psf_sigma_um(-550.0, 10.0)
