"""The locator model (budget.imaging.pixel_model through locator_model) against rendered images.

Each case is a rig whose readings ``verify_locator`` renders with the project's renderer
(budget.imaging.render: shot and read noise, ADC, the rig's target), locates with the rig's locator
and compares with the model's u of a located reading: within 10 % (the issue's tolerance), with
enough readings that the Monte Carlo standard error (u/√(2m), m errors) is at most a third of it.
Beside each case, what the old closed forms said and a derivation of why the images differ.
Seeds are fixed (derandomized)."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from budget.imaging.locator_model import locator_model
from budget.imaging.verify import verify_locator
from budget.inputs.rig_file import load_rig
from tests.paths import TEMPLATES

_BASE = load_rig(TEMPLATES / "gauge_static.toml")  # 12-bit, 10 500 e full well, 2.4 e read noise


def _rig(*, sigma=0.8, signal=20000.0, background=10.0, read=3.0, bits=12, full_well=20000.0, method="centroid",
         window=9, window_at="brightest", frames=1, averaged="positions", shape="spot", disk_px=0.0,
         moving_streak_px=0.0):
    r = _BASE
    cam = replace(r.camera, read_noise_e=read, bit_depth=bits, full_well_e=full_well)
    diameter = disk_px * cam.pitch_um * 1e-3 / r.magnification
    tgt = replace(r.target, shape=shape, sigma_px=sigma, diameter_mm=diameter, signal_e=signal, background_e=background)
    motion = r.motion
    if moving_streak_px:
        rate = 150.0  # deg/s; the exposure that makes the streak at this rig's radius
        cam = replace(cam, exposure_ms=1e3 * moving_streak_px / (math.radians(rate) * r.radius_px))
        motion = replace(r.motion, state="moving", rate_deg_per_s=rate)
    return replace(r, camera=cam, target=tgt, motion=motion,
                   locator=replace(r.locator, method=method, window_px=window, window_at=window_at),
                   frames=replace(r.frames, per_reading=frames, averaged=averaged))


def _check(rig, renders, seed):
    res = verify_locator(rig, renders=renders, rng=np.random.default_rng(np.random.SeedSequence(seed)))
    assert res.sd_px_se < res.sd_px_empirical * 0.034, "too few renders for a 10 % test"
    assert res.sd_px_model == pytest.approx(res.sd_px_empirical, rel=0.10), res.verdict
    assert res.supported
    return res


def test_centroid_window_narrower_than_the_spot():
    # σ = 1 px in a 5 px window: the truncation bias over the phase is close to a sawtooth [derived:
    # the windowed centre of mass of erf pixel values]; its rms/max is near 1/√3 = 0.58, not the
    # arcsine's 1/√2, so the model carries it as rectangular with the bias's mean square.
    rig = _rig(sigma=1.0, window=5)
    lm = locator_model(rig)
    assert lm.locking_amplitude_px == 0 and lm.locking_half_width_px > 0.04
    res = _check(rig, 1500, 1)
    assert res.sd_px_model < 0.8 * math.hypot(0.055 / math.sqrt(2), lm.reading_noise_px)  # the old arcsine, 0.055 px


def test_integer_locator_dim_spot_one_frame():
    # 300 e in σ = 0.8 px over 20 e background: shot noise moves the brightest pixel to a neighbour,
    # u well above the 1/√12 = 0.289 px of a bright spot (JCGM 100 F.2.2.1).
    rig = _rig(method="integer", signal=300.0, background=20.0, read=5.0, full_well=10000.0)
    res = _check(rig, 2000, 2)
    assert res.sd_px_model > 0.32


@pytest.mark.parametrize("averaged, low, high", [("positions", 0.12, 0.17), ("images", 0.26, 0.32)])
def test_integer_locator_frames_averaged(averaged, low, high):
    # 16 frames of the dim spot: averaging located pixels dithers the whole-pixel steps away
    # (the noise does it), averaging images first gives a brighter image whose brightest pixel is
    # the nearest one again: u near 1/√12 [derived].
    rig = _rig(method="integer", signal=300.0, background=20.0, read=5.0, full_well=10000.0, frames=16,
               averaged=averaged)
    res = _check(rig, 500, 3)
    assert low < res.sd_px_model < high


@pytest.mark.parametrize("frames", [1, 16])
def test_low_bit_depth_adc_with_little_noise(frames):
    # 8 bits over 10 000 e (39 e per count) with 2 e read noise and no background: the dark pixels
    # read 0 (no noise), the rounding of the spot's pixels is fixed by the phase and does not average.
    rig = _rig(bits=8, full_well=10000.0, read=2.0, background=0.0, signal=8000.0, window=7, frames=frames)
    lm = locator_model(rig)
    many = locator_model(replace(rig, frames=replace(rig.frames, per_reading=256)))
    assert math.sqrt(lm.fixed_var_px2) == pytest.approx(math.sqrt(many.fixed_var_px2))  # not averaged away
    assert 0.004 < math.sqrt(many.fixed_var_px2) < 0.009
    _check(rig, 3000 if frames == 1 else 400, 4 + frames)


def test_sixteen_bit_centroid():
    _check(_rig(bits=16, full_well=20000.0, sigma=0.9, window=9, signal=20000.0), 1500, 6)


def test_fit_of_a_spot():
    # Mortensen et al. 2010 (Nat. Methods 7:377), least-squares fit.
    _check(_rig(method="fit", sigma=1.0, window=9, signal=5000.0), 500, 7)


@pytest.mark.parametrize("frames", [1, 16])
def test_fit_with_a_low_bit_depth_adc(frames):
    # 8 bits, 2 e read noise, no background: the fit's first-order error Σd·r/Σd² with the rounding's
    # exact mean and variance per pixel [derived]; the dark pixels add nothing.
    rig = _rig(method="fit", bits=8, full_well=10000.0, read=2.0, background=0.0, signal=8000.0, window=9,
               frames=frames)
    _check(rig, 600 if frames == 1 else 300, 12 + frames)


def test_disk_in_a_centred_window_has_no_truncation():
    # A 6 px disk (edge blur 0.5 px) in an 11 px window: nothing is clipped, no "window" note, and the
    # phase-fixed error is small (the disk's locking, not a Gaussian's truncation of equal spread).
    rig = _rig(shape="disk", disk_px=6.0, sigma=0.5, signal=50000.0, window=11)
    lm = locator_model(rig)
    assert not any("clips" in n for n in lm.notes)
    assert math.sqrt(lm.fixed_var_px2) < 0.001
    _check(rig, 800, 8)


@pytest.mark.parametrize("window_at, low, high", [("brightest", 0.018, 0.03), ("centroid", 0.006, 0.011)])
def test_disk_window_placement(window_at, low, high):
    # A 9 px window on a 6 px disk: on the brightest pixel, which wanders over the flat top from frame
    # to frame, the window clips the disk; re-centred on a first centroid it holds it.
    rig = _rig(shape="disk", disk_px=6.0, sigma=0.5, signal=50000.0, window=9, window_at=window_at)
    res = _check(rig, 800, 9)
    assert low < res.sd_px_model < high


def test_moving_target_streak():
    # 150 °/s over a 6.7 px streak: the centre of mass of a streak has the photon term of its second
    # moment along the streak, (σ² + 1/12 + L²/12)/N (Thompson et al. 2002 eq. (14) with the streak's
    # variance L²/12 [derived]), 2.5 times the still spot's σ² + 1/12 here.
    # the window re-centred on a first centroid: the streak's own physics (on the brightest pixel, the
    # test below)
    rig = _rig(moving_streak_px=6.7, sigma=0.8, signal=5000.0, background=0.0, read=0.5, bits=16, window=15,
               window_at="centroid")
    still = locator_model(rig)
    lm = locator_model(rig, moving=True)
    assert lm.streak_px == pytest.approx(6.7)
    g = 20000.0 / 65535.0
    # the window's dark pixels: read noise s = 0.5 e / g = 1.6 counts about 0 through the ADC's rounding and its
    # clip at 0, variance s²(½ − 1/2π) + 1/24 counts² (the half-normal's, and the rounding's 1/12 on the half
    # that is read) [derived], not the linear 0.5² + g²/12
    s = 0.5 / g
    dark = g**2 * (s**2 * (0.5 - 1 / (2 * math.pi)) + 1 / 24)
    window = dark * 15**2 * (15**2 - 1) / 12 / 5000**2
    assert lm.reading_noise_px == pytest.approx(math.sqrt((0.64 + 1 / 12 + 6.7**2 / 12) / 5000 + window), rel=0.03)
    assert still.reading_noise_px == pytest.approx(math.sqrt((0.64 + 1 / 12) / 5000 + window), rel=0.03)
    res = _check(rig, 800, 10)
    assert res.streak_px == pytest.approx(6.7)


def test_moving_target_streak_window_on_the_brightest_pixel():
    # The same streak, its 15 px window on each frame's brightest pixel, which wanders along the streak's
    # flat top (P = 0.08, 0.27, 0.30, 0.27, 0.08 at −2 … +2 px from the nearest pixel, model and renders
    # alike). Two things move the centroid with the window, both toward the side it sits on, both in
    # the renders (8000 readings, window at +2 px: mean error +0.027 px, +0.016 px with the window taken
    # from an independent frame's brightest pixel, +0.017 px with it fixed there): the dark pixels
    # read through the ADC's clip at 0 (1.6 counts of read noise about 0: +0.65 count each, 225 of them
    # against 16 400 counts of signal pull to the window's centre) and the choice itself (the chosen
    # pixel reads high, its rivals low) [derived, budget.imaging.brightest]. Without them the model
    # said 0.0306 px against 0.0337 px rendered.
    rig = _rig(moving_streak_px=6.7, sigma=0.8, signal=5000.0, background=0.0, read=0.5, bits=16, window=15,
               window_at="brightest")
    centred = locator_model(replace(rig, locator=replace(rig.locator, window_at="centroid")), moving=True)
    res = _check(rig, 4000, 10)
    assert res.sd_px_model > 1.1 * centred.u_px  # 0.0336 against 0.0301 px
    assert res.sd_px_model == pytest.approx(res.sd_px_empirical, rel=0.05)  # 1.017 rendered/model here


def test_moving_target_streak_with_background():
    # the same streak over 10 e of background and 3 e read noise in a 15 px window
    _check(_rig(moving_streak_px=6.7, sigma=0.8, signal=5000.0, window=15), 800, 11)
