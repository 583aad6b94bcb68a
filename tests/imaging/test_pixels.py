"""Expected pixel values and ADC moments of the locator model against the renderer and brute force."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.imaging.pixels import EXACT_BELOW, adu_moments, image_2d, profile_1d
from budget.imaging.render import expected_electrons


@pytest.mark.parametrize("sigma, diameter", [(0.5, 6.0), (0.2, 3.0), (0.7, 14.0)])
def test_disk_pixels_equal_the_renderers(sigma, diameter):
    # The renderer tabulates the blurred disk's radial profile (non-central χ², scipy) on 64 × 64
    # sub-pixels; the model integrates chords in closed form [derived]. Agreement to 4e-6 of the signal.
    j = np.arange(-9, 10.0)
    model = image_2d(j, np.array([0.13]), np.array([-0.31]), shape="disk", sigma=np.array([sigma]),
                     disk=np.array([diameter]), streak=np.array([0.0]))[0, 0, 0]
    rendered = expected_electrons(shape=(19, 19), centre_xy=(9.13, 8.69), kind="disk", sigma_px=sigma,
                                  diameter_px=diameter, signal_e=1.0, supersample=64)
    assert np.max(np.abs(model - rendered)) < 4e-6
    cols = profile_1d(j, np.array([0.13]), shape="disk", sigma=np.array([sigma]), disk=np.array([diameter]),
                      streak=np.array([0.0]))
    assert np.allclose(cols, model.sum(axis=0), atol=1e-7)  # the column sums are the projection


def test_streaked_spot_equals_the_renderers_sub_exposures():
    # Closed form ∫Φ = vΦ(v/σ) + σφ(v/σ) against the renderer's mean of 256 sub-exposures.
    j = np.arange(-9, 10.0)
    model = image_2d(j, np.array([0.2]), np.array([0.1]), shape="spot", sigma=np.array([0.8]),
                     disk=np.array([0.0]), streak=np.array([6.7]))[0, 0, 0]
    rendered = expected_electrons(shape=(19, 19), centre_xy=(9.2, 9.1), sigma_px=0.8, signal_e=1.0,
                                  streak_px=6.7, substeps=256)
    assert np.max(np.abs(model - rendered)) < 2e-5


@pytest.mark.parametrize("mu, read, gain", [(0.0, 2.0, 39.2), (10.0, 2.0, 39.2), (500.0, 3.0, 39.2),
                                            (137.0, 5.0, 9.8), (2000.0, 20.0, 9.8), (50.0, 1.0, 2.4),
                                            (0.0, 0.5, 0.305), (2.0, 3.0, 1.0), (0.0, 4.0, 1.0)])
def test_adu_moments_against_sampled_rounding(mu, read, gain):
    # The exact sums over the thresholds (and the linear form above EXACT_BELOW counts) against one
    # million draws of round(clip(N(μ, μ + r²)/g)) (the model's normal pixel); 5 standard errors.
    # The last three: noise above EXACT_BELOW about a mean near 0, where the clip at 0 lifts the mean
    # (by 0.65 count for 1.6 counts of noise about 0) and cuts the variance.
    rng = np.random.default_rng(7)
    x = rng.normal(mu, math.sqrt(mu + read**2), 1_000_000) / gain
    r = np.clip(np.rint(x), 0, 255)
    mean, var, exact = adu_moments(np.array(mu), np.array(read), np.array(gain), np.array(255.0))
    sd = r.std()
    assert float(mean) == pytest.approx(r.mean(), abs=5 * sd / 1000 + 1e-9)
    assert float(var) == pytest.approx(r.var(), abs=5 * math.sqrt(2) * sd**2 / 1000 + 1e-9)
    assert bool(exact) == (math.sqrt(mu + read**2) / gain < EXACT_BELOW)
