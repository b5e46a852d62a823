"""Tests for strobeplan.physics.acoustics: levels, spreading, detuning, near field."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import optimize, signal

from strobeplan.physics import acoustics as ac
from strobeplan.physics import air


def test_pressure_amplitude_reference_values():
    # ISO 1683: p0 = 20 uPa, SPL is RMS; 94 dB is 1.002 Pa RMS (the usual calibrator level), so
    # 1.4176 Pa peak [calc]; docs/references.md, "Acoustics and schlieren": 140 dB -> 282.84 Pa
    # peak.
    assert ac.pressure_amplitude(94.0) == pytest.approx(math.sqrt(2) * 1.0023745, rel=1e-6)
    assert ac.pressure_amplitude(140.0) == pytest.approx(282.8427, rel=1e-6)
    assert ac.pressure_amplitude(0.0) == pytest.approx(math.sqrt(2) * 20e-6, rel=1e-12)


@settings(max_examples=100, deadline=None)
@given(st.floats(-20.0, 200.0))
def test_pressure_round_trip(spl):
    assert ac.spl_from_pressure_amplitude(ac.pressure_amplitude(spl)) == pytest.approx(
        spl, abs=1e-9
    )


def test_voltage_gain():
    # 20 log10(2) = 6.0206 dB [calc]: doubling the drive doubles a linear source's pressure.
    assert ac.voltage_gain_db(20.0, 10.0) == pytest.approx(6.0206, abs=1e-4)
    assert ac.voltage_gain_db(10.0, 10.0) == 0.0


def test_spl_at_distance_worked_example():
    # docs/references.md, "Acoustics and schlieren": far field with the ISO 9613-1 coefficient at
    # 40 kHz, 20 degC, 50 % RH (1.3182 dB/m, docs/references.md, "Air"): 120 dB at 0.3 m -> at 1 m
    # 120 - 20 log10(1/0.3) - 1.3182 * 0.7 = 108.6196 dB [calc].
    alpha = air.absorption(40e3, 293.15, 0.5, 101325.0)
    assert ac.spl_at_distance(120.0, 0.3, 1.0, alpha) == pytest.approx(108.6196, abs=2e-4)


@settings(max_examples=100, deadline=None)
@given(st.floats(0.01, 10.0), st.floats(0.01, 10.0), st.floats(60.0, 160.0))
def test_spreading_is_inverse_square_in_intensity(r0, r, spl0):
    # Spherical spreading (Kinsler 2000): intensity ~ p^2 ~ 1/r^2, so p * r is constant.
    spl = ac.spl_at_distance(spl0, r0, r)
    p0, p = ac.pressure_amplitude(spl0), ac.pressure_amplitude(spl)
    assert p * r == pytest.approx(p0 * r0, rel=1e-9)


def test_absorption_applies_over_the_path_difference():
    # ISO 9613-1 clause 3: attenuation alpha s over the extra path only; a view nearer
    # than the reference distance gains back what the reference had lost.
    assert ac.spl_at_distance(100.0, 0.3, 0.3, 5.0) == pytest.approx(100.0)
    assert ac.spl_at_distance(100.0, 0.3, 0.2, 5.0) == pytest.approx(
        100.0 - 20 * math.log10(0.2 / 0.3) + 0.5
    )


def bvd_motional_admittance(f, fs, q):
    """|Y| of the series R1-L1-C1 motional branch from scipy.signal.freqs (oracle)."""
    r1 = 1.0
    l1 = q * r1 / (2 * math.pi * fs)
    c1 = 1.0 / ((2 * math.pi * fs) ** 2 * l1)
    # Y(s) = s C1 / (L1 C1 s^2 + R1 C1 s + 1)
    _, h = signal.freqs([c1, 0.0], [l1 * c1, r1 * c1, 1.0], worN=2 * np.pi * np.asarray(f))
    return np.abs(h)


def test_detuning_loss_at_half_power_points():
    # Butterworth-Van Dyke motional branch (Van Dyke 1928), oracle scipy.signal.freqs:
    # at f = fs (sqrt(1 + 1/(4Q^2)) +- 1/(2Q)) the motional current is down 3.0103 dB.
    fs, q = 40e3, 25.0
    offsets = np.array([1 / (2 * q), -1 / (2 * q)])
    f = fs * (math.sqrt(1 + 1 / (4 * q**2)) + offsets)
    magnitude = bvd_motional_admittance(f, fs, q) / bvd_motional_admittance(fs, fs, q)
    assert_allclose(ac.detuning_loss_db(magnitude), 10 * math.log10(2), atol=1e-9)
    assert ac.detuning_loss_db(1.0) == 0.0


def test_spl_at_view_combines_terms():
    # The four corrections add in dB (docs/references.md, "Acoustics and schlieren"); check against
    # a hand sum [calc]: 120 dB @ 0.3 m, 10 V rated, 20 V drive, view at 0.5 m, alpha 1.3 dB/m,
    # |H| = 0.5.
    expected = 120 + 20 * math.log10(2) - 20 * math.log10(0.5 / 0.3) - 1.3 * 0.2 + 20 * math.log10(
        0.5
    )
    assert ac.spl_at_view(120, 0.3, 10, 20, 0.5, 1.3, 0.5) == pytest.approx(expected, abs=1e-12)


def test_spl_at_view_vectorised():
    drive = np.array([5.0, 10.0, 20.0])
    distance = np.array([[0.1], [0.3]])
    spl = ac.spl_at_view(120.0, 0.3, 10.0, drive, distance, 1.3)
    assert spl.shape == (2, 3)
    assert spl[1, 1] == pytest.approx(120.0)


def test_near_field_distance_matches_last_axial_maximum():
    # Kinsler et al. (2000), baffled piston: on-axis |p| ~ |sin(k/2 (sqrt(z^2 + a^2) - z))|,
    # last maximum at a^2/lambda - lambda/4; oracle: scipy bounded maximisation of that
    # expression. For a = 10 lambda, N = a^2/lambda is within lambda/4 (0.25 %) of it.
    lam = 343.2 / 40e3
    a = 10 * lam
    k = 2 * math.pi / lam

    def minus_pressure(z):
        return -abs(math.sin(0.5 * k * (math.sqrt(z * z + a * a) - z)))

    n = ac.near_field_distance(a, lam)
    found = optimize.minimize_scalar(minus_pressure, bounds=(0.5 * n, 3 * n), method="bounded",
                                     options={"xatol": 1e-9})
    assert found.x == pytest.approx(a * a / lam - lam / 4, rel=1e-5)
    assert n == pytest.approx(found.x, rel=3e-3)


def test_detuning_loss_with_drive_motional_response():
    # The lead's drive.motional_response against the same scipy.signal.freqs oracle of the
    # R1-L1-C1 branch (Van Dyke 1928), 150 Hz off a Q = 40 resonance at 40 kHz.
    from strobeplan.physics import drive

    fs, q = 40e3, 40.0
    f = np.array([fs - 150.0, fs + 150.0, fs + 1000.0])
    oracle = bvd_motional_admittance(f, fs, q) / bvd_motional_admittance(fs, fs, q)
    ours = ac.detuning_loss_db(np.abs(drive.motional_response(f, fs, q)))
    assert_allclose(ours, -20 * np.log10(oracle), rtol=1e-9)
