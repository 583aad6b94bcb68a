"""Fixed-pattern noise of the centre of mass against rendered frames with a drawn pixel pattern."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget.imaging.fixed_pattern import dsnu_sd_px, prnu_sd_px
from budget.imaging.locate import centre_of_mass
from budget.imaging.render import expected_electrons


def _located_sd(pattern, sigma=1.5, window=11, kind="gaussian", diameter=None, signal=1e5, n=3000, size=31):
    """sd of the centre of mass over ``n`` drawn patterns; the target at a fixed sub-pixel place."""
    rng = np.random.default_rng(7)
    c = size // 2
    img = expected_electrons(shape=(size, size), centre_xy=(c + 0.3, c + 0.1), kind=kind, sigma_px=sigma,
                             diameter_px=diameter, signal_e=signal)
    stack = pattern(img, rng, n)
    x, _ = centre_of_mass(stack, window_px=window, background=None)
    return float(np.std(x))


def test_prnu_gaussian_spot_matches_rendered_frames():
    """[derived] sd = p/√(8π) px whatever σ; rendered: 3000 gain patterns of 2 % rms on σ = 1.5 px and
    σ = 3 px spots (11 px window; the whole image for the broad spot, whose brightest pixel, and so a
    window placed on it, moves with the pattern), within 5 % (the sd's sampling error is 1.3 %)."""
    p = 2.0
    for sigma, window, size in ((1.5, 11, 31), (3.0, None, 41)):
        sim = _located_sd(lambda img, rng, n: img * (1 + 0.01 * p * rng.standard_normal((n, *img.shape))),
                          sigma=sigma, window=window, size=size)
        assert sim == pytest.approx(prnu_sd_px(p), rel=0.05)
    assert prnu_sd_px(p) == pytest.approx(0.02 / math.sqrt(8 * math.pi))


def test_prnu_disk_matches_rendered_frames():
    """[derived] a uniform disk: sd = p/(2√π) px; rendered disk of 16 px diameter (small PSF), the whole
    image as the window (a window on the brightest pixel of a flat disk moves with the pattern), within 8 %
    (the pixels cut the disk's edge: the rendered sum Σx²S²/N² is 5 % below the integral)."""
    p = 2.0
    sim = _located_sd(lambda img, rng, n: img * (1 + 0.01 * p * rng.standard_normal((n, *img.shape))),
                      sigma=0.3, kind="disk", diameter=16.0, window=None, size=41, n=2000)
    assert sim == pytest.approx(prnu_sd_px(p, "disk"), rel=0.08)


def test_dsnu_matches_rendered_frames():
    """[derived] sd = d·√(w·h(h+1)(2h+1)/3)/N; 5 e rms offsets, N = 2e4 e, 11 px window, within 5 %."""
    sim = _located_sd(lambda img, rng, n: img + 5.0 * rng.standard_normal((n, *img.shape)), signal=2e4)
    assert sim == pytest.approx(dsnu_sd_px(5.0, 2e4, 11), rel=0.05)
