"""Tests of budget.imaging.verify: the locator check on synthetic renders."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from budget.imaging.locator_model import locator_model
from budget.imaging.verify import verify_locator
from budget.inputs.rig_file import load_rig
from tests.paths import TEMPLATES


def _rig(sigma_px: float, window_px: int = 7, method: str = "centroid"):
    rig = load_rig(TEMPLATES / "gauge_static.toml")
    # 5000 e keeps the brightest pixel below the 10500 e full well at sigma = 0.35 px
    return replace(rig, target=replace(rig.target, sigma_px=sigma_px, signal_e=5000.0),
                   locator=replace(rig.locator, window_px=window_px, method=method))


def test_supported_where_the_model_holds():
    # sigma = 0.35 px: pixel-locking amplitude exp(-2 pi^2 s^2)/pi = 0.028 px (spot_theory, exact series
    # for a pixel-integrated Gaussian); the renderer draws exactly that spot, so the check must agree
    # within 3 standard errors or the 1.2 factor (verify.RATIO_TOLERANCE).
    rig = _rig(0.35)
    res = verify_locator(rig, renders=1500, rng=np.random.default_rng(np.random.SeedSequence(11)))
    assert res.supported, res.verdict
    assert "supported" in res.verdict[-1] and "NOT" not in res.verdict[-1]
    assert res.locking_px_model > 0.02


def test_not_supported_when_the_rig_states_the_wrong_spot():
    # Rendered sigma 0.55 px where the rig says 0.35 px: the true locking amplitude is
    # exp(-2 pi^2 0.55^2)/pi = 0.0008 px against 0.028 px assumed [derived]: not supported.
    res = verify_locator(_rig(0.35), renders=1500, rng=np.random.default_rng(np.random.SeedSequence(12)),
                         rendered_sigma_px=0.55)
    assert not res.supported
    assert "NOT supported" in res.verdict[-1]


def test_saturation_is_named():
    # [derived] at sigma = 0.35 px the centre pixel holds erf(0.5/(0.35 sqrt 2))^2 = 0.72 of the signal.
    rig = load_rig(TEMPLATES / "gauge_static.toml")
    rig = replace(rig, target=replace(rig.target, sigma_px=0.35), locator=replace(rig.locator, window_px=7))
    res = verify_locator(rig, renders=300, rng=np.random.default_rng(15))
    assert any("saturation" in v for v in res.verdict)


def test_not_supported_with_a_forced_wrong_noise():
    # A budget that assumes three times the noise per frame the light budget gives.
    rig = _rig(0.9, window_px=11)
    lm = locator_model(rig)
    wrong = replace(lm, noise_px_per_frame=3 * lm.noise_px_per_frame, noise_px_per_reading=3 * lm.reading_noise_px)
    res = verify_locator(rig, renders=800, rng=np.random.default_rng(np.random.SeedSequence(13)), model=wrong)
    assert not res.supported
    assert any(v.startswith("u of a located reading") and "NOT supported" in v for v in res.verdict)


def test_integer_locator_quantization_is_supported():
    # JCGM 100 F.2.2.1: integer-pixel error uniform on [-1/2, 1/2] px, sd 1/sqrt(12) = 0.289 px.
    rig = _rig(0.9, method="integer")
    rig = replace(rig, frames=replace(rig.frames, per_reading=1))
    res = verify_locator(rig, renders=800, rng=np.random.default_rng(14))
    assert res.supported, res.verdict
    assert abs(res.sd_px_empirical - 12**-0.5) < 0.03
