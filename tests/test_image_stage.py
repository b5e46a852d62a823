"""The image and eye stages against independent computations, on scalars and arrays."""

from __future__ import annotations

import math

import numpy as np
import pytest

from strobeplan.checks import RULES, load_all
from strobeplan.design import Design
from tests.conftest import plan_of

H, C = 6.62607015e-34, 299792458.0  # SI 2019 exact


def test_contract_keys():
    # The image and eye sections carry the keys of the plan-JSON contract.
    out = plan_of("levitator-40k").to_json()
    for key in ("magnification", "object_pixel_m", "field_of_view_m", "source_image_m",
                "sensitivity_per_rad", "measuring_range_rad", "resolution_m",
                "electrons_per_flash", "electrons_per_frame", "grey_level", "noise_electrons",
                "snr", "min_detectable_spl_db", "visible", "saturated"):
        assert key in out["image"], key
    assert {"time_to_limit_s", "risk_group"} <= set(out["eye"])


def test_object_pixel_and_field_of_view_from_the_thin_lens():
    # Independent: 1/u + 1/v = 1/f (Hecht eq. 5.17) for the levitator's 50 mm lens focused
    # on the mirror 1.5 m away; object pixel = pitch u / v; within 1 %.
    plan = plan_of("levitator-40k")
    u, f = 1.5, 0.05
    v = 1.0 / (1.0 / f - 1.0 / u)
    assert plan.image.object_pixel_m == pytest.approx(5.86e-6 * u / v, rel=0.01)
    assert plan.image.field_of_view_m == pytest.approx(1920 * 5.86e-6 * u / v, rel=0.01)
    # the derived object pixel reaches the exposure stage's blur in pixels
    assert plan.rig.camera.object_pixel == pytest.approx(plan.image.object_pixel_m)


def _electrons_by_time_integration(plan):
    """Independent: integrate the LED's flux over a fine time grid of every flash in the
    burst (current falling linearly within a pulse from peak to end, and from flash to
    flash from the first to the last flash's current), then etendue x transmissions."""
    rig = plan.rig
    led, opt, cam = rig.led, rig.optics, rig.camera
    n = plan.timing.flashes_per_frame
    i_pk, i_end = plan.led.peak_current_a, plan.led.end_current_a
    scale_last = plan.supply.last_flash_current_a / i_pk
    cur = [p.current for p in led.relative_output]
    rat = [p.ratio for p in led.relative_output]
    slope = (rat[-1] - rat[-2]) / (cur[-1] - cur[-2])

    def ratio(i):  # the datasheet curve through (0, 0), last slope beyond the table
        return np.where(i > cur[-1], rat[-1] + slope * (i - cur[-1]),
                        np.interp(i, [0.0] + cur, [0.0] + rat))

    r_ref = np.interp(led.optical_power.current, [0.0] + cur, [0.0] + rat)
    t = np.linspace(0.0, 1.0, 2001)
    energy = 0.0
    for k in range(n):
        s = 1.0 + (scale_last - 1.0) * (k / (n - 1) if n > 1 else 0.0)
        i_t = s * (i_pk + (i_end - i_pk) * t)
        flux = led.optical_power.power * ratio(i_t) / r_ref
        energy += np.trapezoid(flux, t) * rig.strobe.pulse_width
    radiance = energy / (math.pi * led.emitting_size**2)
    src = opt.source.width * opt.source.height
    tau = opt.mirror_reflectance**2 * opt.lens_transmission * (1 - opt.cut_fraction)
    pixel = plan.image.object_pixel_m
    joules = radiance * tau * pixel**2 * src / opt.focal_length**2
    return joules * 630e-9 / (H * C) * cam.quantum_efficiency


def test_electrons_per_frame_against_time_integration():
    # Done-when: electrons per pixel within 5 % of an independent computation.
    plan = plan_of("levitator-40k")
    assert plan.image.electrons_per_frame == pytest.approx(
        _electrons_by_time_integration(plan), rel=0.05)
    # and on a rig not shown in the examples: lower voltage, another slit, 2 flashes less
    other = plan_of("levitator-40k", {"supply.voltage": "15 V",
                                      "optics.source": {"width": "0.3 mm", "height": "1 mm"},
                                      "camera.exposure": "950 us"})
    assert other.image.electrons_per_frame == pytest.approx(
        _electrons_by_time_integration(other), rel=0.05)


def test_snr_against_shot_read_and_quantisation():
    # EMVA 1288: sigma^2 = mu + sigma_r^2 + (FW/2^bits)^2/12; signal = fundamental x
    # unit x retention; within 10 % (the done-when tolerance) of this hand chain.
    plan = plan_of("levitator-40k")
    i, cam = plan.image, plan.rig.camera
    unit = i.electrons_per_frame / i.background_transmission
    sigma = math.sqrt(unit * 0.3 + cam.read_noise**2 + (cam.full_well / 1024) ** 2 / 12)
    signal = unit * (plan.optics.deflection_rad * 1.5 / 1e-3) * plan.exposure.retention
    assert i.snr == pytest.approx(signal / sigma, rel=0.10)


def test_rod_stop_has_no_first_order_response():
    # a 0.6 mm rod in the middle of the 1 mm source image: light passes on both sides, and a
    # shift either way changes the light alike (dark field: no first-order term, a second-order one)
    plan = plan_of("levitator-40k", {"optics.cutoff": "rod", "optics.cutoff_width": "0.6 mm"})
    i = plan.image
    assert i.fundamental < 1e-9
    assert i.second_harmonic > 0
    assert i.response_order == 2 and i.image_frequency_factor == 2
    assert i.sensitivity_per_rad == 0.0


def test_knife_slope_is_f_over_a():
    # Settles (2001) eq. 3.6: fundamental / background = f2 eps / a in the linear range.
    plan = plan_of("levitator-40k")
    i = plan.image
    assert i.fundamental / i.background_transmission == pytest.approx(
        1.5 * i.deflection_rad / 0.3e-3, rel=1e-6)


def test_starved_rig_fails_dark():
    plan = plan_of("levitator-40k", {"supply.voltage": "2 V"})
    assert plan.verdict == "fail"
    assert {"image.too_dark", "image.snr_low"} <= {f.code for f in plan.findings}


def test_object_pixel_override_within_tolerance_is_quiet():
    plan = plan_of("levitator-40k", {"camera.object_pixel": "175 um"})  # 3 % off
    assert "image.object_pixel_mismatch" not in {f.code for f in plan.findings}
    assert plan.rig.camera.object_pixel == pytest.approx(175e-6)


def test_stage_and_rules_on_an_array_design():
    # The whole engine on an array of pulse widths (what tune does) gives, element by
    # element, the figures of the scalar solve of each width; the rules return array
    # conditions equal to check's findings.
    from strobeplan.solve import solve

    load_all()
    rig = plan_of("levitator-40k").rig
    clock = rig.controller.clock
    widths = np.array([10, 50, 100]) / clock  # whole ticks
    arr = solve(rig, Design.of(rig).with_(pulse_width=widths), checks=False)
    assert np.shape(arr.image.snr) == (3,)
    for k, w in enumerate(widths):
        one = solve(rig, Design.of(rig).with_(pulse_width=float(w)))
        assert arr.image.electrons_per_frame[k] == pytest.approx(one.image.electrons_per_frame,
                                                                 rel=1e-9)
        assert arr.image.snr[k] == pytest.approx(one.image.snr, rel=1e-9)
        fired = {f.code for f in one.findings if f.code.startswith("image.")}
        for code in ("image.too_dark", "image.snr_low", "image.overexposed"):
            hit = RULES[code].func(arr)
            when = np.broadcast_to(np.asarray(hit.when if hit else False), (3,))
            assert bool(when[k]) == (code in fired), (code, k)
    assert np.shape(arr.eye.time_to_limit_s) in ((), (3,))


def test_report_cautions_cite_the_eye_estimate():
    from strobeplan.report.html import report_html

    plan = plan_of("unsafe-bench")
    text = report_html(plan, plots=())
    assert "IEC 62471 risk group 2" in text
    assert "blue light limit after" in text


@pytest.mark.parametrize("factor", [0.5, 2.0])
def test_light_scales_with_the_flux_rating(factor):
    # The camera equation is linear in the radiance (Boyd 1983, ch. 5): scaling the
    # datasheet flux scales the electrons; the SNR follows the shot/read noise model.
    base = plan_of("levitator-40k")
    power = 0.45 * factor
    other = plan_of("levitator-40k", {"led.optical_power": {"current": "700 mA",
                                                            "power": f"{power} W"}})
    assert other.image.electrons_per_frame == pytest.approx(
        factor * base.image.electrons_per_frame, rel=1e-9)
    cam = base.rig.camera
    q2 = (cam.full_well / 2**cam.bit_depth) ** 2 / 12
    mean = other.image.electrons_per_frame
    expected = factor * base.image.signal_electrons / math.sqrt(mean + cam.read_noise**2 + q2)
    assert other.image.snr == pytest.approx(expected, rel=1e-3)


def test_no_light_budget_without_led_optics():
    plan = plan_of("levitator-40k", {"led.optical_power": None, "led.relative_output": None})
    assert plan.image is not None and plan.image.electrons_per_frame is None
    assert plan.eye is None
    assert not {f.code for f in plan.findings if f.code.startswith(("image.", "eye."))}
