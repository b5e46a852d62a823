"""Every finding code is reachable: one rig per documented code that triggers it.

Each case starts from a bundled example and patches a few keys (a dict of dotted paths;
``None`` deletes the key). The table must cover the registry exactly, so a new code
without a reachability case fails here.
"""

from __future__ import annotations

import pytest

from strobeplan.checks import RULES, load_all
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from tests.conftest import patched
from tests.test_power_stage import CASES as POWER_CASES

# code -> (base example, {dotted.path: new value or None to delete})
CASES: dict[str, tuple[str, dict]] = {
    "field.standing_without_reflector": ("levitator-40k", {"reflector": None}),
    "field.view_near_node": ("levitator-40k", {"emitter.distance_to_view": "62.15 mm"}),
    "field.temperature_moves_phase": ("rangefinder-58k", {
        "air.temperature_range": ["10 degC", "30 degC"]}),
    "timing.trigger_jitter_flicker": ("levitator-40k", {"camera.trigger_jitter": "1 us",
                                                      "camera.exposure": "1.003 ms"}),
    "timing.no_flash_in_exposure": ("levitator-40k", {"camera.exposure": "500 ns"}),
    "timing.rolling_window_too_short": ("rangefinder-58k", {"camera.readout": "2 ms"}),
    "timing.phase_step_below_resolution": ("rangefinder-58k", {"sweep.steps": 1000}),
    "timing.clock_drift_smear": ("levitator-40k", {
        "controller.shared_clock": False, "controller.clock_tolerance": "1000 ppm",
        "camera.exposure": "20 ms"}),
    "timing.phase_unlocked": ("levitator-40k", {
        "controller.shared_clock": False, "controller.clock_tolerance": "20 ppm"}),
    "timing.slow_motion_smear": ("levitator-40k", {
        "sweep": {"slow_motion": "300 Hz"}, "strobe.every": 1}),
    "timing.slow_motion_quantised": ("levitator-40k", {
        "sweep": {"slow_motion": "1 Hz"}, "strobe.every": 1}),
    "timing.frame_rate_adjusted": ("levitator-40k", {
        "strobe.every": 7, "camera.frame_rate": "53 Hz"}),
    "drive.frequency_error": ("rangefinder-58k", {"controller.clock": "1 MHz"}),
    "drive.off_resonance": ("levitator-40k", {"emitter.resonance": "40.6 kHz"}),
    "drive.carrier_not_filtered": ("levitator-40k", {
        "emitter.synthesis.filter": {"kind": "rc", "cutoff": "200 kHz"}}),
    "drive.pwm_resolution_low": ("levitator-40k", {"controller.clock": "20 MHz"}),
    "exposure.retention_low": ("levitator-40k", {"strobe.pulse_width": "9 us"}),
    "exposure.phosphor_dominates": ("rangefinder-58k", {"strobe.pulse_width": "150 ns"}),
    "exposure.blur_over_pixel": ("rangefinder-58k", {}),
    "optics.not_visible": ("rangefinder-58k", {"emitter.drive_voltage": "2 V"}),
    "optics.saturated": ("levitator-40k", {"optics.cutoff_opening": "20 um"}),
    "optics.near_field": ("rangefinder-58k", {"emitter.radius": "40 mm"}),
    "safety.ultrasound_exposure": ("unsafe-bench", {}),
    "trigger_link.over_input_max": ("unsafe-bench", {}),
    "trigger_link.below_vih": ("unsafe-bench", {"trigger_link.top": "2 kohm",
                                                "trigger_link.bottom": "1 kohm"}),
    "trigger_link.low_above_vil": ("levitator-40k", {
        "controller.output": "cmos5", "gate_driver.input": "cmos5",
        "camera.trigger_input": {"family": "ttl5"}, "trigger_link.top": "10 kohm",
        "trigger_link.bottom": "10 kohm"}),
    "trigger_link.source_overloaded": ("unsafe-bench", {"trigger_link.top": "100 ohm",
                                                        "trigger_link.bottom": "120 ohm"}),
    "trigger_link.edge_too_slow": ("rangefinder-58k", {}),
    "trigger_link.no_feasible_pair": ("levitator-40k", {
        "controller.output": "lvcmos18", "gate_driver.input": "lvcmos18",
        "camera.trigger_input": {"family": "lvcmos33"}}),
    "gate_link.below_vih": ("levitator-40k", {
        "controller.output": "lvcmos12", "camera.trigger_input": {"family": "lvcmos12"}}),
    "gate_link.over_input_max": ("levitator-40k", {
        "controller.output": "cmos5", "gate_driver.supply": "4 V",
        "camera.trigger_input": {"family": "lvcmos33"}}),
    **POWER_CASES,  # the power stage's own table (one case per led./switch./supply./stuck_on.)
}




def test_every_registered_code_has_a_case():
    load_all()
    assert set(CASES) == set(RULES), (
        f"missing cases: {sorted(set(RULES) - set(CASES))}; "
        f"stale cases: {sorted(set(CASES) - set(RULES))}")


@pytest.mark.parametrize("code", sorted(CASES))
def test_code_is_reachable(code):
    base, patch = CASES[code]
    plan = solve(rig_from_dict(patched(base, patch)))
    codes = {f.code for f in plan.findings}
    assert code in codes, f"{code} not raised; got {sorted(codes)}"
    severity = RULES[code].severity
    if severity in ("hazard", "fault"):
        assert plan.verdict == "fail"
