"""Exposure and optics end to end: through strobeplan.solve and the CLI JSON.

Each check value is recomputed here from the published formula with numpy or an external
library, not read back from the module under test.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from acoustic_toolbox.atmosphere import Atmosphere

from tests.conftest import BASES, EXAMPLES, example, plan_of, run_cli

# Design §4, binding keys.
AIR_KEYS = {"speed_of_sound_m_s", "density_kg_m3", "absorption_db_m"}
EXPOSURE_KEYS = {"optical_duration_s", "blur_distance_m", "blur_pixels", "wavelength_m",
                 "retention", "retention_by_harmonic", "max_pulse_width_s"}
OPTICS_KEYS = {"spl_at_view_db", "deflection_rad", "contrast", "visible_contrast",
               "saturated"}






def codes(plan) -> set[str]:
    return {f.code for f in plan.findings}


# ------------------------------------------------------------------ CLI JSON contract
@pytest.mark.parametrize("name", EXAMPLES)
def test_json_sections(name):
    r = run_cli("check", example(name), "--json")
    data = json.loads(r.output)
    assert AIR_KEYS <= set(data["air"])
    assert EXPOSURE_KEYS <= set(data["exposure"])
    assert OPTICS_KEYS <= set(data["optics"])
    harmonics = BASES[name]["wave"].get("harmonics", 1)
    assert len(data["exposure"]["retention_by_harmonic"]) == harmonics
    assert data["exposure"]["retention_by_harmonic"][0] == data["exposure"]["retention"]


def test_text_output_shows_the_answers():
    # What `check` must answer: retention, blur in pixels, widest pulse, SPL, visibility.
    out = run_cli("check", example("levitator-40k")).output
    for label in ("retention", "blur pixels", "max pulse width", "spl at view",
                  "visible contrast", "saturated"):
        assert label in out


# ------------------------------------------------------------------ the example rigs
def test_levitator_passes_exposure_and_optics():
    # Design §7: the levitator passes (warnings at most).
    plan = plan_of("levitator-40k")
    assert plan.verdict != "fail"
    assert not {"exposure.retention_low", "optics.not_visible"} & codes(plan)
    assert plan.exposure.blur_distance_m == 0.0  # standing wave: the pattern stays put
    # Its 40 kHz emitter is ~115 dB at 1 m (datasheet 120 dB at 0.3 m, 10 V; driven at 20 V):
    # the Howard, Hansen & Zander (2004) 110 dB caution applies.
    assert "safety.ultrasound_exposure" in codes(plan)


def test_rangefinder_blur_warning():
    # Design §7: passes with warnings; a 2 us flash on a 346 m/s travelling wave moves
    # ~0.69 mm, 3.5 px of 200 um [calc: c x duration / pixel].
    plan = plan_of("rangefinder-58k")
    assert "exposure.blur_over_pixel" in codes(plan)
    assert not {"exposure.retention_low", "optics.not_visible"} & codes(plan)
    e = plan.exposure
    c = plan.air.speed_of_sound_m_s
    assert e.blur_pixels == pytest.approx(c * e.optical_duration_s / 200e-6, rel=1e-9)
    # 58 kHz lies above the 50 kHz one-third-octave band (upper edge 56.2 kHz): no caution.
    assert "safety.ultrasound_exposure" not in codes(plan)


IDEAL_EDGES = {"gate_driver.rise_time": "1 ps", "gate_driver.fall_time": "1 ps"}


def test_unsafe_bench_pulse_too_long():
    # Design §7: the 10 us pulse at 40 kHz keeps |sinc(0.4)| = 0.757 < 0.9 (numpy sinc).
    # Ideal edges (measured 1 ps) so that the rectangle's closed form applies; the
    # gate-charge model would give this rig's 5 V drive 430 ns edges.
    plan = plan_of("unsafe-bench", IDEAL_EDGES)
    assert plan.verdict == "fail"
    found = {f.code: f for f in plan.findings}
    assert "exposure.retention_low" in found
    f_drive = plan.timing.drive_frequency_hz
    # The current flows for the gate time plus the switch's turn-off minus turn-on delay
    # (gate-charge model, switch section): that rectangle is what the image integrates.
    w = 10e-6 + plan.switch.turn_off_delay_s - plan.switch.turn_on_delay_s
    assert plan.flash.current_width_s == pytest.approx(w, rel=1e-12)
    assert plan.exposure.retention == pytest.approx(abs(np.sinc(f_drive * w)), abs=1e-9)
    # The fix names the widest pulse: |sinc(f w)| = 0.9 at f w = 0.2504 (solved with
    # numpy below), 6.26 us at 40 kHz.
    grid = np.linspace(0.2, 0.3, 200001)
    x = grid[np.argmin(np.abs(np.sinc(grid) - 0.9))]
    assert plan.exposure.max_pulse_width_s == pytest.approx(x / f_drive, rel=1e-4)
    assert "at most" in found["exposure.retention_low"].hint


# ------------------------------------------------------------------ values through solve
def test_air_absorption_matches_acoustic_toolbox_at_the_drive_frequency():
    # Oracle: acoustic-toolbox ISO 9613-1 at the realised drive frequency (0.1 %).
    plan = plan_of("rangefinder-58k")
    a = plan.rig.air
    oracle = Atmosphere(a.temperature, a.pressure / 1e3, 100 * a.relative_humidity)
    expected = oracle.attenuation_coefficient(plan.timing.drive_frequency_hz)
    assert plan.air.absorption_db_m == pytest.approx(float(expected), rel=1e-3)


def test_retention_is_sinc_times_jitter_for_ideal_edges():
    # Rectangle (no edge data, no phosphor) and 3 ns controller + 4 ns gate-driver jitter:
    # |sinc(f w)| exp(-2 pi^2 f^2 sigma^2) with sigma = 5 ns (docs/references.md, "Exposure";
    # Johnson 1993).
    plan = plan_of("unsafe-bench", {"controller.jitter_rms": "3 ns",
                                    "gate_driver.jitter_rms": "4 ns",
                                    "strobe.pulse_width": "2 us", **IDEAL_EDGES})
    f = plan.timing.drive_frequency_hz
    w = 2e-6 + plan.switch.turn_off_delay_s - plan.switch.turn_on_delay_s  # the current's
    expected = abs(np.sinc(f * w)) * math.exp(-2 * math.pi**2 * f**2 * (5e-9) ** 2)
    assert plan.exposure.retention == pytest.approx(expected, rel=1e-9)
    assert plan.exposure.jitter_rms_s == pytest.approx(5e-9)


def test_optics_chain_for_a_given_spl():
    # docs/references.md, "Acoustics and schlieren", worked chain, recomputed here: p = sqrt2 20 uPa
    # 10^(SPL/20), rho' = p/c^2, n' = K rho' with K = (n - 1)/rho of the rig's air at 630 nm
    # from Ciddor (1996) (tested against its published values in tests/physics/
    # test_refraction.py), eps = passes L k n', C = f2 eps / a (Settles 2001 eq. 3.6).
    from strobeplan.physics import refraction

    plan = plan_of("levitator-40k")
    o, opt = plan.optics, plan.rig.optics
    a = plan.rig.air
    c, f = plan.air.speed_of_sound_m_s, plan.timing.drive_frequency_hz
    p = math.sqrt(2) * 20e-6 * 10 ** (150 / 20)  # emitter.spl_at_view = 150 dB
    k_gd = refraction.gladstone_dale(630e-9, a.temperature, a.pressure, a.relative_humidity,
                                     a.co2 * 1e6)
    assert o.gladstone_dale == pytest.approx(k_gd, rel=1e-12)
    # the dry-air dispersion fit the chain used before agrees within 1 % (docs/references.md,
    # "Acoustics and schlieren": 2.2244e-4 (1 + (63.7132 nm / lambda)^2) at 15 degC)
    assert k_gd == pytest.approx(2.2244e-4 * (1 + (63.7132 / 630) ** 2), rel=0.01)
    eps = opt.passes * opt.sound_path * (2 * math.pi * f / c) * k_gd * p / c**2
    assert o.spl_at_view_db == 150.0
    assert o.deflection_rad == pytest.approx(eps, rel=1e-9)
    assert o.contrast == pytest.approx(opt.cutoff_distance * eps / opt.cutoff_opening, rel=1e-9)
    assert o.visible_contrast == pytest.approx(o.contrast * plan.exposure.retention, rel=1e-9)
    assert o.min_contrast == pytest.approx(2 / 2 ** (10 - 1))  # 10-bit camera, common practice


def test_spl_estimate_follows_the_datasheet():
    # docs/references.md, "Acoustics and schlieren", far field: SPL(r) = SPL(r0) + 20 log10(V/Vref)
    # - 20 log10(r/r0) - alpha (r - r0) - detuning; resonance = drive here, so no detuning loss;
    # alpha from acoustic-toolbox.
    plan = plan_of("unsafe-bench")
    a = plan.rig.air
    alpha = float(Atmosphere(a.temperature, a.pressure / 1e3, 100 * a.relative_humidity)
                  .attenuation_coefficient(plan.timing.drive_frequency_hz))
    h = 1 / abs(1 + 1j * 30 * (plan.timing.drive_frequency_hz / 40e3
                               - 40e3 / plan.timing.drive_frequency_hz))  # BVD, Q = 30
    expected = (120 + 20 * math.log10(20 / 10) - 20 * math.log10(0.2 / 0.3)
                - alpha * (0.2 - 0.3) + 20 * math.log10(h))
    assert plan.optics.spl_at_view_db == pytest.approx(expected, abs=2e-3)


# Reachability of every code: tests/test_finding_codes.py solves each rule's own example.


def test_retention_unreachable_hint():
    # 2 us of jitter at 40 kHz keeps exp(-2 pi^2 (f sigma)^2) = exp(-2 pi^2 0.08^2) = 0.881 < 0.9
    # (Gaussian jitter, docs/references.md, "Exposure"), so no pulse width can reach the target and
    # the hint says so.
    plan = plan_of("levitator-40k", {"controller.jitter_rms": "2 us"})
    found = {f.code: f for f in plan.findings}
    assert plan.exposure.max_pulse_width_s is None
    assert "no pulse width" in found["exposure.retention_low"].hint


def test_phosphor_note_not_raised_for_long_pulse():
    # 2 us gate vs 3 x 65 ns: the phosphor tail is a small part of the flash.
    assert "exposure.phosphor_dominates" not in codes(plan_of("rangefinder-58k"))


def test_saturation_threshold():
    # Linear until |C| = 1 (docs/references.md, "Acoustics and schlieren"): the levitator's
    # contrast C0 at its opening a0 scales as 1/a, so a0 x C0 / 1.2 (C = 1.2) saturates and
    # a0 x C0 / 0.8 does not.
    base = plan_of("levitator-40k")
    c0, a0 = base.optics.contrast, base.rig.optics.cutoff_opening * 1e3
    sat = plan_of("levitator-40k", {"optics.cutoff_opening": f"{a0 * c0 / 1.2:.6g} mm"})
    lin = plan_of("levitator-40k", {"optics.cutoff_opening": f"{a0 * c0 / 0.8:.6g} mm"})
    assert sat.optics.saturated and "optics.saturated" in codes(sat)
    assert not lin.optics.saturated and "optics.saturated" not in codes(lin)
