"""Stuck-on gate from a charged capacitor: strobeplan.physics.supply.stuck_on_transient.

Oracles:

- scipy.integrate.solve_ivp (Radau, tight tolerances) of the same circuit written out
  independently here: the ideal capacitor with its ESR, the boost as a current source at
  its limit that holds its set voltage when the string needs less, the series resistor, the
  switch's on-resistance and the Shockley diode with series resistance (current from the
  capacitor voltage by scipy.optimize.brentq, not by strobeplan's solver), coupled to the
  Foster network ``tau_i dT_i/dt = R_i P - T_i`` driven by ``(1 - efficiency) x LED power``.
  Time to the limit and the peak come from solve_ivp events.
- Debian's ngspice for the current waveform (see tests/test_ngspice_power.py for the
  circuit conventions).
"""

import math
import re
import subprocess

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from strobeplan.physics import led, supply
from tests.conftest import need_program

ZERO_C = 273.15  # [K]

# The bundled levitator example (configs/levitator-40k.toml) with a 10 mF capacitor.
LEVITATOR = dict(
    supply_voltage=24.0, capacitance=10e-3, esr=0.05, series_resistor=2.2,
    on_resistance=0.010, current_limit=0.5, efficiency=0.30,
    resistances=[1.5, 3.0, 6.0, 15.0], time_constants=[20e-6, 2e-3, 80e-3, 20.0],
    ambient=25.0 + ZERO_C, start_temperature=25.0 + ZERO_C, junction_max=125.0 + ZERO_C,
)
LEVITATOR_POINTS = ([0.35, 0.7, 1.0], [2.10, 2.30, 2.45])  # its datasheet (I, V) points


def _levitator():
    fit = led.fit_forward_voltage(*LEVITATOR_POINTS, temperature=298.15)
    return dict(LEVITATOR, n_vt=fit.n_vt, saturation_current=fit.saturation_current,
                led_series_resistance=fit.series_resistance)


def reference(p, t_end=None):
    """solve_ivp of the circuit and the Foster network: (time to limit, peak K, peak time,
    solution). Written from the circuit, not from strobeplan's closed forms."""
    vs, c, esr, rser, ron, ib = (p[k] for k in ("supply_voltage", "capacitance", "esr",
                                                "series_resistor", "on_resistance",
                                                "current_limit"))
    a, i_s, rs = p["n_vt"], p["saturation_current"], p["led_series_resistance"]
    r = np.asarray(p["resistances"], float)
    tau = np.asarray(p["time_constants"], float)
    eff = p["efficiency"]
    r_string = rser + ron + rs

    def string_current(v_out, r_loop):
        # I r_loop + a ln(I/Is + 1) = v_out, monotone in I
        if v_out <= 0:
            return 0.0
        return brentq(lambda i: i * r_loop + a * math.log1p(i / i_s) - v_out, 0.0,
                      v_out / r_loop, xtol=1e-300, rtol=1e-15, maxiter=500)

    i_hold = string_current(vs, r_string)  # boost alone at its set voltage

    def state(vc):
        """Loop current and capacitor current draw at capacitor voltage vc."""
        if vc >= vs and i_hold <= ib:
            return i_hold, 0.0  # the boost holds its voltage and carries the string
        # boost at its limit: vc - esr (I - ib) = I r_string + a ln(I/Is + 1)
        i = string_current(vc + esr * ib, r_string + esr)
        return i, i - ib

    def rhs(t, y):
        i, i_cap = state(y[0])
        heat = (1.0 - eff) * i * (a * math.log1p(i / i_s) + rs * i)
        return np.concatenate([[-i_cap / c, rser * (i * i - i_ss * i_ss)],
                               (r * heat - y[2:]) / tau])

    i_ss = min(i_hold, ib)  # capacitor emptied: the boost at its limit, or the string
    rise0 = p["start_temperature"] - p["ambient"]
    allowed = p["junction_max"] - p["ambient"]
    y0 = np.concatenate([[vs, 0.0], rise0 * r / r.sum()])

    def hits_limit(t, y):
        return y[2:].sum() - allowed
    hits_limit.terminal = False
    hits_limit.direction = 1

    def turns(t, y):
        return float(np.sum(rhs(t, y)[2:]))
    turns.direction = -1

    # The dump's resistor energy is counted until the capacitor has settled: 40 of its
    # slowest time constants with a boost; without one the diode's tail decays as 1/t and
    # is followed for 1e6 initial time constants (the horizon the docstring states).
    i0 = state(vs)[0]
    r_loop = r_string + esr
    settle = (40.0 * c * (r_loop + a / (ib + i_s)) if ib > 0
              else 1e6 * c * (r_loop + a / (i0 + i_s)))
    settle = min(settle, 1e6 * c * (r_loop + a / (i0 + i_s)))
    t_end = max(40.0 * tau.max(), settle) if t_end is None else t_end
    sol = solve_ivp(rhs, (0.0, t_end), y0, method="Radau", rtol=1e-9,
                    atol=np.concatenate([[1e-10, 1e-12], np.full(r.size, 1e-9)]),
                    events=(hits_limit, turns), dense_output=True, first_step=1e-9)
    assert sol.success, sol.message
    t_lim = sol.t_events[0][0] if sol.t_events[0].size else math.inf
    cands = [(rise0, 0.0), (sol.y[2:, -1].sum(), sol.t[-1])]
    cands += [(y[2:].sum(), t) for t, y in zip(sol.t_events[1], sol.y_events[1], strict=True)]
    peak, t_peak = max(cands)
    return dict(time_to_limit=t_lim, peak_temperature=p["ambient"] + peak, peak_time=t_peak,
                start_current=state(vs)[0], steady_current=i_ss,
                resistor_pulse_energy=sol.y[1, -1], sol=sol, state=state)


def test_levitator_10mF_against_solve_ivp():
    p = _levitator()
    out = supply.stuck_on_transient(**p)
    ref = reference(p)
    # solve_ivp: about 8.2 A at the start, 0.5 A (the boost limit) at the end, the
    # junction at 125 degC after about 1.8 ms and near 142 degC at its peak
    assert_allclose(out.start_current, ref["start_current"], rtol=1e-9)
    assert 8.0 < out.start_current < 8.4
    assert out.steady_current == pytest.approx(ref["steady_current"], rel=1e-9)
    assert out.time_to_limit == pytest.approx(ref["time_to_limit"], rel=2e-3)
    assert 1.5e-3 < out.time_to_limit < 2.0e-3
    # the piecewise-constant heat over-estimates the peak slightly (docstring: < 0.2 K)
    assert 0.0 <= out.peak_temperature - ref["peak_temperature"] < 0.2
    assert 140.0 < out.peak_temperature - ZERO_C < 146.0
    assert out.peak_time == pytest.approx(ref["peak_time"], rel=0.05)
    assert out.resistor_pulse_energy == pytest.approx(ref["resistor_pulse_energy"], rel=1e-4)
    assert out.resistor_peak_power == pytest.approx(2.2 * ref["start_current"] ** 2, rel=1e-9)
    # the old steady-state view: boost-limited at 0.5 A, the junction far below its limit
    dc = supply.stuck_on_state(24.0, 0.5, 2.2, 0.010, p["n_vt"], p["saturation_current"],
                               p["led_series_resistance"])
    assert dc.current == pytest.approx(0.5) and bool(dc.boost_limited)


def test_small_capacitor_never_reaches_the_limit():
    # the levitator as written (470 uF): the dump is too short to heat the junction to 125 C
    p = dict(_levitator(), capacitance=470e-6)
    out = supply.stuck_on_transient(**p)
    ref = reference(p)
    assert math.isinf(ref["time_to_limit"]) and math.isinf(out.time_to_limit)
    assert abs(out.peak_temperature - ref["peak_temperature"]) < 0.2
    assert out.resistor_pulse_energy == pytest.approx(ref["resistor_pulse_energy"], rel=1e-4)


def test_broadcasts_over_voltage_and_resistor_grids():
    p = _levitator()
    volts = np.array([12.0, 24.0, 36.0])[:, None]
    ohms = np.array([0.5, 2.2, 10.0])
    grid = supply.stuck_on_transient(**dict(p, supply_voltage=volts, series_resistor=ohms))
    assert grid.time_to_limit.shape == (3, 3)
    for i, v in enumerate(volts[:, 0]):
        for j, rser in enumerate(ohms):
            one = supply.stuck_on_transient(**dict(p, supply_voltage=v, series_resistor=rser))
            for name, x in zip(one._fields, one, strict=True):
                # the same bits: each circuit has its own time grid, whatever is beside it
                assert_array_equal(getattr(grid, name)[i, j], x, err_msg=name)
    # more voltage, less resistance: an earlier limit (invariant)
    t = np.where(np.isinf(grid.time_to_limit), 1e9, grid.time_to_limit)
    assert np.all(np.diff(t, axis=0) <= 0) and np.all(np.diff(t, axis=1) >= 0)
    # already at the limit when the gate sticks: 0 s
    hot = supply.stuck_on_transient(**dict(p, start_temperature=p["junction_max"] + 1.0))
    assert hot.time_to_limit == 0.0


def test_each_circuit_as_alone_whatever_is_beside_it():
    # Circuits whose time grids need different numbers of steps (0.1 uF to 47 mF, no boost to
    # 2 A): each has its own grid, so each answer is the bits it gets alone (once the grid's
    # step count was the largest of the array's circuits).
    p = _levitator()
    caps = np.array([0.1e-6, 2.2e-6, 47e-3])
    limits = np.array([0.0, 0.5, 2.0])[:, None]
    both = supply.stuck_on_transient(**dict(p, capacitance=caps, current_limit=limits))
    for i, ib in enumerate(limits[:, 0]):
        for j, c in enumerate(caps):
            one = supply.stuck_on_transient(**dict(p, capacitance=c, current_limit=ib))
            for name, x in zip(one._fields, one, strict=True):
                assert_array_equal(getattr(both, name)[i, j], x, err_msg=f"{name} {c} {ib}")
    assert np.isfinite(both.time_to_limit).any()


# 80 examples pass locally (about 2 min); CI runs a few (derandomized: the same ones every
# run) plus the cases random runs found: the diode tail, and a fast term under a quickly
# falling heat (the largest error, on the hot side)
@settings(max_examples=6, deadline=None, derandomize=True)
@given(vs=st.floats(6.0, 48.0), log_c=st.floats(-5.0, -2.0), esr=st.floats(0.005, 0.3),
       rser=st.floats(0.1, 10.0), ron=st.floats(0.002, 0.1), ib=st.floats(0.0, 2.0),
       n_vt=st.floats(0.05, 0.15), log_is=st.floats(-22.0, -12.0), rs=st.floats(0.0, 0.5),
       eff=st.floats(0.05, 0.5), r1=st.floats(0.5, 5.0), r2=st.floats(1.0, 30.0),
       log_tau1=st.floats(-5.0, -3.0), log_tau2=st.floats(-2.5, 0.5),
       start=st.floats(0.0, 40.0), allowed=st.floats(40.0, 150.0))
@example(vs=6.0, log_c=-2.0, esr=0.25, rser=1.0, ron=0.0625, ib=0.0, n_vt=0.140625,
         log_is=-20.0, rs=0.0, eff=0.5, r1=1.0, r2=1.0, log_tau1=-3.0, log_tau2=0.0,
         start=0.0, allowed=40.0)  # no boost: the diode's 1/t tail sets the pulse energy
@example(vs=22.0, log_c=-2.0, esr=0.25, rser=1.0, ron=0.0625, ib=0.0, n_vt=0.140625,
         log_is=-12.0, rs=0.0, eff=0.5, r1=2.0, r2=8.0, log_tau1=-5.0, log_tau2=-1.5,
         start=0.0, allowed=40.0)  # a 10 us term under the dump: 0.34 K high on 69 K
@example(vs=13.0, log_c=-2.0, esr=0.25, rser=1.0, ron=0.0625, ib=0.0, n_vt=0.140625,
         log_is=-13.0, rs=0.0, eff=0.5, r1=2.0, r2=10.0, log_tau1=-5.0, log_tau2=-1.5,
         start=0.0, allowed=40.0)  # the same near a flat peak 0.7 K over: 2.7 % early
def test_random_circuits_against_solve_ivp(vs, log_c, esr, rser, ron, ib, n_vt, log_is, rs,
                                           eff, r1, r2, log_tau1, log_tau2, start,
                                           allowed):
    p = dict(supply_voltage=vs, capacitance=10**log_c, esr=esr, series_resistor=rser,
             on_resistance=ron, current_limit=ib, n_vt=n_vt, saturation_current=10**log_is,
             led_series_resistance=rs, efficiency=eff, resistances=[r1, r2],
             time_constants=[10**log_tau1, 10**log_tau2], ambient=300.0,
             start_temperature=300.0 + start, junction_max=300.0 + start + allowed)
    out = supply.stuck_on_transient(**p)
    ref = reference(p)
    assert_allclose(out.start_current, ref["start_current"], rtol=1e-8)
    assert_allclose(out.steady_current, ref["steady_current"], rtol=1e-8)
    rise = ref["peak_temperature"] - 300.0
    # The interval-mean heat errs on the hot side under a falling heat (first order in the
    # interval: R_fast |dP/dt| dt / 2, see stuck_on_transient): up to 0.6 % of the rise
    # above the reference, and never more than 0.2 K + 0.2 % below it.
    error = out.peak_temperature - ref["peak_temperature"]
    assert -(0.2 + 2e-3 * rise) <= error <= 0.2 + 6e-3 * rise
    assert out.resistor_pulse_energy == pytest.approx(ref["resistor_pulse_energy"],
                                                      rel=1e-3, abs=1e-9)
    margin = ref["peak_temperature"] - p["junction_max"]
    if abs(margin) > 0.5 + 6e-3 * rise:  # a peak grazing the limit may go either way
        assert math.isinf(out.time_to_limit) == math.isinf(ref["time_to_limit"])
        if not math.isinf(ref["time_to_limit"]):
            # early rather than late (the hot side), by more only near a flat peak
            assert out.time_to_limit <= ref["time_to_limit"] * (1 + 5e-3)
            tol = 5e-3 if margin > 2.0 + 2e-2 * rise else 5e-2
            assert out.time_to_limit == pytest.approx(ref["time_to_limit"], rel=tol)


def _ngspice_stuck(p, times, horizon, tmp_path):
    """Debian ngspice: the gate held on from t = 0 (the switch as its on-resistance), the
    boost a current source at its limit; the LED current at ``times`` and the series
    resistor's energy above the steady dissipation up to ``horizon``."""
    exe = need_program("ngspice", "ngspice")  # skipped with the reason; a failure in CI
    n = p["n_vt"] / float(led.thermal_voltage(298.15))
    i_ss = supply.stuck_on_state(p["supply_voltage"], p["current_limit"],
                                 p["series_resistor"], p["on_resistance"], p["n_vt"],
                                 p["saturation_current"], p["led_series_resistance"]).current
    finds = "\n".join(f".meas tran i{k} FIND I(VSENSE) AT={t:.9e}" for k, t in enumerate(times))
    step = horizon / 20000
    excess = f"{p['series_resistor']:.12e}*(I(VSENSE)*I(VSENSE)-{i_ss ** 2:.12e})"
    net = f"""* strobeplan stuck-on gate
.options TEMP=25 TNOM=25 RELTOL=1e-6 ABSTOL=1e-12 VNTOL=1e-9
.model DLED D(IS={p["saturation_current"]:.12e} N={n:.12e} RS={p["led_series_resistance"]:.12e})
C1 cap 0 {p["capacitance"]:.12e} IC={p["supply_voltage"]:.12e}
RESR cap out {p["esr"]:.12e}
IB 0 out DC {p["current_limit"]:.12e}
RSER out anode {p["series_resistor"]:.12e}
D1 anode cathode DLED
VSENSE cathode drain 0
RON drain 0 {p["on_resistance"]:.12e}
.tran {step / 100:.6e} {horizon:.9e} 0 {step:.6e} UIC
{finds}
.meas tran erx INTEG par('{excess}') FROM=0 TO={horizon:.9e}
.end
"""
    cir = tmp_path / "stuck.cir"
    cir.write_text(net)
    out = subprocess.run([exe, "-n", "-b", str(cir)], capture_output=True, text=True,
                         cwd=tmp_path, timeout=120)
    assert out.returncode == 0, out.stderr
    text = out.stdout.split("Measurements for", 1)
    assert len(text) == 2, out.stdout
    values = {m.group(1).lower(): float(m.group(2)) for m in
              re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", text[1], re.MULTILINE)}
    return np.array([values[f"i{k}"] for k in range(len(times))]), values["erx"]


def test_levitator_10mF_current_against_ngspice(tmp_path):
    p = _levitator()
    out = supply.stuck_on_transient(**p)
    horizon = 0.4  # 15 slowest discharge time constants (0.026 s): the dump is over
    times = np.array([1e-6, 1e-4, 1e-3, 3e-3, 1e-2, 2e-2, 5e-2, 0.1, 0.3])
    i_ng, e_ng = _ngspice_stuck(p, times, horizon, tmp_path)
    # the waveform the transient follows: the exact discharge at each time
    model = led.pulse_operating_point(p["supply_voltage"], p["capacitance"], p["esr"],
                                      p["series_resistor"], p["on_resistance"],
                                      p["current_limit"], times, p["n_vt"],
                                      p["saturation_current"],
                                      p["led_series_resistance"]).end_current
    assert_allclose(model, i_ng, rtol=2e-3)
    assert_allclose(out.start_current, i_ng[0], rtol=2e-3)
    assert_allclose(out.steady_current, i_ng[-1], rtol=2e-3)
    assert i_ng[6] < 0.5 * i_ng[0]  # the capacitor has visibly emptied by 50 ms
    assert_allclose(out.resistor_pulse_energy, e_ng, rtol=5e-3)
