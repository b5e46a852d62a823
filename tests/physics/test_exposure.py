"""Tests for strobeplan.physics.exposure: temporal MTF, pulse shape, durations, blur.

The independent oracle for the pulse is built here, not taken from the module: the current
by np.interp over its corner points, the phosphor part tau y' + y = i by scipy.signal
(cont2discrete with a first-order hold, exact for a piecewise-linear input, then lfilter),
and the spectrum by a numpy FFT of the sampled pulse.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import integrate, optimize, signal

from strobeplan.physics import exposure as ex

F40 = 40e3  # [Hz]


# ---------------------------------------------------------------- independent oracle
def sampled_pulse(width, rise, fall, w, tau, dt=1e-9, duration=100e-6):
    """Optical pulse sampled at dt, built without the module (see the module docstring)."""
    t = np.arange(0.0, duration, dt)
    if width >= rise:
        knots_t, knots_i = [0.0, rise, width, width + fall], [0.0, 1.0, 1.0, 0.0]
    else:
        a = width / rise
        knots_t, knots_i = [0.0, width, width + a * fall], [0.0, a, 0.0]
    current = np.interp(t, knots_t, knots_i)
    if w > 0 and tau > 0:
        # Exact first-order-hold discretisation of 1 / (tau s + 1), then a linear filter.
        num, den, _ = signal.cont2discrete(([1.0], [tau, 1.0]), dt, method="foh")
        slow = signal.lfilter(np.ravel(num), den, current)
    else:
        slow = current
    return t, (1 - w) * current + w * slow


def fft_spectrum(t, p, frequencies):
    """Normalised spectrum at the given frequencies from an FFT of the sampled pulse."""
    dt = t[1] - t[0]
    spectrum = np.fft.rfft(p)
    bins = np.fft.rfftfreq(p.size, dt)
    index = np.rint(np.asarray(frequencies) / bins[1]).astype(int)
    assert_allclose(bins[index], frequencies)  # the frequencies fall on bins exactly
    return spectrum[index] / spectrum[0]


# ---------------------------------------------------------------- check values
@pytest.mark.parametrize(
    ("width", "expected"),
    # docs/references.md, "Exposure" [calc]: |sinc(f tau)| at 40 kHz (Boreman 2001, rectangular
    # exposure).
    [(1e-6, 0.997370), (5e-6, 0.935489), (12.5e-6, 2.0 / math.pi)],
)
def test_rectangle_is_sinc(width, expected):
    assert ex.retention(F40, width, 0.0, 0.0, 0.0, 0.0) == pytest.approx(expected, abs=1e-6)


def test_rectangle_against_numpy_sinc_grid():
    # Oracle: numpy's normalised sinc, |sinc(f w)|, over the first three lobes.
    w = np.linspace(0.1e-6, 75e-6, 400)
    assert_allclose(ex.retention(F40, w, 0.0, 0.0, 0.0, 0.0), np.abs(np.sinc(F40 * w)),
                    rtol=1e-12, atol=1e-14)


def test_jitter_check_value():
    # docs/references.md, "Exposure": Gaussian jitter, 40 kHz, 1 us -> 0.968911 (Johnson 1993,
    # [src2]).
    assert ex.jitter_factor(F40, 1e-6) == pytest.approx(0.968911, abs=1e-6)


def test_jitter_matches_gaussian_characteristic_function():
    # Oracle: E[exp(j 2 pi f X)] for X ~ N(0, sigma), integrated numerically with scipy.
    sigma, f = 0.7e-6, 120e3

    def real_part(x):
        return math.cos(2 * math.pi * f * x) * math.exp(-0.5 * (x / sigma) ** 2)

    value, _ = integrate.quad(real_part, -10 * sigma, 10 * sigma, limit=200)
    expected = value / (sigma * math.sqrt(2 * math.pi))
    assert ex.jitter_factor(f, sigma) == pytest.approx(expected, rel=1e-9)


def test_combined_jitter_adds_in_quadrature():
    # Independent variances add (Papoulis & Pillai 2002): 3 ns and 4 ns -> 5 ns.
    assert ex.combined_jitter(3e-9, 4e-9) == pytest.approx(5e-9, rel=1e-12)
    assert ex.jitter_factor(F40, ex.combined_jitter(3e-9, 4e-9)) == pytest.approx(
        ex.jitter_factor(F40, 3e-9) * ex.jitter_factor(F40, 4e-9), rel=1e-12
    )


def test_phosphor_factor_and_lag():
    # docs/references.md, "Exposure": single-exponential tail, |H| = 1/sqrt(1 + (2 pi f tau)^2), lag
    # atan(2 pi f tau), ~0.94 deg at 40 kHz for 65 ns (YAG:Ce decay, from memory).
    tau = 65e-9
    h = ex.led_response(F40, 1.0, tau)
    assert abs(h) == pytest.approx(1 / math.sqrt(1 + (2 * math.pi * F40 * tau) ** 2), rel=1e-12)
    assert -math.degrees(np.angle(h)) == pytest.approx(0.94, abs=0.005)
    # A vanishing pulse keeps only the LED response (limit of the normalised spectrum).
    assert abs(ex.pulse_spectrum(F40, 1e-12, 0.0, 0.0, 1.0, tau)) == pytest.approx(
        abs(h), rel=1e-9
    )


def test_phosphor_fraction_mixes_linearly():
    # H = (1 - w) + w / (1 + j w tau): at w = 0.5 the response is the mean of the parts.
    tau, f = 1e-6, 100e3
    mixed = ex.led_response(f, 0.5, tau)
    assert mixed == pytest.approx(0.5 * (1 + ex.led_response(f, 1.0, tau)), rel=1e-12)


# ---------------------------------------------------------------- closed form vs FFT
@pytest.mark.parametrize(
    ("width", "rise", "fall", "w", "tau"),
    [
        (2e-6, 100e-9, 300e-9, 0.4, 65e-9),  # phosphor-white LED, slow turn-off
        (5e-6, 50e-9, 50e-9, 0.0, 0.0),  # symmetric trapezoid, no phosphor
        (1e-6, 200e-9, 20e-9, 0.9, 1e-6),  # long phosphor tail
        (80e-9, 200e-9, 100e-9, 0.3, 65e-9),  # gate shorter than the rise: a triangle
        (10e-6, 0.0, 400e-9, 0.2, 200e-9),  # ideal turn-on edge
    ],
)
def test_closed_form_against_fft(width, rise, fall, w, tau):
    # Oracle: numpy FFT of the independently sampled pulse; 1e-4 required.
    t, p = sampled_pulse(width, rise, fall, w, tau)
    harmonics = F40 * np.arange(1, 6)
    oracle = fft_spectrum(t, p, harmonics)
    ours = ex.pulse_spectrum(harmonics, width, rise, fall, w, tau)
    assert np.max(np.abs(ours - oracle)) < 1e-4
    assert_allclose(ex.retention(harmonics, width, rise, fall, w, tau), np.abs(oracle), atol=1e-4)
    # Same pulse in the time domain, and its area and centroid (trapezoid rule).
    # (t = 0 left out: an ideal step's value at the jump is a convention. The oracle's
    # first-order hold smears an ideal step over one 1 ns sample, which shifts its phosphor
    # part by dt/2: about w dt / (2 tau) = 5e-4 for the rise = 0 case, hence 1e-3 there.)
    atol = 1e-6 if rise > 0 else 1e-3
    assert_allclose(ex.optical_pulse(t[1::50], width, rise, fall, w, tau), p[1::50], atol=atol)
    area = np.trapezoid(p, t)
    assert ex.optical_area(width, rise, fall, w, tau) == pytest.approx(area, rel=1e-5)
    centroid = np.trapezoid(t * p, t) / area
    assert ex.optical_centroid(width, rise, fall, w, tau) == pytest.approx(centroid, rel=1e-4)


def test_phase_delay_tends_to_centroid_and_is_centre_for_symmetric_pulse():
    # Shift theorem (Bracewell 2000): a symmetric pulse centred at t0 has phase -2 pi f t0.
    assert ex.phase_delay(F40, 5e-6, 0.0, 0.0, 0.0, 0.0) == pytest.approx(2.5e-6, rel=1e-12)
    # Moment theorem: -d(arg H)/d omega at 0 is the centroid; at 10 Hz they agree closely.
    args = (3e-6, 100e-9, 400e-9, 0.5, 1e-6)
    assert ex.phase_delay(10.0, *args) == pytest.approx(ex.optical_centroid(*args), rel=1e-6)


def test_area_of_trapezoid_and_triangle():
    # Definitions in the module docstring: width + (fall - rise)/2; a (width + a fall)/2.
    assert ex.optical_area(5e-6, 1e-6, 3e-6) == pytest.approx(6e-6, rel=1e-12)
    a = 0.25
    assert ex.optical_area(0.5e-6, 2e-6, 1e-6) == pytest.approx(a * (0.5e-6 + a * 1e-6) / 2)


# ---------------------------------------------------------------- durations
def test_fwhm_trapezoid():
    # Geometry [calc]: half-height crossings at rise/2 and width + fall/2.
    assert ex.fwhm(2e-6, 100e-9, 300e-9, 0.0, 0.0) == pytest.approx(2.1e-6, rel=1e-6)


def test_fwhm_rectangle_with_exponential_tail():
    # Closed form [calc] for a rectangle W through tau y' + y = i: y rises as
    # 1 - exp(-t/tau) to y_p = 1 - exp(-W/tau), then decays; half-crossings at
    # -tau ln(1 - y_p/2) and W + tau ln 2.
    width, tau = 1e-6, 0.5e-6
    y_peak = 1 - math.exp(-width / tau)
    expected = width + tau * math.log(2) + tau * math.log(1 - y_peak / 2)
    assert ex.fwhm(width, 0.0, 0.0, 1.0, tau) == pytest.approx(expected, rel=1e-4)


def test_energy_duration_rectangle():
    # A rectangle holds 90 % of its light in any 0.9 W of it [calc].
    assert ex.energy_duration(4e-6, 0.0, 0.0, 0.0, 0.0) == pytest.approx(3.6e-6, rel=1e-3)


def test_energy_duration_against_level_set_oracle():
    # Oracle: the shortest interval holding 90 % of a unimodal pulse is {p >= level}
    # (Hyndman 1996); found here with scipy brentq over the sampled independent pulse.
    width, rise, fall, w, tau = 2e-6, 100e-9, 300e-9, 0.6, 0.5e-6
    t, p = sampled_pulse(width, rise, fall, w, tau, dt=1e-9, duration=12e-6)
    dt = t[1] - t[0]
    total = p.sum() * dt

    def held(level):
        return p[p >= level].sum() * dt / total - 0.9

    level = optimize.brentq(held, 1e-6, p.max() * (1 - 1e-9))
    expected = np.count_nonzero(p >= level) * dt
    ours = ex.energy_duration(width, rise, fall, w, tau)
    assert ours == pytest.approx(expected, rel=2e-3)  # 2e-3: the oracle's 1 ns sampling


def test_durations_accept_arrays():
    widths = np.array([[1e-6, 2e-6], [3e-6, 4e-6]])
    f = ex.fwhm(widths, 0.0, 0.0, 0.0, 0.0)
    e = ex.energy_duration(widths, 0.0, 0.0, 0.0, 0.0)
    assert np.shape(f) == (2, 2) and np.shape(e) == (2, 2)
    assert_allclose(f, widths, rtol=1e-6)
    assert_allclose(e, 0.9 * widths, rtol=1e-3)


# ---------------------------------------------------------------- max pulse width
def test_max_pulse_width_rectangle_against_brentq():
    # Oracle: scipy brentq on |sinc(f w)| = 0.9 (rectangle, no jitter).
    expected = optimize.brentq(lambda w: np.sinc(F40 * w) - 0.9, 1e-9, 1 / F40)
    assert ex.max_pulse_width(F40, 0.9, 0.0, 0.0, 0.0, 0.0) == pytest.approx(expected, rel=1e-9)


def test_max_pulse_width_nan_when_unreachable():
    # Jitter alone: exp(-2 pi^2 f^2 sigma^2) = 0.53 at 40 kHz, 3 us < 0.9 target.
    assert math.isnan(ex.max_pulse_width(F40, 0.9, 0.0, 0.0, 0.0, 0.0, jitter_rms=3e-6))
    assert math.isnan(ex.max_pulse_width(F40, 0.9, 0.0, 0.0, 0.0, 0.0, smear=0.8))


@settings(max_examples=150, deadline=None)
@given(
    frequency=st.floats(20e3, 200e3),
    target=st.floats(0.3, 0.99),
    rise=st.floats(0.0, 300e-9),
    fall=st.floats(0.0, 300e-9),
    w=st.floats(0.0, 1.0),
    tau=st.floats(0.0, 200e-9),
    jitter=st.floats(0.0, 100e-9),
)
def test_max_pulse_width_meets_target(frequency, target, rise, fall, w, tau, jitter):
    width = ex.max_pulse_width(frequency, target, rise, fall, w, tau, jitter_rms=jitter)
    if math.isnan(width):
        # Unreachable only if the width-independent factors already miss the target.
        floor = abs(ex.led_response(frequency, w, tau)) * ex.jitter_factor(frequency, jitter)
        assert floor < target
        return
    achieved = ex.retention(frequency, width, rise, fall, w, tau, jitter_rms=jitter)
    assert achieved == pytest.approx(target, abs=1e-4)  # 1e-4 required


def test_max_pulse_width_vectorised():
    targets = np.array([0.5, 0.8, 0.9, 0.95])
    widths = ex.max_pulse_width(F40, targets, 50e-9, 80e-9, 0.3, 65e-9, jitter_rms=2e-9)
    assert np.all(np.diff(widths) < 0)  # a stricter target allows a shorter pulse only
    for target, width in zip(targets, widths, strict=True):
        assert ex.retention(F40, width, 50e-9, 80e-9, 0.3, 65e-9, 2e-9) == pytest.approx(
            target, abs=1e-4
        )


# ---------------------------------------------------------------- invariants
@settings(max_examples=200, deadline=None)
@given(
    frequency=st.floats(20e3, 200e3),
    u1=st.floats(0.0, 1.0),
    u2=st.floats(0.0, 1.0),
    rise=st.floats(0.0, 1.0),
    fall=st.floats(0.0, 1.0),
    w=st.floats(0.0, 1.0),
    tau=st.floats(0.0, 2e-6),
)
def test_retention_never_increases_below_first_zero(frequency, u1, u2, rise, fall, w, tau):
    # Boreman 2001: the temporal MTF falls over the first lobe. Edges up to 0.2 period;
    # widths up to 0.98 of w_hi, where the current's area reaches one period.
    rise, fall = 0.2 * rise / frequency, 0.2 * fall / frequency
    w_hi = max(1.0 / frequency - 0.5 * (fall - rise), rise)
    w1, w2 = sorted((0.98 * u1 * w_hi, 0.98 * u2 * w_hi))
    r1 = ex.retention(frequency, w1, rise, fall, w, tau)
    r2 = ex.retention(frequency, w2, rise, fall, w, tau)
    assert r2 <= r1 + 1e-12
    assert 0.0 <= r2 <= 1.0 + 1e-12


@settings(max_examples=200, deadline=None)
@given(
    frequency=st.floats(1e3, 1e6),
    width=st.floats(1e-9, 1e-4),
    rise=st.floats(0.0, 1e-5),
    fall=st.floats(0.0, 1e-5),
    w=st.floats(0.0, 1.0),
    tau=st.floats(0.0, 1e-5),
    jitter=st.floats(0.0, 1e-5),
    smear=st.floats(0.0, 1.0),
)
def test_retention_never_exceeds_one(frequency, width, rise, fall, w, tau, jitter, smear):
    # |H(f)| <= H(0) for a non-negative pulse (triangle inequality on the integral).
    r = ex.retention(frequency, width, rise, fall, w, tau, jitter, smear)
    assert 0.0 <= r <= 1.0 + 1e-12


def test_retention_vectorised_over_many_candidates():
    rng = np.random.default_rng(3)
    n = 100_000
    widths = rng.uniform(0.1e-6, 20e-6, n)
    rises = rng.uniform(0.0, 200e-9, n)
    r = ex.retention(F40, widths, rises, 80e-9, 0.3, 65e-9, 1e-9)
    assert r.shape == (n,) and np.all(np.isfinite(r))
    i = 1234
    assert r[i] == ex.retention(F40, widths[i], rises[i], 80e-9, 0.3, 65e-9, 1e-9)


# ---------------------------------------------------------------- blur
def test_blur():
    # [calc]: 343.2 m/s for 1 us is 0.3432 mm; at 0.1 mm per pixel that is 3.432 px;
    # the 40 kHz wavelength is 8.58 mm.
    assert ex.blur_distance(343.2, 1e-6) == pytest.approx(343.2e-6, rel=1e-12)
    assert ex.blur_pixels(343.2e-6, 0.1e-3) == pytest.approx(3.432, rel=1e-12)
    assert ex.wavelength(343.2, F40) == pytest.approx(8.58e-3, rel=1e-12)
