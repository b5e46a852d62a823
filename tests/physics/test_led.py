"""Tests of strobeplan.physics.led against independent references.

Oracles: the diode equation itself (exact points), scipy.optimize.brentq (inversion),
scipy.special.spence (dilogarithm), scipy.integrate.solve_ivp of the circuit's
differential-algebraic equation (pulse operating point), hand calculations.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp
from scipy.optimize import brentq
from scipy.special import spence

from strobeplan.physics import led

BOUNDED = settings(max_examples=100, deadline=None)


def test_thermal_voltage_25c():
    # docs/references.md, "Power stage": Vt = 25.693 mV at 25 degC (kT/q, CODATA 2018 constants).
    assert_allclose(led.thermal_voltage(298.15), 25.693e-3, rtol=2e-5)


@BOUNDED
@given(
    n_vt=st.floats(0.04, 0.2),
    log_is=st.floats(-30, -10),
    rs=st.floats(0.0, 1.0),
    i1=st.floats(0.01, 0.5),
    k2=st.floats(2.0, 5.0),
    k3=st.floats(2.0, 5.0),
)
def test_fit_recovers_known_parameters_from_three_exact_points(n_vt, log_is, rs, i1, k2, k3):
    # The LED fit recovers known (n*Vt, Is, Rs) from three exact points. The points are
    # generated from the model, so the exact solution is known; 1e-6 allows for conditioning.
    i_s = 10.0**log_is
    currents = np.array([i1, i1 * k2, i1 * k2 * k3])
    volts = led.forward_voltage(currents, n_vt, i_s, rs)
    fit = led.fit_forward_voltage(currents, volts)
    assert fit.assumed == ""
    assert_allclose(fit.n_vt, n_vt, rtol=1e-6)
    assert_allclose(np.log(fit.saturation_current), np.log(i_s), rtol=1e-6)
    assert_allclose(fit.series_resistance, rs, atol=1e-6)


def test_fit_two_points_with_given_series_resistance_is_exact():
    # Two equations, two unknowns (n*Vt, Is) once Rs is given: exact recovery [calc].
    currents = np.array([0.35, 1.0])
    volts = led.forward_voltage(currents, 0.09, 1e-15, 0.2)
    fit = led.fit_forward_voltage(currents, volts, series_resistance=0.2)
    assert_allclose([fit.n_vt, fit.saturation_current], [0.09, 1e-15], rtol=1e-9)
    assert "series resistance given" in fit.assumed


def test_fit_two_points_assumes_ideality_and_passes_through_points():
    # With two points and no Rs, the ideality is assumed (2, common practice) and the fitted
    # curve must still pass through both datasheet points exactly.
    currents, volts = np.array([0.35, 1.0]), np.array([2.95, 3.25])
    fit = led.fit_forward_voltage(currents, volts)
    assert_allclose(fit.n_vt, 2 * led.thermal_voltage(298.15), rtol=1e-12)
    assert fit.series_resistance > 0
    assert_allclose(led.forward_voltage(currents, fit.n_vt, fit.saturation_current,
                                        fit.series_resistance), volts, atol=1e-9)
    assert "ideality 2 assumed" in fit.assumed


def test_fit_one_point_assumes_ideality_and_zero_resistance():
    fit = led.fit_forward_voltage([1.0], [3.1])
    assert fit.series_resistance == 0.0
    assert_allclose(led.forward_voltage(1.0, fit.n_vt, fit.saturation_current, 0.0), 3.1,
                    atol=1e-9)
    assert "series resistance 0 assumed" in fit.assumed


def test_fit_unphysical_resistance_falls_back_to_zero():
    # Points on a pure diode with a slope below n=2 (n*Vt = 0.03 V): the n=2 assumption would
    # need Rs < 0, so Rs is set to 0 and n*Vt solved; both points are still met exactly.
    currents = np.array([0.1, 1.0])
    volts = led.forward_voltage(currents, 0.03, 1e-20, 0.0)
    fit = led.fit_forward_voltage(currents, volts)
    assert fit.series_resistance == 0.0
    assert_allclose(fit.n_vt, 0.03, rtol=1e-9)
    assert "negative" in fit.assumed


def test_fit_rejects_bad_points():
    with pytest.raises(ValueError):
        led.fit_forward_voltage([1.0, 1.0], [3.0, 3.1])
    with pytest.raises(ValueError):
        led.fit_forward_voltage([], [])


@BOUNDED
@given(v=st.floats(0.5, 60.0), n_vt=st.floats(0.04, 0.2), log_is=st.floats(-30, -8),
       r=st.floats(1e-3, 20.0))
def test_current_at_voltage_matches_brentq(v, n_vt, log_is, r):
    # Oracle: scipy.optimize.brentq on V(I) - v = 0 (independent root finder).
    i_s = 10.0**log_is
    got = led.current_at_voltage(v, n_vt, i_s, r)
    ref = brentq(lambda i: led.forward_voltage(i, n_vt, i_s, r) - v, 0.0, v / r,
                 xtol=1e-300, rtol=1e-13, maxiter=500)
    assert_allclose(got, ref, rtol=1e-9)


def test_current_at_voltage_vectorised_and_reverse():
    v = np.array([-1.0, 0.0, 3.0, 30.0])
    i = led.current_at_voltage(v, 0.08, 1e-16, 0.5)
    assert i.shape == (4,)
    assert i[0] == 0.0 and i[1] == 0.0
    assert_allclose(led.forward_voltage(i[2:], 0.08, 1e-16, 0.5), v[2:], rtol=1e-12)


@BOUNDED
@given(st.lists(st.tuples(st.floats(0.0, 60.0), st.floats(0.04, 0.2), st.floats(-30, -8),
                          st.floats(0.0, 20.0)), min_size=2, max_size=12))
def test_current_at_voltage_each_element_as_alone(rows):
    # An element's current is the same bits whatever else is solved beside it (a design
    # search solves thousands of candidates in one array; check solves one).
    v, n_vt, log_is, r = (np.array(x) for x in zip(*rows, strict=True))
    batch = led.current_at_voltage(v, n_vt, 10.0**log_is, r)
    alone = [led.current_at_voltage(*x) for x in zip(v, n_vt, 10.0**log_is, r, strict=True)]
    np.testing.assert_array_equal(batch, alone)  # exact (NaN where the model overflows)


def test_current_at_voltage_element_beside_a_slower_one():
    # Explicit example (found by a random search against the previous solver, which iterated
    # every element until the slowest converged: there the second came out 3.5e-15 high).
    v = np.array([57.71860302299531, 43.625001476025254])
    a = np.array([0.12659629688758947, 0.08430259264725934])
    i_s = 10.0 ** np.array([-26.465655806947208, -8.661640909245083])
    r = np.array([10.321855642372025, 2.318196383802935])
    batch = led.current_at_voltage(v, a, i_s, r)
    assert batch.tolist() == [led.current_at_voltage(*x) for x in zip(v, a, i_s, r, strict=True)]


def test_current_at_voltage_zero_volts_without_resistance():
    # voltage 0 gives 0 A with no series resistance too (0/0 once gave NaN)
    assert led.current_at_voltage(0.0, 0.1, 1e-12, 0.0) == 0.0
    assert led.current_at_voltage(np.zeros(2), 0.1, 1e-12, 0.0).tolist() == [0.0, 0.0]


def test_dilog_against_scipy_spence():
    # scipy.special.spence(z) = Li2(1 - z) (scipy docs), so Li2(-y) = spence(1 + y).
    y = np.logspace(-2, 12, 60)
    assert_allclose(led.dilog_neg(np.log(y)), spence(1.0 + y), rtol=1e-12)
    # Li2(-1) = -pi^2/12 (standard value; Lewin 1981, ch. 1).
    assert_allclose(led.dilog_neg(0.0), -np.pi**2 / 12, rtol=1e-15)


def _reference_pulse(vs, c, esr, rser, ron, ib, tp, a, i_s, rs):
    """solve_ivp of the circuit: C dVc/dt = -(I - Ib), I from the loop equation (brentq)."""
    r_tot = rs + esr + rser + ron

    def current(vc):
        f = lambda i: i * r_tot + a * np.log1p(i / i_s) - (vc + esr * ib)  # noqa: E731
        i = brentq(f, 0.0, (vc + esr * ib) / r_tot + 1.0, xtol=1e-300, rtol=1e-14)
        if i <= ib:  # the boost carries the string alone
            g = lambda i: i * (rs + rser + ron) + a * np.log1p(i / i_s) - vc  # noqa: E731
            i = brentq(g, 0.0, vc / (rs + rser + ron) + 1.0, xtol=1e-300, rtol=1e-14)
        return i

    def rhs(_t, y):
        i = current(y[0])
        v_led = a * np.log1p(i / i_s) + rs * i
        return [-max(i - ib, 0.0) / c, i, i * v_led, i * i]

    sol = solve_ivp(rhs, (0.0, tp), [vs, 0.0, 0.0, 0.0], method="LSODA", rtol=1e-10,
                    atol=[1e-12, 1e-18, 1e-18, 1e-18])
    i_peak = current(vs)
    return i_peak, sol.y[:, -1]


RIGS = [
    # vs, C, ESR, Rser, Ron, Ib, tp, n_vt, Is, Rs : our own example rigs
    (24.0, 470e-6, 0.03, 1.0, 0.01, 0.5, 5e-6, 0.08, 1e-16, 0.12),  # levitator-like, mild
    (36.0, 2e-6, 0.1, 0.5, 0.01, 0.0, 20e-6, 0.10, 1e-13, 0.3),  # small cap, no boost: deep
    (48.0, 0.5e-6, 0.2, 2.0, 0.05, 1.0, 15e-6, 0.12, 1e-12, 0.2),  # drains to the boost limit
    (12.0, 100e-6, 0.05, 4.0, 0.02, 5.0, 10e-6, 0.09, 1e-15, 0.1),  # boost carries it all
]


@pytest.mark.parametrize("rig", RIGS)
def test_operating_point_matches_numerical_integration(rig):
    # Oracle: solve_ivp (LSODA, rtol 1e-10) of the same circuit; the closed form is exact,
    # so the agreement is limited by the integrator: 1e-6.
    op = led.pulse_operating_point(*rig)
    i_peak, (vc, q, e, i2) = _reference_pulse(*rig)
    assert_allclose(op.peak_current, i_peak, rtol=1e-9)
    assert_allclose(op.end_voltage, vc, rtol=1e-7)
    assert_allclose(op.charge, q, rtol=1e-6)
    assert_allclose(op.led_energy, e, rtol=1e-6)
    assert_allclose(op.i2t, i2, rtol=1e-6)
    assert_allclose(op.mean_current, q / rig[6], rtol=1e-6)


def test_small_droop_limit_is_i_tp_over_c():
    # docs/references.md, "Power stage" (Capacitor): dV = I*tp/C for a stiff capacitor (ESR step
    # excluded here). The current decays with time constant ~ C*R_tot, so the first-order estimate
    # is good to about tp/(2*C*R_tot) = 2e-4 here; 5e-4 tolerance [calc].
    op = led.pulse_operating_point(24.0, 10e-3, 0.02, 1.0, 0.01, 0.0, 5e-6, 0.08, 1e-16, 0.12)
    assert_allclose(op.droop, op.peak_current * 5e-6 / 10e-3, rtol=5e-4)
    assert op.droop < op.peak_current * 5e-6 / 10e-3


def test_boost_carrying_the_string_means_no_droop():
    op = led.pulse_operating_point(*RIGS[3])
    assert op.droop == 0.0 and op.end_current == op.peak_current
    # Ohm's law and the diode equation at the set voltage without ESR [calc].
    expected = led.current_at_voltage(12.0, 0.09, 1e-15, 4.0 + 0.02 + 0.1)
    assert_allclose(op.peak_current, expected, rtol=1e-12)


def test_operating_point_broadcasts_over_candidates():
    vs = np.linspace(10, 50, 7)[:, None]
    width = np.array([1e-6, 5e-6, 20e-6])
    op = led.pulse_operating_point(vs, 100e-6, 0.05, 1.0, 0.01, 0.5, width, 0.08, 1e-16, 0.12)
    assert op.peak_current.shape == (7, 3)
    one = led.pulse_operating_point(30.0, 100e-6, 0.05, 1.0, 0.01, 0.5, 5e-6, 0.08, 1e-16, 0.12)
    assert_allclose(op.led_energy[3, 1], one.led_energy, rtol=1e-12)


@BOUNDED
@given(
    vs=st.floats(5, 60), log_c=st.floats(-7, -2), esr=st.floats(0.001, 0.3),
    rser=st.floats(0.05, 10), ib=st.floats(0, 3), log_tp=st.floats(-7, -4.3),
    n_vt=st.floats(0.05, 0.15), log_is=st.floats(-25, -10), rs=st.floats(0, 0.5),
)
def test_operating_point_invariants(vs, log_c, esr, rser, ib, log_tp, n_vt, log_is, rs):
    c, tp, i_s = 10.0**log_c, 10.0**log_tp, 10.0**log_is
    op = led.pulse_operating_point(vs, c, esr, rser, 0.01, ib, tp, n_vt, i_s, rs)
    # charge balance: C*droop = Q - Ib*tp while the capacitor droops
    if op.droop > 0:
        assert_allclose(c * op.droop, op.charge - ib * tp, rtol=1e-9, atol=1e-18)
    assert 0 <= op.droop <= vs
    assert op.end_current <= op.peak_current * (1 + 1e-12)
    assert op.end_current * tp * (1 - 1e-9) <= op.charge <= op.peak_current * tp * (1 + 1e-9)
    # mean-value bounds on the LED energy
    v_pk = led.forward_voltage(op.peak_current, n_vt, i_s, rs)
    assert 0 < op.led_energy <= v_pk * op.charge * (1 + 1e-9)
    # more supply voltage never gives less peak current or energy
    op2 = led.pulse_operating_point(vs * 1.1, c, esr, rser, 0.01, ib, tp, n_vt, i_s, rs)
    assert op2.peak_current >= op.peak_current
    assert op2.led_energy >= op.led_energy * (1 - 1e-9)


def test_rated_pulse_current_log_log_interpolation():
    # Table of our own (datasheet style): duty 0.1 curve 1 A @ 100 us, 4 A @ 1 us; duty 0.01
    # curve 2 A @ 100 us, 8 A @ 1 us. Log-log midpoint at 10 us: sqrt(1*4) = 2 A [calc].
    tw = [100e-6, 1e-6, 100e-6, 1e-6]
    td = [0.1, 0.1, 0.01, 0.01]
    ti = [1.0, 4.0, 2.0, 8.0]
    cur, inside = led.rated_pulse_current(10e-6, 0.1, tw, td, ti)
    assert_allclose(cur, 2.0, rtol=1e-12) and inside
    cur, inside = led.rated_pulse_current(10e-6, 0.01, tw, td, ti)
    assert_allclose(cur, 4.0, rtol=1e-12) and inside
    # between duties: the higher duty's (lower) curve, conservative
    cur, inside = led.rated_pulse_current(10e-6, 0.05, tw, td, ti)
    assert_allclose(cur, 2.0, rtol=1e-12) and inside
    # shorter than the table: held at the shortest entry; counts as inside
    cur, inside = led.rated_pulse_current(0.1e-6, 0.01, tw, td, ti)
    assert_allclose(cur, 8.0, rtol=1e-12) and inside
    # longer than the table: extrapolated along the last segment, flagged
    cur, inside = led.rated_pulse_current(1e-3, 0.1, tw, td, ti)
    assert_allclose(cur, 0.5, rtol=1e-12) and not inside
    # duty above the table: flagged
    _, inside = led.rated_pulse_current(10e-6, 0.5, tw, td, ti)
    assert not inside
    cur, inside = led.rated_pulse_current(np.array([1e-6, 10e-6]), np.array([0.1, 0.01]),
                                          tw, td, ti)
    assert_allclose(cur, [4.0, 4.0], rtol=1e-12) and inside.all()


def test_gauss_legendre_table_is_numpys():
    # numpy.polynomial.legendre.leggauss (the reference library) to the last bit
    from strobeplan.physics import led

    x, w = np.polynomial.legendre.leggauss(6)
    assert np.array_equal(led._GL6[0], x) and np.array_equal(led._GL6[1], w)


def test_unique_is_numpys():
    # numpy.unique (the reference library), NaNs and repeats included
    from strobeplan.physics.arrays import unique

    rng = np.random.default_rng(3)
    for a in (rng.integers(0, 9, 50).astype(float), np.array([np.nan, 1.0, np.nan, 1.0, -0.0, 0.0]),
              np.array([]), np.array([2.0]), rng.integers(0, 5, (4, 6))):
        got, want = unique(a), np.unique(a)
        assert got.dtype == want.dtype
        np.testing.assert_array_equal(got, want)
