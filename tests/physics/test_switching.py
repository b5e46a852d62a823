"""Tests of strobeplan.physics.switching (gate-charge method).

Oracles: docs/references.md, "Power stage", worked check [calc]; scipy.integrate.solve_ivp of
the driver charging the piecewise-linear gate-charge curve; scipy.integrate.quad for the
edge energy; hand calculations.
"""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import quad, solve_ivp

from strobeplan.physics import switching as sw

BOUNDED = settings(max_examples=100, deadline=None)


def test_gate_charge_worked_check():
    # docs/references.md, "Power stage": Qgd 6 nC, 12 V drive, 4.5 V plateau, 6 ohm total -> Ig
    # 1.25 A, 4.80 ns
    ig = sw.gate_current_on(12.0, 4.5, 2.0, 4.0)
    assert_allclose(ig, 1.25, rtol=1e-12)
    assert_allclose(sw.miller_time(6e-9, ig), 4.80e-9, rtol=1e-12)
    assert_allclose(sw.gate_current_off(4.5, 2.0, 4.0), 0.75, rtol=1e-12)  # 4.5 V / 6 ohm


# A MOSFET of our own: Qg 40 nC at 10 V, Qgs 8 nC, Qgd 12 nC, Vth 2.5 V, plateau 4.5 V.
PART = dict(threshold_voltage=2.5, plateau_voltage=4.5, gate_charge=40e-9,
            gate_source_charge=8e-9, gate_drain_charge=12e-9, rated_gate_voltage=10.0)


def _vgs(q, p):
    """Piecewise-linear gate-charge curve Vgs(Q)."""
    qgs, qgd, vpl = p["gate_source_charge"], p["gate_drain_charge"], p["plateau_voltage"]
    c_above = (p["gate_charge"] - qgs - qgd) / (p["rated_gate_voltage"] - vpl)
    if q < qgs:
        return q / qgs * vpl
    if q < qgs + qgd:
        return vpl
    return vpl + (q - qgs - qgd) / c_above


def _crossing_times(vdrv, r, p):
    """solve_ivp of dQ/dt = (Vdrv - Vgs(Q))/R at turn-on, then -Vgs(Q)/R at turn-off."""
    q_th = p["gate_source_charge"] * p["threshold_voltage"] / p["plateau_voltage"]
    q_end = p["gate_source_charge"] + p["gate_drain_charge"]

    def ev(level):
        f = lambda _t, y: y[0] - level  # noqa: E731
        return f

    on = solve_ivp(lambda _t, y: [(vdrv - _vgs(y[0], p)) / r], (0, 1e-6), [0.0],
                   events=[ev(q_th), ev(q_end)], rtol=1e-10, atol=1e-20, max_step=1e-9)
    t_th, t_end = on.t_events[0][0], on.t_events[1][0]
    # fully charged gate: Vgs = Vdrv
    c_above = (p["gate_charge"] - q_end) / (p["rated_gate_voltage"] - p["plateau_voltage"])
    q_full = q_end + (vdrv - p["plateau_voltage"]) * c_above
    off = solve_ivp(lambda _t, y: [-_vgs(y[0], p) / r], (0, 1e-6), [q_full],
                    events=[ev(q_end), ev(q_th)], rtol=1e-10, atol=1e-20, max_step=1e-9)
    t_pl, t_off = off.t_events[0][0], off.t_events[1][0]
    return t_th, t_end - t_th, t_pl, t_off - t_pl


def test_switching_times_match_integrated_gate_charge_curve():
    # The closed forms are exact for the piecewise-linear curve; the integrator sets the
    # tolerance (1e-5).
    for vdrv, rdrv, rg in [(12.0, 1.5, 3.3), (10.0, 4.0, 0.0), (6.0, 0.5, 10.0)]:
        t = sw.switching_times(vdrv, output_resistance=rdrv, gate_resistor=rg, **PART)
        ref = _crossing_times(vdrv, rdrv + rg, PART)
        assert_allclose([t.turn_on_delay, t.rise_time, t.turn_off_delay, t.fall_time], ref,
                        rtol=1e-5)


def test_switching_times_without_enough_drive():
    t = sw.switching_times(np.array([4.0, 2.0, 12.0]), output_resistance=1.0,
                           gate_resistor=2.0, **PART)
    assert np.isinf(t.rise_time[0]) and np.isfinite(t.turn_on_delay[0])  # below plateau
    assert np.isinf(t.turn_on_delay[1])  # below threshold
    assert np.isfinite(t.rise_time[2])


def test_edge_energy_is_v_i_t_over_6():
    # resistive edge: v = V(1 - t/te), i = I t/te; integral of v*i by quadrature (scipy)
    v, i, te = 36.0, 20.0, 30e-9
    ref, _ = quad(lambda t: v * (1 - t / te) * i * t / te, 0.0, te, epsabs=0, epsrel=1e-13)
    assert_allclose(sw.edge_energy(v, i, te), ref, rtol=1e-12)


def test_gate_drive_power_and_overshoot_hand_values():
    # Qg*V*f: 40 nC * 12 V * 100 kHz = 48 mW [calc]
    assert_allclose(sw.gate_drive_power(40e-9, 12.0, 100e3), 48e-3, rtol=1e-12)
    # V + L*I/tf: 24 V + 20 nH * 20 A / 20 ns = 44 V [calc]
    assert_allclose(sw.turn_off_overshoot(24.0, 20e-9, 20.0, 20e-9), 44.0, rtol=1e-12)


@BOUNDED
@given(vd=st.floats(0.0, 20.0), vr=st.floats(2.5, 12.0), vpl=st.floats(2.0, 8.0))
def test_gate_drive_margin_sign(vd, vr, vpl):
    # Gate drive is inadequate when the supply is below the rated gate voltage or within 1 V of the
    # plateau; the margin is negative exactly then.
    m = sw.gate_drive_margin(vd, vr, vpl)
    inadequate = (vd < vr) or (vd < vpl + 1.0)
    assert (m < 0) == inadequate
    assert_allclose(m, min(vd - vr, vd - vpl - 1.0), rtol=1e-12, atol=1e-12)


@BOUNDED
@given(vd=st.floats(6.0, 20.0), r=st.floats(0.5, 20.0))
def test_more_gate_resistance_slows_edges(vd, r):
    a = sw.switching_times(vd, output_resistance=1.0, gate_resistor=r, **PART)
    b = sw.switching_times(vd, output_resistance=1.0, gate_resistor=r * 1.5, **PART)
    assert b.rise_time > a.rise_time and b.fall_time > a.fall_time
    assert_allclose(b.rise_time / a.rise_time, (1.0 + 1.5 * r) / (1.0 + r), rtol=1e-12)
