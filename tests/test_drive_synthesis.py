"""Drive synthesis: the joint (M, N_c) search and the PWM table's sample-and-hold delay."""

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import signal

from strobeplan import timing
from strobeplan.physics import drive


def _brute(clock, f, carrier, tol):
    # Every N_c whose carrier clock/N_c lies within tol of the request, every M from 1 to
    # well past the carrier ratio: the smallest frequency error (the definition).
    best = math.inf
    n_lo = math.ceil(clock / (carrier * (1 + tol)))
    n_hi = math.floor(clock / (carrier * (1 - tol)))
    for nc in range(max(1, n_lo), n_hi + 1):
        for m in range(1, int(2 * carrier / f) + 3):
            best = min(best, abs(clock / (m * nc) - f) / f)
    return best


@settings(max_examples=80, deadline=None)
@given(clock=st.floats(4e6, 120e6), f=st.floats(20e3, 200e3), ratio=st.floats(8, 40))
def test_joint_search_matches_brute_force(clock, f, ratio):
    carrier = ratio * f
    assume(clock / carrier >= 8)
    m, nc = timing.choose_drive(clock, f, carrier=carrier)
    if abs(clock / nc - carrier) > 0.1 * carrier:  # no pair inside the tolerance
        assert _brute(clock, f, carrier, 0.1) == math.inf
        return
    err = abs(clock / (m * nc) - f) / f
    assert err == pytest.approx(_brute(clock, f, carrier, 0.1), rel=1e-9, abs=1e-15)


def test_joint_search_beats_the_nearest_ratio():
    # 36 MHz clock, 40.32 kHz, carrier 20 f: M = 20 alone gives N_c = 45 (40.0 kHz,
    # -7937 ppm); M = 19, N_c = 47 gives 40.314 kHz (-160 ppm) with the carrier 5 % off
    # (arithmetic: 36e6 / (M N_c)).
    f = 40.32e3
    m, nc = timing.choose_drive(36e6, f, carrier=20 * f)
    assert (m, nc) == (19, 47)
    assert (36e6 / (m * nc) - f) / f * 1e6 == pytest.approx(-159.9, abs=0.5)
    assert (36e6 / (20 * 45) - f) / f * 1e6 == pytest.approx(-7937, abs=1)
    assert abs(36e6 / nc - 20 * f) <= 0.1 * 20 * f


def test_samples_per_cycle_still_fixes_m():
    assert timing.choose_drive(100e6, 40e3, samples_per_cycle=25)[0] == 25


def _pwm(m, ticks, cycles, aligned, index=0.8):
    n = np.arange(m * cycles)
    duty = (1 + index * np.sin(2 * np.pi * n / m)) / 2
    on = np.round(duty * ticks).astype(int)
    k = np.arange(ticks)
    if aligned == "edge":
        x = k[None, :] < on[:, None]
    else:
        start = (ticks - on) // 2
        x = (k[None, :] >= start[:, None]) & (k[None, :] < (start + on)[:, None])
    return x.astype(float).ravel()


@pytest.mark.parametrize("m", [8, 20, 25])
@pytest.mark.parametrize("aligned", ["edge", "centre"])
def test_sample_hold_delay_against_fft(m, aligned):
    # A synthesised PWM drive (sine table, one entry per carrier period, 200 ticks each),
    # passed through a 2nd-order Butterworth (scipy.signal.lsim), its fundamental's phase
    # by numpy FFT: delay = filter phase delay + the hold delay T_c / 2, within 1 % of T_c.
    f, ticks, cycles = 40e3, 200, 40
    tc = 1 / (m * f)
    x = _pwm(m, ticks, cycles, aligned)
    t = np.arange(x.size) * tc / ticks
    b, a = signal.butter(2, 2 * np.pi * 60e3, analog=True)
    _, y, _ = signal.lsim((b, a), x - 0.5, t)
    half = x.size // 2  # steady state: the last half, a whole number of cycles
    spectrum = np.fft.rfft(y[half:])
    phase = np.angle(spectrum[cycles // 2]) + np.pi / 2  # relative to sin(w t)
    measured = -phase / (2 * np.pi * f)
    _, h = signal.freqs(b, a, [2 * np.pi * f])
    filter_delay = -np.angle(h[0]) / (2 * np.pi * f)
    expected = filter_delay + drive.sample_hold_delay(m * f)
    assert measured == pytest.approx(expected, abs=0.01 * tc)
    # 180 / M degrees of the wave (9 deg at M = 20).
    assert math.degrees(2 * np.pi * f * drive.sample_hold_delay(m * f)) == pytest.approx(
        180 / m)
