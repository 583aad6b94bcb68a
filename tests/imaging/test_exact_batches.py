"""The exact-rounding locator figures over many candidates equal the same candidates computed one at a time.

``choose`` evaluates thousands of candidates in one call: grouped by window size, in chunks, with the
figures of a candidate already computed in the process taken from a memo. None of that may change a
figure: each candidate alone (one rig, no memo) is the reference, to 1e-10 relative or 1e-16 px²
(floating-point summation order only; a bias of 1e-5 px squared keeps few digits).

Not a reference check: in every test below the expected value is the same model computed another way
(one candidate alone, afresh instead of from the memo, by the threshold sums instead of the series):
internal consistency, said beside each check. The model itself is checked against rendered images, an outside
simulation, in tests/imaging/test_locator_rendered.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from budget.imaging import pixel_model
from budget.imaging.pixels import adu_moments


def _cameras(n: int, seed: int) -> dict:
    rng = np.random.default_rng(seed)
    bits = rng.choice([8.0, 10.0, 12.0], n)
    return dict(sigma_px=rng.uniform(0.6, 2.6, n), signal_e=rng.uniform(2e3, 4e4, n),
                background_e=rng.uniform(0.0, 40.0, n), read_noise_e=rng.uniform(1.5, 10.0, n),
                gain_e_per_adu=rng.uniform(5e3, 4e4, n) / (2.0**bits - 1.0), bit_depth=bits,
                window_px=2 * rng.integers(2, 10, n) + 1)


@pytest.mark.parametrize("method", ["centroid", "fit"])
def test_many_candidates_in_one_call_equal_each_alone(method, monkeypatch):
    # Internal consistency: a batch against each candidate alone (no outside reference; the model itself is
    # checked against rendered images in tests/imaging/test_locator_rendered.py).
    kw = _cameras(90, 3)
    pixel_model._EXACT_MEMO.clear()
    monkeypatch.setattr(pixel_model, "_CHUNK_VALUES", 1 << 14)  # several chunks per window size
    many = pixel_model.locator_terms(method, frames=8, **kw)
    assert many.exact_adc.sum() > 30 and np.unique(kw["window_px"][many.exact_adc]).size > 4
    again = pixel_model.locator_terms(method, frames=8, **kw)  # from the memo
    for i in np.flatnonzero(many.exact_adc):  # the linear ones are interpolated between σ nodes in a batch
        alone = pixel_model.locator_terms(method, frames=8, **{k: v[i:i + 1] for k, v in kw.items()})
        for name in ("fixed_var", "fixed_peak", "noise_var", "random_var"):
            ref = getattr(alone, name)[0]
            assert getattr(many, name)[i] == pytest.approx(ref, rel=1e-10, abs=1e-16)
            assert getattr(again, name)[i] == getattr(many, name)[i]


def test_memo_tells_candidates_apart():
    # Internal consistency: a memoised figure against the same figure computed afresh.
    kw = _cameras(80, 5)
    pixel_model._EXACT_MEMO.clear()
    first = pixel_model.locator_terms("centroid", **kw)
    kw2 = dict(kw, read_noise_e=kw["read_noise_e"] * 1.01)
    second = pixel_model.locator_terms("centroid", **kw2)
    pixel_model._EXACT_MEMO.clear()
    fresh = pixel_model.locator_terms("centroid", **kw2)
    assert np.array_equal(second.fixed_var, fresh.fixed_var)
    assert not np.array_equal(first.fixed_var[first.exact_adc], second.fixed_var[first.exact_adc])


def test_adu_moments_over_an_image_equal_each_pixel_alone():
    # Internal consistency: per-candidate camera figures broadcast against (C, P, P, J, J) pixels, as the
    # locator model calls it, against each pixel alone. The outside check of one pixel's moments (the
    # rounded normal's probability mass by scipy.special.ndtr) is tests/imaging/test_rounding.py.
    rng = np.random.default_rng(11)
    c = 6
    col = (slice(None), None, None, None, None)
    gain = rng.uniform(20.0, 160.0, c)[col]
    read = rng.uniform(1.5, 10.0, c)[col]
    top = rng.choice([255.0, 1023.0], c)[col]
    mu = rng.uniform(0.0, 30.0, c)[col] + rng.uniform(1e3, 3e4, c)[col] * rng.random((c, 2, 2, 5, 5)) ** 6
    mean, var, exact = adu_moments(mu, read, gain, top)
    assert 0.2 < exact.mean() < 1.0
    for idx in np.ndindex(mu.shape):
        i = idx[0]
        m1, v1, e1 = adu_moments(mu[idx], read[i, 0, 0, 0, 0], gain[i, 0, 0, 0, 0], top[i, 0, 0, 0, 0])
        assert (float(m1), float(v1), bool(e1)) == (mean[idx], var[idx], exact[idx])


@pytest.mark.parametrize("phi, rel", [("accurate", 5e-9), ("coarse", 2e-5)])
def test_dither_series_leaves_the_locator_figures(phi, rel, monkeypatch):
    # The dither series (noise 0.3-0.75 count, clips 7 sd away) against the threshold sums everywhere (as
    # main computed them, up to the 6.5 sd reach), over mixed 8/10/12-bit candidates. With scipy's normal CDF
    # on both routes they differ only by the sums' truncation (Φ(−6.5) = 4e-11 per pixel): measured 6.5e-10
    # relative on the fixed variance, 1.7e-9 on the largest bias; tolerance 5e-9. With A&S 7.1.26 the sums
    # carry up to 7.5e-8 count per threshold, and the fixed variance (squares of biases near 1e-3 px) shows
    # it at 3e-6 relative (measured); tolerance 2e-5. Internal consistency: the expected value is the same
    # model by the sums alone. The outside checks of each route (scipy.special.ndtr's rounded-normal
    # probability mass) are in tests/imaging/test_rounding.py; the scipy Φ here only removes A&S 7.1.26's
    # own error from the comparison. Sources of what is compared: the series is the quantization theory of
    # Widrow & Kollár, Quantization Noise (Cambridge UP 2008), chs. 4–5, cited from memory; A&S 7.1.26 is
    # Abramowitz & Stegun, Handbook of Mathematical Functions (1964), eq. 7.1.26.
    from scipy.special import ndtr

    from budget.imaging import rounding
    if phi == "accurate":
        monkeypatch.setattr(rounding, "phi_coarse_into", lambda z, out, w1, w2: np.copyto(out, ndtr(z)))
    kw = _cameras(90, 3)
    pixel_model._EXACT_MEMO.clear()
    with_series = pixel_model.locator_terms("centroid", frames=8, **kw)
    monkeypatch.setattr(rounding, "SERIES_FROM", np.inf)
    pixel_model._EXACT_MEMO.clear()
    sums_only = pixel_model.locator_terms("centroid", frames=8, **kw)
    pixel_model._EXACT_MEMO.clear()
    assert with_series.exact_adc.sum() > 30
    for name in ("fixed_var", "fixed_peak", "noise_var", "random_var"):
        assert np.allclose(getattr(with_series, name), getattr(sums_only, name), rtol=rel, atol=0)


@pytest.mark.parametrize("streak", [0.0, 1.7])
def test_spot_moments_from_profiles_equal_those_of_the_image(streak):
    # The exact model forms a spot's profiles once per window size and, for a still spot, takes the ADC's
    # moments on the phase pairs a <= b only (the others are transposes): the same values, bit for bit, as
    # adu_moments on image_2d's image. Internal consistency.
    from budget.imaging.pixels import image_2d, spot_adu_moments, spot_profiles
    kw = _cameras(12, 7)
    sig = kw["sigma_px"]
    ph = (np.arange(4) + 0.5) / 8.0
    streaks = np.full(sig.size, streak)
    px, py = spot_profiles(sig, streaks, ph, 6)
    assert (py is px) == (streak == 0.0)
    top = 2.0 ** kw["bit_depth"] - 1.0
    mean, var = spot_adu_moments(px, py, kw["signal_e"], kw["background_e"], kw["read_noise_e"],
                                 kw["gain_e_per_adu"], top)
    e5 = (slice(None), None, None, None, None)
    img = image_2d(np.arange(-6, 7.0), ph, ph, shape="spot", sigma=sig, disk=np.zeros(sig.size), streak=streaks)
    ref_mean, ref_var, _ = adu_moments(kw["signal_e"][e5] * img + kw["background_e"][e5], kw["read_noise_e"][e5],
                                       kw["gain_e_per_adu"][e5], top[e5])
    assert np.array_equal(mean, ref_mean) and np.array_equal(var, ref_var)
