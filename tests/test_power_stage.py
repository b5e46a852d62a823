"""End-to-end tests of the power stage: sections, JSON, findings, invariants.

Oracles: the plan JSON contract (keys) and README.md (what each example rig must do);
scipy.optimize.brentq for the stuck-on DC current; each hazard's condition re-evaluated from
its trigger in docs/findings.md against the plan's own figures.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from strobeplan.checks import RULES
from tests.conftest import EXAMPLES, example, plan_of, run_cli

BOUNDED = settings(max_examples=30, deadline=None)

# plan JSON contract keys, plus the ones this stage adds that other code relies on
KEYS = {
    "led": {"peak_current_a", "pulse_energy_j", "average_power_w", "junction_peak_c",
            "thermal_margin_k", "droop_v", "rated_pulse_current_a"},
    "switch": {"rise_time_s", "fall_time_s", "vds_peak_v", "gate_drive_margin_v"},
    "supply": {"average_power_w", "recharge_time_s", "burst_droop_v"},
    "stuck_on": {"time_to_limit_s", "dc_current_a", "resistor_power_w"},
}
POWER_PREFIXES = ("led.", "switch.", "supply.", "stuck_on.")






def power_findings(plan, severity=None):
    return {f.code for f in plan.findings if f.code.startswith(POWER_PREFIXES)
            and (severity is None or f.severity == severity)}


@pytest.mark.parametrize("name", EXAMPLES)
def test_cli_json_has_the_contract_keys(name):
    result = run_cli("check", example(name), "--json")
    data = json.loads(result.stdout)
    for section, keys in KEYS.items():
        assert keys <= set(data[section]), f"{section}: missing {keys - set(data[section])}"
    assert result.exit_code == (1 if data["verdict"] == "fail" else 0)


def test_examples_behave_as_design_section_7():
    # levitator passes (warnings at most), rangefinder passes with warnings: no power-stage
    # hazard or fault in either
    for name in ("levitator-40k", "rangefinder-58k"):
        plan = plan_of(name)
        bad = {f.code for f in plan.findings if f.severity in ("hazard", "fault")}
        assert not bad, (name, bad)
        assert plan.stuck_on.time_to_limit_s is None  # a stuck gate never reaches the limit
    # unsafe-bench: stuck-on burn-out in milliseconds, gate drive and pulse rating hazards
    plan = plan_of("unsafe-bench")
    hazards = power_findings(plan, "hazard")
    assert {"stuck_on.burnout_fast", "switch.gate_drive_low", "led.pulse_over_rating"} <= hazards
    assert plan.stuck_on.time_to_limit_s < 10e-3
    assert plan.verdict == "fail"
    result = run_cli("check", example("unsafe-bench"))
    assert result.exit_code == 1 and "Traceback" not in result.output


def test_stuck_on_current_against_brentq():
    # unsafe-bench: the boost's 5 A limit is above what 24 V drives through 5 ohm + LED, so
    # the string sets the current: Vs = I*(Rser + Ron + Rs) + n*Vt*ln(I/Is + 1) (brentq)
    plan = plan_of("unsafe-bench")
    s, led = plan.rig.supply, plan.led
    r = s.series_resistor + plan.rig.switch.on_resistance + led.fit_series_resistance_ohm

    def f(i):
        return i * r + led.fit_n_vt_v * np.log1p(i / led.fit_saturation_current_a) - s.voltage

    i_dc = brentq(f, 0.0, s.voltage / r, xtol=1e-14, rtol=1e-13)
    assert plan.stuck_on.limited_by == "string resistance"
    np.testing.assert_allclose(plan.stuck_on.dc_current_a, i_dc, rtol=1e-9)
    np.testing.assert_allclose(plan.stuck_on.resistor_power_w, i_dc**2 * s.series_resistor,
                               rtol=1e-9)


def test_measured_edges_override_the_estimate():
    plan = plan_of("levitator-40k", {"gate_driver.rise_time": "40 ns",
                                     "gate_driver.fall_time": "60 ns"})
    assert plan.switch.rise_time_s == pytest.approx(40e-9)
    assert plan.switch.fall_time_s == pytest.approx(60e-9)
    assert plan.flash.rise_s == pytest.approx(40e-9)  # the edges feed the optical pulse
    assert "switch.edges_measured" in power_findings(plan)


def test_continuous_option_heats_more_than_bursts():
    # [strobe] continuous = true flashes every cycle, also between frames: the exact
    # periodic peak can only rise against the burst pattern (more pulses, same spacing)
    burst = plan_of("levitator-40k")
    cont = plan_of("levitator-40k", {"strobe.continuous": True})
    assert cont.led.pattern == "continuous" and burst.led.pattern == "burst"
    assert cont.led.junction_peak_k >= burst.led.junction_peak_k
    assert cont.led.average_power_w > burst.led.average_power_w


def _peak_c(**patch):
    return plan_of("levitator-40k", patch).led.junction_peak_k


@BOUNDED
@given(r1=st.floats(0.3, 10.0), k=st.floats(1.0, 3.0))
def test_junction_peak_never_falls_with_peak_current(r1, k):
    # a smaller series resistor gives more peak current; the peak junction temperature
    # must not fall
    lo = plan_of("levitator-40k", {"supply.series_resistor": f"{r1 * k} ohm"})
    hi = plan_of("levitator-40k", {"supply.series_resistor": f"{r1} ohm"})
    assert hi.led.peak_current_a >= lo.led.peak_current_a
    assert hi.led.junction_peak_k >= lo.led.junction_peak_k - 1e-9


@pytest.mark.slow
@BOUNDED
@given(w=st.floats(0.2, 6.0), k=st.floats(1.0, 3.0))
def test_junction_peak_never_falls_with_pulse_width(w, k):
    narrow = plan_of("levitator-40k", {"strobe.pulse_width": f"{w} us"})
    wide = plan_of("levitator-40k", {"strobe.pulse_width": f"{min(w * k, 20.0)} us"})
    assert wide.led.junction_peak_k >= narrow.led.junction_peak_k - 1e-9


@settings(max_examples=20, deadline=None)
@given(e1=st.floats(0.2, 4.0), k=st.floats(1.0, 2.5))
def test_junction_peak_never_falls_with_flashes_per_frame(e1, k):
    # a longer exposure holds more flashes per frame (same spacing, same frame rate)
    few = plan_of("levitator-40k", {"camera.exposure": f"{e1} ms"})
    many = plan_of("levitator-40k", {"camera.exposure": f"{e1 * k} ms"})
    assert many.timing.flashes_per_frame >= few.timing.flashes_per_frame
    assert many.led.junction_peak_k >= few.led.junction_peak_k - 1e-9


def _hazard_conditions(plan):
    """The hazards' conditions (docs/findings.md), re-evaluated from the plan's own figures."""
    rig, led, sw, st_, sup = plan.rig, plan.led, plan.switch, plan.stuck_on, plan.supply
    cond = {
        "led.pulse_over_rating": led.rated_pulse_current_a is not None
        and led.peak_current_a > led.rated_pulse_current_a,
        "led.junction_over_limit": led.junction_peak_k > rig.led.junction_max,
        "led.average_over_dc_rating": led.average_current_a > rig.led.max_dc_current,
        "switch.gate_drive_low": rig.gate_driver.supply < rig.switch.rated_gate_voltage
        or rig.gate_driver.supply < rig.switch.plateau_voltage + 1.0,
        "switch.overshoot": sw.vds_peak_v is not None
        and sw.vds_peak_v > rig.switch.max_drain_voltage,
        "switch.pulse_over_rating": led.peak_current_a > rig.switch.max_pulse_current,
        "stuck_on.burnout_fast": st_.time_to_limit_s is not None and st_.time_to_limit_s < 10,
        "stuck_on.resistor_overload": st_.resistor_power_w > rig.supply.series_resistor_power,
    }
    assert sup is not None
    return cond


@pytest.mark.slow
@settings(max_examples=60, deadline=None)
@given(
    vs=st.floats(6.0, 48.0), rser=st.floats(0.2, 20.0), drive=st.floats(3.0, 15.0),
    lind=st.floats(1.0, 200.0), width=st.floats(0.2, 10.0), imax=st.floats(0.05, 5.0),
    rpow=st.floats(0.1, 30.0), pulse_max=st.floats(2.0, 100.0),
)
def test_every_hazard_condition_produces_a_hazard(vs, rser, drive, lind, width, imax, rpow,
                                                  pulse_max):
    plan = plan_of("levitator-40k", {
        "supply.voltage": f"{vs} V", "supply.series_resistor": f"{rser} ohm",
        "gate_driver.supply": f"{drive} V", "switch.loop_inductance": f"{lind} nH",
        "strobe.pulse_width": f"{width} us", "supply.max_current": f"{imax} A",
        "supply.series_resistor_power": f"{rpow} W",
        "switch.max_pulse_current": f"{pulse_max} A",
    })
    hazards = power_findings(plan, "hazard")
    for code, holds in _hazard_conditions(plan).items():
        assert RULES[code].severity == "hazard"
        assert (code in hazards) == holds, (code, holds, sorted(hazards))
    if hazards:
        assert plan.verdict == "fail"
