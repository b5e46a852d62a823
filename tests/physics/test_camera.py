"""Tests for strobeplan.physics.camera: the camera equation, droop, noise and SNR."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import camera as cam


def test_camera_equation_hand_worked():
    # Hand-worked case (Boyd 1983 ch. 5: flux = L x A_p x A_s / d^2; EMVA 1288 eq. 1-2):
    #   LED 1.0 W over a 1 mm x 1 mm Lambertian die: L = 1 / (pi 1e-6) = 318 309.9 W/m^2/sr
    #   slit 0.5 mm x 1 mm = 5e-7 m^2 at f1 = 1.5 m: solid angle 5e-7 / 2.25 = 2.2222e-7 sr
    #   object pixel 40 um: A_p = 1.6e-9 m^2
    #   transmissions: 0.9^2 (two mirrors) x 0.9 (lens) x 0.5 (half cut) = 0.3645
    #   P = 318 309.9 x 0.3645 x 1.6e-9 x 2.2222e-7 = 4.1253e-11 W
    #   over a 1 us flash: 4.1253e-17 J; photon at 625 nm: h c / lambda = 3.1784e-19 J
    #   photons 129.79, QE 0.6 -> 77.88 e-
    L = cam.lambertian_radiance(1.0, 1e-6)
    assert L == pytest.approx(318309.886, rel=1e-8)
    p = cam.pixel_power(L, 0.9**2 * 0.9 * 0.5, 40e-6, 0.5e-3 * 1e-3, 1.5)
    assert p == pytest.approx(4.1253e-11, rel=1e-4)
    assert cam.photoelectrons(p * 1e-6, 625e-9, 0.6) == pytest.approx(77.88, rel=1e-3)


def test_relative_output_droop():
    # Datasheet-style curve (demo numbers): 1 A -> 1.0, 3 A -> 2.5, 5 A -> 3.6; linear between,
    # the last slope beyond: 7 A -> 3.6 + 2 x 0.55 = 4.7; through (0, 0) below the first.
    i, r = [1.0, 3.0, 5.0], [1.0, 2.5, 3.6]
    assert cam.relative_output(2.0, i, r) == pytest.approx(1.75)
    assert cam.relative_output(7.0, i, r) == pytest.approx(4.7)
    assert cam.relative_output(0.5, i, r) == pytest.approx(0.5)
    # flux scaled from a rating at 1 A of 0.8 W: at 3 A, 2.0 W (not 2.4 W: droop)
    assert cam.radiant_flux(3.0, 1.0, 0.8, i, r) == pytest.approx(2.0)
    assert cam.radiant_flux(3.0, 1.0, 0.8) == pytest.approx(2.4)  # no curve: proportional


def test_quantisation_noise():
    # EMVA 1288 eq. 6: q^2/12; 10500 e- over 10 bits: step 10.254 e-, RMS 2.960 e-.
    assert cam.quantisation_noise(10500, 10) == pytest.approx(10500 / 1024 / 12**0.5)


def test_snr_against_simulated_poisson_frames():
    # Simulate frames: Poisson photoelectrons (mean m +/- signal s on alternating pixels),
    # Gaussian read noise, an ideal ADC of full-well / 2^bits steps; the measured SNR of the
    # wave (difference of the two pixel means over the per-pixel noise) within 5 % of the
    # model's (EMVA 1288 linear model).
    rng = np.random.default_rng(7)
    m, s, read, fw, bits = 400.0, 30.0, 2.5, 10500.0, 10
    n = 200_000
    step = fw / 2**bits
    bright = rng.poisson(m + s, n) + rng.normal(0, read, n)
    plain = rng.poisson(m, n) + rng.normal(0, read, n)
    dn_b = np.floor(bright / step) * step
    dn_p = np.floor(plain / step) * step
    measured = (dn_b.mean() - dn_p.mean()) / dn_p.std()
    predicted = cam.snr(s, cam.noise(m, read, fw, bits))
    assert measured == pytest.approx(predicted, rel=0.05)
    # averaging 4 frames and 2 x 2 binning: x 4 in SNR
    assert cam.snr(s, cam.noise(m, read, fw, bits), 2, 4) == pytest.approx(4 * predicted)


def test_grey_level_and_min_spl():
    assert cam.grey_level(5250, 10500, 8) == pytest.approx(127.5)
    assert cam.grey_level(2e4, 10500, 8) == 255.0
    # linear response: SNR 50 at 140 dB -> SNR 5 at 120 dB; quadratic (rod): 130 dB
    assert cam.min_detectable_spl(140.0, 50.0, 5.0, 1) == pytest.approx(120.0)
    assert cam.min_detectable_spl(140.0, 50.0, 5.0, 2) == pytest.approx(130.0)


@settings(max_examples=60, deadline=None)
@given(m=st.floats(0, 1e5), r=st.floats(0, 20))
def test_noise_at_least_shot_and_read(m, r):
    n = cam.noise(m, r, 1e4, 12)
    assert n >= np.sqrt(m) - 1e-9 and n >= r - 1e-9


def test_broadcasts():
    out = cam.photoelectrons(np.ones((3, 1)) * 1e-15, np.array([450e-9, 625e-9]), 0.6)
    assert out.shape == (3, 2)


def test_etendue_against_monte_carlo():
    # Independent: the flux between two small parallel patches (the slit, and a pixel's
    # object area on the mirror f1 away) is L int int cos(t1) cos(t2) / r^2 dA1 dA2
    # (Boyd 1983, ch. 5); Monte-Carlo over random points of both patches, 2 % agreement
    # with the small-angle product L A_p A_s / f1^2.
    rng = np.random.default_rng(3)
    n, f1 = 200_000, 0.5
    src = rng.uniform(-0.5e-3, 0.5e-3, (n, 2)) * [0.2, 1.0]  # 0.2 mm x 1 mm slit
    pix = rng.uniform(-20e-6, 20e-6, (n, 2)) + [30e-3, 0.0]  # 40 um patch, 30 mm off axis
    d = np.column_stack([pix - src, np.full(n, f1)])
    r2 = (d**2).sum(axis=1)
    cos = f1 / np.sqrt(r2)
    area_s, area_p = 0.2e-3 * 1e-3, 40e-6 * 40e-6
    mc = (cos * cos / r2).mean() * area_s * area_p
    model = cam.pixel_power(1.0, 1.0, 40e-6, area_s, f1)
    assert model == pytest.approx(mc, rel=0.02)
