"""Timing core and drive chain against independent references."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import signal

from strobeplan import timing
from strobeplan.physics import air, drive
from strobeplan.rig import rig_from_dict
from strobeplan.solve import build_schedule, solve

# --- drive chain ------------------------------------------------------------------------

@pytest.mark.parametrize("order", [1, 2, 3, 4])
def test_butterworth_against_scipy(order):
    # Oracle: scipy.signal.butter(analog=True) + freqs, an independent implementation.
    fc = 40e3
    f = np.geomspace(1e3, 400e3, 50)
    b, a = signal.butter(order, 2 * np.pi * fc, analog=True)
    _, h = signal.freqs(b, a, 2 * np.pi * f)
    assert_allclose(drive.butterworth_response(f, fc, order), h, rtol=1e-9, atol=1e-12)
    # The unwrapped phase agrees with scipy's modulo 2 pi and never jumps.
    phi = drive.butterworth_phase(f, fc, order)
    assert_allclose(np.exp(1j * phi), h / np.abs(h), atol=1e-9)
    assert np.all(np.diff(phi) < 0)


def test_rc_against_scipy():
    # Oracle: scipy.signal.freqs of 1/(s/wc + 1).
    fc = 25e3
    f = np.geomspace(1e3, 1e6, 40)
    _, h = signal.freqs([1.0], [1 / (2 * np.pi * fc), 1.0], 2 * np.pi * f)
    assert_allclose(drive.rc_response(f, fc), h, rtol=1e-12)


def test_filter_delays_worked_values():
    # docs/references.md, "Power stage" (Filters) [calc]: at f = fc, RC -45 deg -> 3.125 us at
    # 40 kHz; 2nd-order Butterworth -90 deg -> 6.25 us.
    phi_rc = np.angle(drive.rc_response(40e3, 40e3))
    assert math.degrees(phi_rc) == pytest.approx(-45.0)
    assert drive.phase_delay(phi_rc, 40e3) == pytest.approx(3.125e-6)
    assert drive.phase_delay(drive.butterworth_phase(40e3, 40e3, 2), 40e3) == \
        pytest.approx(6.25e-6)


def test_bvd_against_complex_impedance():
    # Independent check: build L1, C1, R1 from (fs, Q) with Van Dyke's relations
    # fs = 1/(2 pi sqrt(L1 C1)), Q = sqrt(L1/C1)/R1 and take I = V/Z_m with complex numbers.
    fs, q, r1 = 40e3, 30.0, 500.0
    l1 = q * r1 / (2 * np.pi * fs)
    c1 = 1 / ((2 * np.pi * fs) ** 2 * l1)
    f = np.linspace(39.5e3, 40.5e3, 41)
    w = 2 * np.pi * f
    z = r1 + 1j * w * l1 + 1 / (1j * w * c1)
    expected = r1 / z  # normalised to 1 at resonance
    assert_allclose(drive.motional_response(f, fs, q), expected, rtol=1e-10)
    # docs/references.md, "Power stage" (Butterworth-Van Dyke): phase ~ -atan(2Q(f - fs)/fs) near
    # fs; tens of degrees within 100 Hz.
    phase = np.degrees(np.angle(drive.motional_response(40.1e3, fs, q)))
    assert phase == pytest.approx(-math.degrees(math.atan(2 * q * 100 / fs)), abs=0.2)
    assert abs(phase) > 8


# --- air (speed of sound used by the timing core) -----------------------------------------

def test_cramer_check_values():
    # docs/references.md, "Air" [calc], 101325 Pa, 400 ppm CO2: 0 degC dry 331.448; 20 degC dry
    # 343.359; 20 degC 50 % RH 343.987 m/s (Cramer 1993 eq. 15).
    assert air.speed_of_sound(273.15, 0.0, 101325.0) == pytest.approx(331.448, abs=1e-3)
    assert air.speed_of_sound(293.15, 0.0, 101325.0) == pytest.approx(343.359, abs=1e-3)
    assert air.speed_of_sound(293.15, 0.5, 101325.0) == pytest.approx(343.987, abs=1e-3)


@pytest.mark.parametrize("t_c", [0.0, 10.0, 20.0, 30.0])
def test_cramer_against_coolprop_dry(t_c, coolprop):
    # Oracle: CoolProp PropsSI('A') for dry air; models agree within 0.05 m/s (docs/references.md,
    # "Air").
    t = t_c + 273.15
    ref = coolprop.PropsSI("A", "T", t, "P", 101325.0, "Air")
    assert air.speed_of_sound(t, 0.0, 101325.0) == pytest.approx(ref, abs=0.05)


@pytest.mark.parametrize("t_c, rh", [(10.0, 0.5), (20.0, 0.5), (25.0, 0.3), (30.0, 0.8)])
def test_cramer_against_coolprop_humid(t_c, rh, coolprop):
    # Oracle: CoolProp HAPropsSI('speed_of_sound') (20 degC 50 %: 343.963 m/s per
    # docs/references.md, "Air"); within 0.05 m/s.
    t = t_c + 273.15
    ref = coolprop.HAPropsSI("speed_of_sound", "T", t, "P", 101325.0, "R", rh)
    assert air.speed_of_sound(t, rh, 101325.0) == pytest.approx(ref, abs=0.05)


# --- integer synthesis and phase lock --------------------------------------------------------

def test_choose_drive_exact_and_rounded():
    # 100 MHz / 40 kHz = 2500 exactly; with an 800 kHz carrier: 20 x 125 ticks.
    assert timing.choose_drive(100e6, 40e3) == (1, 2500)
    assert timing.choose_drive(100e6, 40e3, carrier=800e3) == (20, 125)
    # 16 MHz / 58 kHz = 275.86 -> 276 ticks (57.971 kHz, -499.75 ppm), arithmetic.
    m, n = timing.choose_drive(16e6, 58e3)
    assert (m, n) == (1, 276)


def test_phasor_mean_smear_limits():
    # Mean of n phasors spread evenly over a full turn is zero; n = 1 keeps everything.
    assert timing.phasor_mean(0.0, 2 * math.pi / 8, 8)[1] == pytest.approx(0.0, abs=1e-12)
    assert timing.phasor_mean(0.0, 1.0, 1)[1] == 1.0
    # Brute force: |mean(exp(j k d))|.
    d = 0.07
    brute = abs(np.mean(np.exp(1j * d * np.arange(17))))
    assert timing.phasor_mean(0.0, d, 17)[1] == pytest.approx(brute, rel=1e-12)


def _rig(clock, freq, every=1, phase_deg=0.0, distance=0.1, pulse=None, sweep=None,
         carrier=None, camera=None):
    if pulse is None:
        pulse = max(1e-7, 1.0 / clock)  # the gate pulse is at least one timer tick
    raw = {
        "wave": {"frequency": f"{freq} Hz"},
        "controller": {"clock": f"{clock} Hz"},
        "strobe": {"pulse_width": f"{pulse} s", "every": every, "phase": f"{phase_deg} deg"},
        "emitter": {"resonance": f"{freq} Hz", "quality_factor": 20,
                    "distance_to_view": f"{distance} m"},
    }
    if carrier:
        raw["emitter"]["synthesis"] = {"carrier": f"{carrier} Hz"}
    if sweep:
        raw["sweep"] = sweep
    if camera:
        raw["camera"] = camera
    return rig_from_dict(raw)


@settings(max_examples=120, deadline=None)
@given(clock=st.floats(1e6, 500e6), freq=st.floats(20e3, 200e3),
       every=st.integers(1, 16),
       # subnormal angles are bad input: drawn phases are 0 or above 1e-12 deg
       phase=st.floats(-359.0, 359.0).filter(lambda x: x == 0 or abs(x) > 1e-12),
       distance=st.floats(0.005, 2.0))
def test_lock_properties(clock, freq, every, phase, distance):
    assume(clock >= 8 * freq)
    # a pulse of at least one tick (shorter ones are bad input)
    plan = solve(_rig(clock, freq, every, phase, distance, pulse=max(1e-7, 1.0 / clock)))
    t = plan.timing
    # Exact lock: the flash period is a whole multiple of the drive period, in ticks.
    assert t.flash_period_ticks == every * t.drive_period_ticks
    assert 0 <= t.flash_edge_ticks < t.drive_period_ticks
    # Rounding to the nearest tick: |phase error| <= half a tick of phase.
    assert abs(t.phase_error_deg) <= 0.5 * t.phase_resolution_deg + 1e-9
    assert t.phase_resolution_deg == pytest.approx(360 * t.drive_frequency_hz / clock)


@settings(max_examples=60, deadline=None)
@given(clock=st.floats(1e6, 200e6), freq=st.floats(20e3, 200e3),
       steps=st.integers(1, 60),
       phase=st.floats(0.0, 359.0).filter(lambda x: x == 0 or x > 1e-12))
def test_sweep_edges_in_range(clock, freq, steps, phase):
    assume(clock >= 8 * freq)
    plan = solve(_rig(clock, freq, phase_deg=phase, sweep={"steps": steps},
                      pulse=max(1e-7, 1.0 / clock)))
    sched = build_schedule(plan)
    assert len(sched.rows) == steps
    for row in sched.rows:
        assert 0 <= row.edge_ticks < plan.timing.drive_period_ticks
        assert abs(row.phase_error_deg) <= 0.5 * plan.timing.phase_resolution_deg + 1e-9


def test_chain_delay_composition():
    # Chain = filter + amplifier + transducer phase delays + the PWM table's hold delay
    # (half a carrier period, 0.625 us at 800 kHz; tests/test_drive_synthesis.py checks it
    # against an FFT) + the field's delay from the surface velocity to the pressure at the
    # view + calibration. The old chain used the travel time d/c instead of the field's
    # delay and left out the hold delay; both were wrong (the radiation phase).
    raw = {
        "wave": {"frequency": "40 kHz"},
        "controller": {"clock": "100 MHz"},
        "strobe": {"pulse_width": "1 us", "calibration_offset": "1 us"},
        "emitter": {"resonance": "40 kHz", "quality_factor": 20, "distance_to_view": "0.1 m",
                    "synthesis": {"carrier": "800 kHz",
                                  "filter": {"kind": "rc", "cutoff": "40 kHz"}}},
    }
    plan = solve(rig_from_dict(raw))
    c = plan.air.speed_of_sound_m_s
    field_delay = plan.drive.field_delay_s
    # RC at fc: 3.125 us (docs/references.md, "Power stage"); transducer at resonance: 0.
    assert plan.timing.chain_delay_s == pytest.approx(3.125e-6 + 0.625e-6 + field_delay + 1e-6,
                                                      rel=1e-9)
    # No radius given: a small source, whose far-field pressure leads its velocity by 90 deg
    # (p = j rho c k U a^2 e^{-jkr} / 2r, Kinsler et al., sec. 7.4): d/c - T/4, mod T.
    period = 1 / 40e3
    expected = (0.1 / c - period / 4) % period
    assert field_delay == pytest.approx(expected, abs=1e-3 * period)


def test_phase_edge_worked_example():
    # Hand calculation: 100 MHz, 40 kHz (2500 ticks), no filter, at resonance, d = 0.1 m,
    # ideal flash (zero delay, rectangle 1 us -> its fundamental at 0.5 us), phase 90 deg.
    # No radius: a small source, whose far-field pressure leads its surface velocity by
    # 90 deg (p = j rho c k U a^2 e^{-jkr} / 2r, Kinsler et al., sec. 7.4), so the pressure
    # at the view is sin(w (t - d/c) + 90 deg) and its crest comes at t = d/c:
    # t = d/c - 0.5 us, edge = round(t * 1e8) mod 2500 (within a tick: the small source's
    # near-field and absorption terms). The old expectation, d/c + T/4 - 0.5 us, left out
    # the radiation lead and was a quarter period late.
    plan = solve(_rig(100e6, 40e3, phase_deg=90, distance=0.1, pulse=1e-6))
    c = plan.air.speed_of_sound_m_s
    t = 0.1 / c - 0.5e-6
    got, expected = plan.timing.flash_edge_ticks, round(t * 1e8) % 2500
    assert min(abs(got - expected), 2500 - abs(got - expected)) <= 1


def test_camera_window_counts_flashes():
    # 40 kHz, every 1: 25 us flash period; a 1 ms global exposure holds 40 slots minus
    # any cut by the window edges (hand count with the edge offset).
    cam = {"exposure": "1 ms", "frame_rate": "50 Hz"}
    plan = solve(_rig(100e6, 40e3, pulse=1e-6, camera=cam))
    assert plan.timing.flashes_per_frame in (39, 40)
    assert plan.timing.duty_average == pytest.approx(
        plan.timing.flashes_per_frame * 1e-6 * 50, rel=1e-9)
    # Rolling shutter whose all-rows window is shorter than a pulse: the fault.
    cam2 = {"exposure": "1 ms", "frame_rate": "50 Hz", "shutter": "rolling",
            "readout": "1 ms"}
    plan2 = solve(_rig(100e6, 40e3, pulse=1e-6, camera=cam2))
    assert "timing.rolling_window_too_short" in {f.code for f in plan2.findings}


def test_slow_motion_step_and_apparent():
    # apparent = s * clock / (N_d (every N_d + s)) (derivation in timing.slow_motion_step).
    nd, clock, every = 2500, 100e6, 40
    s = timing.slow_motion_step(10.0, clock, nd, every)
    assert s == round(10.0 * every * nd**2 / (clock - 10.0 * nd))
    assert timing.slow_motion_apparent(s, clock, nd, every) == pytest.approx(10.0, rel=0.2)


def test_phase_per_kelvin_matches_finite_difference():
    # Independent: solve at T and T + 1 K and difference the ideal phase of the same edge.
    base = _rig(100e6, 40e3, distance=0.5)
    plan = solve(base)
    raw = base.model_dump()
    t1 = plan.air.temperature_k
    speeds = [air.speed_of_sound(t1 + dt, raw["air"]["relative_humidity"],
                                 raw["air"]["pressure"]) for dt in (-0.5, 0.5)]
    f = plan.timing.drive_frequency_hz
    dphi = 360 * f * 0.5 * (1 / speeds[0] - 1 / speeds[1])
    assert plan.timing.phase_per_kelvin_deg == pytest.approx(dphi, rel=1e-3)


def test_slow_motion_schedule_errors_are_only_the_base_rounding():
    # Each flash advances the seen phase by 2 pi s/N_d and the target by 2 pi f_app P'/clock,
    # the same number (f_app = s clock/(N_d P')), so every row's error equals the first
    # flash's rounding error, within float rounding (derivation in timing.slow_motion_step).
    cam = {"exposure": "1 ms", "frame_rate": "50 Hz"}
    plan = solve(_rig(100e6, 40e3, every=40, pulse=1e-6, camera=cam,
                      sweep={"slow_motion": "2 Hz"}))
    sched = build_schedule(plan, steps=30)
    errs = [r.phase_error_deg for r in sched.rows]
    assert max(errs) - min(errs) < 1e-6
    assert abs(errs[0]) <= 0.5 * plan.timing.phase_resolution_deg + 1e-9
