"""Tests of strobeplan.physics.supply (boost budget, burst droop, stuck-on state).

Oracles: hand calculations from the capacitor and energy laws [calc], a flash-by-flash
simulation built on the LED operating point, scipy.optimize.brentq for the DC state.
"""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.optimize import brentq

from strobeplan.physics import led, supply

BOUNDED = settings(max_examples=60, deadline=None)

LED = dict(n_vt=0.08, saturation_current=1e-16, led_series_resistance=0.12)  # our own LED


def test_hand_values():
    # docs/references.md, "Power stage" (Capacitor): energy C V^2/2; 1000 uF at 24 V -> 0.288 J
    # [calc]
    assert_allclose(supply.stored_energy(1000e-6, 24.0), 0.288, rtol=1e-12)
    # boost output power = E_pulse * f: 2 mJ at 40 kHz -> 80 W [calc]
    assert_allclose(supply.average_power(2e-3, 40e3), 80.0, rtol=1e-12)
    assert_allclose(supply.average_current(50e-6, 1e3), 0.05, rtol=1e-12)
    # C dV / I: 470 uF, 0.5 V, 1 A -> 235 us [calc]
    assert_allclose(supply.recharge_time(470e-6, 0.5, 1.0), 235e-6, rtol=1e-12)
    assert supply.recharge_time(470e-6, 0.0, 1.0) == 0.0
    assert_allclose(supply.brightness_change(10.0, 9.5), -0.05, rtol=1e-12)


def _simulate_burst(vs, c, esr, rser, ron, ib, tp, spacing, n):
    """Flash by flash: each flash from the sagged voltage (operating point), then the
    boost recharges at its limit up to the set point."""
    v = vs
    first = None
    for _ in range(n):
        op = led.pulse_operating_point(v, c, esr, rser, ron, ib, tp, **LED)
        first = op.peak_current if first is None else first
        last = op.peak_current
        v_end = op.end_voltage
        v_before_last = v
        v = min(vs, v_end + ib * (spacing - tp) / c)
    return vs - v_before_last, vs - v_end, first, last


@BOUNDED
@given(n=st.integers(1, 20), log_c=st.floats(-5, -3), ib=st.floats(0.0, 2.0),
       spacing_factor=st.floats(1.5, 20))
def test_burst_sag_equals_an_explicit_flash_by_flash_loop(n, log_c, ib, spacing_factor):
    vs, c, tp = 24.0, 10.0**log_c, 5e-6
    spacing = tp * spacing_factor
    sim_before, sim_end, first, last = _simulate_burst(vs, c, 0.03, 1.0, 0.01, ib, tp,
                                                       spacing, n)
    assert last <= first * (1 + 1e-12)  # a sagging capacitor drives no more current
    # the vectorised flash-by-flash model reproduces the explicit loop
    sag = supply.burst_sag(vs, c, 0.03, 1.0, 0.01, ib, tp, spacing, n, LED["n_vt"],
                           LED["saturation_current"], LED["led_series_resistance"])
    assert_allclose([sag.before_last, sag.at_end, sag.first_current, sag.last_current],
                    [sim_before, sim_end, first, last], rtol=1e-12, atol=1e-12)


def test_burst_sag_broadcasts_over_flash_counts():
    n = np.array([1, 5, 20])
    sag = supply.burst_sag(24.0, 47e-6, 0.03, 1.0, 0.01, 0.2, 5e-6, 25e-6, n, LED["n_vt"],
                           LED["saturation_current"], LED["led_series_resistance"])
    assert sag.at_end.shape == (3,)
    assert np.all(np.diff(sag.at_end) > 0) and np.all(np.diff(sag.last_current) < 0)
    one = led.pulse_operating_point(24.0, 47e-6, 0.03, 1.0, 0.01, 0.2, 5e-6, **LED)
    assert_allclose(sag.at_end[0], one.droop, rtol=1e-12)


def test_stuck_on_matches_brentq_and_limits():
    # DC: Vs = I*(Rser + Ron + Rs) + n*Vt*ln(I/Is + 1), solved by brentq (scipy)
    vs, rser, ron = 24.0, 1.0, 0.01
    f = lambda i: i * (rser + ron + LED["led_series_resistance"]) + LED["n_vt"] * np.log1p(  # noqa: E731
        i / LED["saturation_current"]) - vs
    i_string = brentq(f, 0.0, vs / rser, xtol=1e-15, rtol=1e-14)
    s = supply.stuck_on_state(vs, np.array([100.0, 2.0]), rser, ron, **LED)
    assert_allclose(s.current, [i_string, 2.0], rtol=1e-10)
    assert list(s.boost_limited) == [False, True]
    assert_allclose(s.resistor_power, s.current**2 * rser, rtol=1e-12)
    assert_allclose(s.switch_power, s.current**2 * ron, rtol=1e-12)
    # power balance at the string's own current: Vs*I = LED + resistor + switch [calc]
    assert_allclose(vs * s.current[0],
                    s.led_power[0] + s.resistor_power[0] + s.switch_power[0], rtol=1e-10)
