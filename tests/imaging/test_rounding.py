"""The ADC's rounding of a normal pixel, exactly: the dither series and the threshold sums against brute force.

Source of every expected value: the probability mass of the rounded normal, P(R = k) = Φ((k + ½ − x)/s) −
Φ((k − ½ − x)/s) with scipy.special.ndtr (the reference library) over 121 integers around x, clipped at 0
and at the top code, and its mean and variance summed directly (no formula of the module). Tolerances are
stated beside each check. The series itself is the classical one for the quantization of a Gaussian (the
sawtooth's Fourier series under the normal characteristic function; Widrow & Kollár, *Quantization Noise*,
2008, cited from memory); the test does not rely on it.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import ndtr

from budget.imaging import rounding
from budget.imaging.pixels import adu_moments
from budget.imaging.rounding import CLIP_REACH, SERIES_FROM, dither_series, exact_moments, threshold_sums


def _pmf_moments(x, s, top=None):
    """Mean and variance of round(N(x, s²)) (clipped to [0, top] if given), from its probability mass."""
    means, variances = [], []
    for xi, si in zip(np.ravel(x), np.ravel(s), strict=True):
        k = np.arange(np.floor(xi) - 60.0, np.floor(xi) + 61.0)
        if top is not None:
            k = k[(k >= 0) & (k <= top)]
        hi, lo = ndtr((k + 0.5 - xi) / si), ndtr((k - 0.5 - xi) / si)
        if top is not None:
            lo[k == 0], hi[k == top] = 0.0, 1.0  # the clips collect the tails
        p = hi - lo
        m = np.sum(k * p)
        means.append(m)
        variances.append(np.sum((k - m) ** 2 * p))
    return np.array(means), np.array(variances)


@pytest.fixture
def accurate_phi(monkeypatch):
    """The threshold sums with scipy's normal CDF in place of Abramowitz & Stegun 7.1.26."""
    monkeypatch.setattr(rounding, "phi_coarse_into", lambda z, out, w1, w2: np.copyto(out, ndtr(z)))


def test_dither_series_equals_the_probability_mass():
    # Three terms: the first left out is below 2e-13 for s >= 0.3; the reference sums k·P(R = k) with
    # k up to 4080, whose rounding reaches ~1e-12 (measured 9e-13). Tolerance 1e-11 count (count²).
    rng = np.random.default_rng(0)
    s = rng.uniform(SERIES_FROM, 0.75, 1500)
    x = np.concatenate([rng.uniform(6.0, 300.0, 1000), rng.uniform(3000.0, 4080.0, 500)])
    mean, var = dither_series(x, s)
    ref_mean, ref_var = _pmf_moments(x, s)
    assert np.max(np.abs(mean - ref_mean)) < 1e-11
    assert np.max(np.abs(var - ref_var)) < 1e-11
    # the linear camera's limit: Sheppard's s² + 1/12 and the mean x, to e^(−2π²s²)/π (JCGM 100 F.2.2.1)
    m, v = dither_series(np.array([10.3]), np.array([2.0]))
    assert m[0] == pytest.approx(10.3, abs=1e-30 + np.exp(-8 * np.pi**2) / np.pi)
    assert v[0] == pytest.approx(4.0 + 1.0 / 12.0, abs=1e-15)


def test_threshold_sums_equal_the_probability_mass(accurate_phi):
    # With an accurate Φ the sums differ from the mass only by the thresholds beyond 6.5 sd, taken as
    # passed or not for certain: Φ(−6.5) = 4e-11 each side on the mean; on the variance weighted by
    # 2(k − b) − 1 ≤ 23 (11 thresholds at 0.75 count of noise), 2 × 23 × 4e-11 < 2e-9.
    rng = np.random.default_rng(1)
    s = rng.uniform(0.0, 0.75, 3000)
    x = rng.uniform(-2.0, 20.0, 3000)  # both clips: top code 15
    mean, var = threshold_sums(x, s, 15.0)
    ref_mean, ref_var = _pmf_moments(x, np.maximum(s, 1e-9), 15.0)
    assert np.max(np.abs(mean - ref_mean)) < 1e-10
    assert np.max(np.abs(var - ref_var)) < 2e-9


def test_threshold_sums_with_the_coarse_phi_within_its_bound():
    # Abramowitz & Stegun 7.1.26: |ΔΦ| ≤ 7.5e-8 on each of at most 11 thresholds (6.5 sd each side at
    # 0.75 count): mean within 11 × 7.5e-8 < 1e-6; variance within Σ(2i + 1)·7.5e-8 + 2·11·(11 × 7.5e-8)
    # < 3e-5 (measured 2e-7 and 8e-7).
    rng = np.random.default_rng(2)
    s = rng.uniform(0.0, 0.75, 3000)
    x = rng.uniform(-2.0, 260.0, 3000)
    mean, var = threshold_sums(x, s, 255.0)
    ref_mean, ref_var = _pmf_moments(x, np.maximum(s, 1e-9), 255.0)
    assert np.max(np.abs(mean - ref_mean)) < 1e-6
    assert np.max(np.abs(var - ref_var)) < 3e-5


@pytest.mark.parametrize("phi", ["accurate", "coarse"])
def test_series_and_sums_meet_at_the_switch_over(phi, request):
    # Either side of s = SERIES_FROM and of the clip's reach x + ½ = 7s the two routes give the same
    # moments: to the sums' truncation (2e-9, as above) with an accurate Φ, to the coarse Φ's bound (1e-6,
    # 3e-5, as above) with A&S 7.1.26. The reference is the probability mass.
    if phi == "accurate":
        request.getfixturevalue("accurate_phi")
    tol_m, tol_v = (1e-10, 2e-9) if phi == "accurate" else (1e-6, 3e-5)
    rng = np.random.default_rng(3)
    x = rng.uniform(3.0, 250.0, 200)
    below, above = np.full(200, SERIES_FROM * (1 - 1e-12)), np.full(200, SERIES_FROM * (1 + 1e-12))
    s_clip = rng.uniform(SERIES_FROM, 0.75, 200)
    x_clip = CLIP_REACH * s_clip - 0.5
    for xs, ss in ((x, below), (x, above), (x_clip * (1 - 1e-12), s_clip), (x_clip * (1 + 1e-12), s_clip)):
        mean, var = exact_moments(xs, ss, 255.0)
        ref_mean, ref_var = _pmf_moments(xs, ss, 255.0)
        assert np.max(np.abs(mean - ref_mean)) < tol_m
        assert np.max(np.abs(var - ref_var)) < tol_v
    m_lo, v_lo = exact_moments(x, below, 255.0)
    m_hi, v_hi = exact_moments(x, above, 255.0)
    assert np.max(np.abs(m_lo - m_hi)) < 2 * tol_m and np.max(np.abs(v_lo - v_hi)) < 2 * tol_v


def _former_band_sums(x, s, top):
    """The exact sums as main computed them before the series (1–4 thresholds each side by noise band, A&S Φ)."""
    from budget.imaging.special import phi_coarse
    mean, var = np.empty(x.size), np.empty(x.size)
    edges = (0.0, 0.15, 0.3, 0.5, 0.75)
    for band in range(1, 5):
        sel = np.flatnonzero((s >= edges[band - 1]) & (s < edges[band]))
        xe, se = x[sel], np.maximum(s[sel], 1e-9)
        k0 = np.round(xe)
        m1 = np.clip(k0 - band, 0.0, top)
        m2 = m1**2
        for o in range(-band + 1, band + 1):
            k = k0 + o
            p = np.where((k >= 1) & (k <= top), phi_coarse((xe - k + 0.5) / se), 0.0)
            m1 = m1 + p
            m2 = m2 + (2.0 * k - 1.0) * p
        mean[sel], var[sel] = m1, np.maximum(m2 - m1**2, 0.0)
    return mean, var


def test_exact_moments_equal_the_former_band_sums():
    # Internal consistency with main before this change: both sides carry A&S 7.1.26 (7.5e-8 per threshold,
    # up to 8 thresholds formerly, 11 now) and the former left out thresholds from 5.3 sd (Φ(−5.33) = 5e-8):
    # mean within 1e-6, variance within 3e-5 (the coarse Φ's bound above; measured 2e-7 and 8e-7).
    rng = np.random.default_rng(4)
    s = rng.uniform(0.0, 0.75, 5000)
    x = np.concatenate([rng.uniform(-1.0, 6.0, 2500), rng.uniform(6.0, 258.0, 2500)])
    mean, var = exact_moments(x, s, 255.0)
    old_mean, old_var = _former_band_sums(x, s, 255.0)
    assert np.max(np.abs(mean - old_mean)) < 1e-6
    assert np.max(np.abs(var - old_var)) < 3e-5


def test_adu_moments_route_each_exact_pixel():
    # adu_moments gathers the exact pixels of an image (per-candidate top codes broadcast) and routes them:
    # the same values as exact_moments on each pixel alone.
    rng = np.random.default_rng(5)
    col = (slice(None), None, None)
    gain = rng.uniform(20.0, 160.0, 4)[col]
    top = rng.choice([255.0, 1023.0], 4)[col]
    mu = rng.uniform(0.0, 30.0, 4)[col] + rng.uniform(1e3, 3e4, 4)[col] * rng.random((4, 6, 6)) ** 4
    mean, var, exact = adu_moments(mu, np.full((4, 1, 1), 3.0), gain, top)
    assert 0.2 < exact.mean() < 1.0
    x, s = mu / gain, np.sqrt(mu + 9.0) / gain
    for i in range(4):
        e = exact[i]
        m1, v1 = exact_moments(x[i][e], s[i][e], top[i, 0, 0])
        assert np.array_equal(m1, mean[i][e]) and np.array_equal(v1, var[i][e])


def test_threads_keep_their_own_work_arrays():
    # The work arrays are kept between calls per thread: concurrent calls (numpy releases the GIL inside
    # the passes) give what each gives alone. Internal consistency.
    from concurrent.futures import ThreadPoolExecutor
    rng = np.random.default_rng(6)
    cases = [(rng.uniform(0.0, 40.0, 20000), rng.uniform(0.0, 0.75, 20000)) for _ in range(8)]
    alone = [exact_moments(x, s, 255.0) for x, s in cases]
    with ThreadPoolExecutor(4) as pool:
        together = list(pool.map(lambda c: [exact_moments(c[0], c[1], 255.0) for _ in range(5)], cases))
    for ref, runs in zip(alone, together, strict=True):
        for m, v in runs:
            assert np.array_equal(m, ref[0]) and np.array_equal(v, ref[1])
