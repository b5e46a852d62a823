"""Tests of strobeplan.physics.thermal (Foster network junction temperature).

Oracles: the check table of docs/references.md, "Power stage" [calc], brute-force superposition
of step responses over many periods, scipy.integrate.solve_ivp of the RC network's ODEs.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp

from strobeplan.physics import thermal as th

BOUNDED = settings(max_examples=60, deadline=None)

# docs/references.md, "Power stage": Foster check network [calc]
R = np.array([0.05, 0.2, 0.5, 0.25])
TAU = np.array([10e-6, 100e-6, 1e-3, 10e-3])


def test_reference_check_table():
    # docs/references.md, "Power stage": tp 10 us, T 1 ms: exact 0.061136 K/W, shortcut 0.065305,
    # single 0.055864
    assert_allclose(th.pulse_train_peak(1.0, 10e-6, 1e-3, R, TAU), 0.061136, atol=5e-7)
    assert_allclose(th.pulse_train_shortcut(1.0, 10e-6, 1e-3, R, TAU), 0.065305, atol=5e-7)
    assert_allclose(th.zth(10e-6, R, TAU), 0.055864, atol=5e-7)


def _brute_force(power, width, spacing, n, frame, r, tau, t_eval, frames=None):
    """Superpose +P steps at every pulse start and -P steps at every pulse end, over
    enough past frames that the oldest contribution is below 1e-13 of Rth."""
    if frames is None:
        frames = int(np.ceil(np.max(tau) * 32.0 / frame)) + 1
    starts = (-np.arange(frames)[:, None] * frame + np.arange(n)[None, :] * spacing).ravel()
    rise = np.zeros_like(t_eval)
    for s in starts:
        on = np.clip(t_eval - s, 0.0, None)
        off = np.clip(t_eval - s - width, 0.0, None)
        rise += power * (th.zth(on, r, tau) - th.zth(off, r, tau))
    return rise


def test_pulse_train_equals_brute_force():
    t = np.linspace(0.0, 1e-3, 2001)
    bf = _brute_force(3.0, 10e-6, 1e-3, 1, 1e-3, R, TAU, t)
    assert_allclose(th.pulse_train_peak(3.0, 10e-6, 1e-3, R, TAU), bf.max(), rtol=1e-9)


@pytest.mark.slow
@settings(max_examples=25, deadline=None)
@given(
    n=st.integers(1, 12),
    log_spacing=st.floats(np.log10(20e-6), np.log10(500e-6)),
    duty_in_burst=st.floats(0.01, 1.0),
    gap=st.floats(0.0, 3.0),
)
def test_burst_peak_equals_brute_force_maximum(n, log_spacing, duty_in_burst, gap):
    # The closed form must equal the maximum over time of brute-force superposition, which
    # also shows where the peak lies (at the end of the last pulse of the burst when the
    # frame is longer than n spacings; see the docstring's proof). Frames >= 1 ms keep the
    # number of superposed past pulses small.
    spacing = 10.0**log_spacing
    width = spacing * duty_in_burst
    frame = max(n * spacing * (1.0 + gap), 1e-3)
    ends = np.arange(n) * spacing + width
    t = np.concatenate([ends, np.linspace(0.0, frame, 301)])
    bf = _brute_force(2.0, width, spacing, n, frame, R, TAU, t)
    got = th.burst_peak(2.0, width, spacing, n, frame, R, TAU)
    assert_allclose(got, bf.max(), rtol=1e-9)
    if frame > n * spacing * (1 + 1e-9):
        assert np.argmax(bf[:n]) == n - 1  # peak at the end of the last pulse


def test_burst_reduces_to_pulse_train():
    # one pulse per frame, or a frame exactly n spacings long: a uniform pulse train [calc]
    assert_allclose(th.burst_peak(1.0, 10e-6, 1e-3, 1, 1e-3, R, TAU),
                    th.pulse_train_peak(1.0, 10e-6, 1e-3, R, TAU), rtol=1e-12)
    assert_allclose(th.burst_peak(1.0, 10e-6, 25e-6, 8, 8 * 25e-6, R, TAU),
                    th.pulse_train_peak(1.0, 10e-6, 25e-6, R, TAU), rtol=1e-10)


def test_burst_invalid_overlap_is_nan_and_broadcasts():
    out = th.burst_peak(1.0, 10e-6, 25e-6, np.array([1, 4, 100]), 1e-3, R, TAU)
    assert out.shape == (3,)
    assert np.isfinite(out[:2]).all() and np.isnan(out[2])  # 100 * 25 us > 1 ms
    # one Foster network per candidate along the trailing axis
    r2 = np.stack([R, 2 * R])
    two = th.burst_peak(1.0, 10e-6, 25e-6, 4, 1e-3, r2, TAU)
    assert_allclose(two, [out[1], 2 * out[1]], rtol=1e-12)


def test_mean_rise_equals_time_average_of_brute_force():
    # P*D*Rth is the time average of the periodic steady state (linearity) [calc]
    n, width, spacing, frame = 5, 10e-6, 50e-6, 2e-3
    t = np.linspace(0.0, frame, 8001)[:-1]
    bf = _brute_force(4.0, width, spacing, n, frame, R, TAU, t)
    duty = n * width / frame
    assert_allclose(th.mean_rise(4.0, duty, R), bf.mean(), rtol=2e-3)


def _ode_step(power, t_end, r, tau):
    # dT_i/dt = (P R_i - T_i)/tau_i, each Foster term an independent RC
    sol = solve_ivp(lambda _t, y: (power * r - y) / tau, (0.0, t_end), np.zeros_like(r),
                    method="Radau", rtol=1e-10, atol=1e-14, dense_output=True)
    return sol


def test_step_response_against_solve_ivp():
    t = np.array([1e-6, 10e-6, 100e-6, 1e-3, 10e-3, 50e-3])
    sol = _ode_step(5.0, 50e-3, R, TAU)
    assert_allclose(th.step_rise(5.0, t, R, TAU), sol.sol(t).sum(axis=0), rtol=1e-6)


def test_foster_advance_chained_against_solve_ivp():
    # a staircase of heat (5 W, 1 W, 8 W, 0 W) from a warm start, chained interval by
    # interval, against the network's ODE integrated by solve_ivp
    steps = [(5.0, 30e-6), (1.0, 400e-6), (8.0, 2e-3), (0.0, 15e-3)]
    state = np.array([0.3, 0.1, 0.0, 0.2])
    y, t0 = state.copy(), 0.0
    for power, dt in steps:
        state = th.foster_advance(state, power, dt, R, TAU)
        sol = solve_ivp(lambda _t, z, p=power: (p * R - z) / TAU, (t0, t0 + dt), y,
                        method="Radau", rtol=1e-11, atol=1e-14)
        y, t0 = sol.y[:, -1], t0 + dt
        assert_allclose(state, y, rtol=1e-7, atol=1e-11)
    # broadcasting: candidates in front of the Foster axis; dt = inf is the steady state
    many = th.foster_advance(np.zeros((3, 4)), np.array([1.0, 2.0, 3.0]), np.inf, R, TAU)
    assert_allclose(many.sum(axis=-1), np.array([1.0, 2.0, 3.0]) * R.sum(), rtol=1e-15)


@BOUNDED
@given(log_width=st.floats(-7, -3), duty=st.floats(1e-4, 1.0))
def test_exact_never_exceeds_shortcut(log_width, duty):
    # docs/references.md, "Power stage": the shortcut D*Rth + (1 - D)*Zth(tp) always over-estimates
    width = 10.0**log_width
    period = width / duty
    exact = th.pulse_train_peak(1.0, width, period, R, TAU)
    assert exact <= th.pulse_train_shortcut(1.0, width, period, R, TAU) * (1 + 1e-12)
    assert exact >= th.zth(width, R, TAU) * (1 - 1e-12)  # at least the single pulse


@BOUNDED
@given(
    p=st.floats(0.1, 50), log_width=st.floats(-7, -4.5), n=st.integers(1, 30),
    spacing_factor=st.floats(1.0, 10.0), k=st.floats(1.0, 2.0),
)
def test_burst_peak_monotone(p, log_width, n, spacing_factor, k):
    # more power, wider pulses, or more pulses per frame never lower the peak
    width = 10.0**log_width
    spacing = width * spacing_factor * k  # room for the wider pulse
    frame = 40 * spacing
    base = th.burst_peak(p, width, spacing, n, frame, R, TAU)
    assert th.burst_peak(p * k, width, spacing, n, frame, R, TAU) >= base * (1 - 1e-12)
    assert th.burst_peak(p, width * k, spacing, n, frame, R, TAU) >= base * (1 - 1e-12)
    assert th.burst_peak(p, width, spacing, n + 1, frame, R, TAU) >= base * (1 - 1e-12)


def _brute_burst(t, power, width, starts, frame, r, tau):
    """Plain superposition of Foster step responses over enough past frames that the
    oldest left out weigh less than exp(-60) (Infineon AN2008-03, superposition)."""
    frames = int(60 * max(tau) / frame) + 2
    out = np.zeros_like(t)
    for k in range(frames):
        for s in starts:
            age = t - s + k * frame
            out += (th.step_rise(power, np.clip(age, 0, None), r, tau)
                    - th.step_rise(power, np.clip(age - width, 0, None), r, tau))
    return out


@pytest.mark.parametrize("n, spacing, first", [(1, 25e-6, 0.0), (7, 25e-6, 1e-3),
                                               (40, 25e-6, 2e-4), (3, 1e-3, 0.5e-3)])
def test_periodic_burst_rise_matches_brute_force_superposition(n, spacing, first):
    # Foster network of a power LED (three terms, made-up but typical magnitudes)
    r, tau = [2.0, 5.0, 8.0], [1e-4, 2e-3, 8e-3]
    frame, width, power = 10e-3, 2e-6, 3.0
    t = np.linspace(0.0, frame, 997)
    got = th.periodic_burst_rise(t, power, width, first, spacing, n, frame, r, tau)
    want = _brute_burst(t, power, width, first + spacing * np.arange(n), frame, r, tau)
    assert np.max(np.abs(got - want)) < 1e-9  # K


@settings(max_examples=40, deadline=None, derandomize=True)
@given(n=st.integers(1, 200), frac=st.floats(0.01, 0.9), gap=st.floats(0.0, 5.0),
       tau=st.floats(1e-6, 1.0))
def test_periodic_burst_rise_peak_is_burst_peak(n, frac, gap, tau):
    # the closed-form trace sampled at the pulse ends reaches the exact burst peak
    spacing = 25e-6
    width = frac * spacing
    frame = (n - 1) * spacing + width + gap * spacing
    r, taus = [1.0, 3.0], [tau, 10 * tau]
    ends = spacing * np.arange(n) + width
    trace = th.periodic_burst_rise(ends - 1e-15, 2.0, width, 0.0, spacing, n, frame, r, taus)
    peak = th.burst_peak(2.0, width, spacing, n, frame, r, taus)
    assert float(trace.max()) == pytest.approx(float(peak), rel=1e-7)
    # mean over the frame: P * duty * Rth (JESD51-14 steady state), sampled finely
    t = np.linspace(0.0, frame, 20_001)
    mean = np.trapezoid(th.periodic_burst_rise(t, 2.0, width, 0.0, spacing, n, frame, r,
                                               taus), t) / frame
    assert mean == pytest.approx(2.0 * n * width / frame * 4.0, rel=2e-2)
