"""The phase the image shows: the light pulse's Fourier component at the wave frequency,
and the phasor mean over the flashes of one exposure."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan import timing
from strobeplan.physics import exposure


def _sampled_delay(f, width, rise, fall, w, tau, led_rise, delay, n=400_000):
    # The light of one flash sampled until its tail has decayed (e^-14), folded into one
    # wave period (a flash every period), the LED's rise applied as a discrete single-pole
    # filter, then numpy's FFT: bin 1 is the wave frequency (Bracewell 2000, the DFT of a
    # periodic signal; Poisson summation).
    period = 1 / f
    k = 1 + math.ceil(14 * tau * f)
    t = np.arange(k * n) * period / n
    light = np.asarray(exposure.optical_pulse(t - delay, width, rise, fall, w, tau))
    light = np.where(t >= delay, light, 0.0).reshape(k, n).sum(axis=0)
    t = t[:n]
    if led_rise > 0:
        tc = led_rise / math.log(9)
        a = math.exp(-(period / n) / tc)
        out = np.empty_like(light)
        acc = 0.0
        for _ in range(3):  # periodic steady state of the pole: run it round three times
            for i in range(n):
                acc = a * acc + (1 - a) * light[i]
                out[i] = acc
        light = out
    spectrum = np.fft.rfft(light)
    return -np.angle(spectrum[1]) / (2 * np.pi * f)


@pytest.mark.parametrize("width, rise, fall, w, tau, led_rise, delay", [
    (1e-6, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0),
    (1e-6, 40e-9, 80e-9, 0.0, 0.0, 0.0, 60e-9),
    (2e-6, 20e-9, 20e-9, 0.1, 20e-6, 0.0, 0.0),   # the 10 % / 20 us phosphor tail
    (0.5e-6, 30e-9, 100e-9, 0.3, 1e-6, 50e-9, 35e-9),
    (100e-9, 80e-9, 40e-9, 0.0, 0.0, 20e-9, 25e-9),  # gate shorter than the rise
])
def test_fundamental_delay_against_fft(width, rise, fall, w, tau, led_rise, delay):
    f = 40e3
    measured = _sampled_delay(f, width, rise, fall, w, tau, led_rise, delay,
                              n=20_000 if led_rise else (100_000 if tau > 1e-6 else 400_000))
    got = exposure.fundamental_delay(f, width, rise, fall, w, tau, led_rise, delay)
    # within 0.02 deg of the wave (the sampling step is 0.018 deg at 20 000 samples)
    assert got == pytest.approx(measured, abs=0.02 / 360 / f + 1e-15)


def test_phosphor_tail_centroid_is_not_what_the_image_shows():
    # 40 kHz, 10 % phosphor with a 20 us decay: the centroid moves by w tau = 2 us
    # (28.8 deg of the wave) but the fundamental only by arg(0.9 + 0.1/(1 + j w tau)),
    # 1.2 deg (Bracewell 2000: the one-sided exponential's transform); the difference,
    # 27.6 deg, is what a centroid placement got wrong.
    f, w, tau = 40e3, 0.1, 20e-6
    centroid = exposure.optical_centroid(1e-6, 0.0, 0.0, w, tau)
    fundamental = exposure.fundamental_delay(f, 1e-6, 0.0, 0.0, w, tau)
    h = 0.9 + 0.1 / (1 + 2j * math.pi * f * tau)
    assert fundamental == pytest.approx(0.5e-6 - np.angle(h) / (2 * math.pi * f), rel=1e-9)
    assert 360 * f * (centroid - fundamental) == pytest.approx(27.6, abs=0.05)


def test_led_rise_is_a_pole_with_the_datasheet_rise_time():
    # 10-90 % of 1 - exp(-t/tau) takes tau ln 9 (definition); at low frequency the pole
    # delays by tau.
    tr = 22e-9
    h = exposure.led_rise_response(1e3, tr)
    assert -np.angle(h) / (2 * math.pi * 1e3) == pytest.approx(tr / math.log(9), rel=1e-6)


@settings(max_examples=200, deadline=None)
@given(first=st.floats(-10, 10), step=st.floats(-7, 7), n=st.integers(0, 400))
def test_phasor_mean_matches_direct_sum(first, step, n):
    # Direct sum of the unit phasors (the definition of the mean).
    phase, mag = timing.phasor_mean(first, step, n)
    if n <= 1:
        z = np.exp(1j * first)
    else:
        z = np.mean(np.exp(1j * (first + step * np.arange(n))))
    assert mag == pytest.approx(abs(z), abs=1e-9)
    if abs(z) > 1e-6:
        assert math.cos(phase - np.angle(z)) == pytest.approx(1.0, abs=1e-9)
