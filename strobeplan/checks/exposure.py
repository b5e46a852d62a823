"""Exposure rules: contrast retention, phosphor tail, motion blur."""

from __future__ import annotations

import numpy as np

from ..rig import Camera
from ..units import render
from .registry import Hit, rule

# A gate pulse shorter than this many phosphor decay times is shaped by the phosphor.
PHOSPHOR_RATIO = 3.0
# Blur above camera.max_blur pixels is a visible smear of a travelling wave (default 2,
# common practice: the eye and edge detectors resolve about a pixel; two leave margin).
BLUR_PIXEL_LIMIT = Camera.model_fields["max_blur"].default


@rule("exposure.retention_low", "fault",
      trigger="contrast retention at the wave frequency (pulse shape x jitter x smear) is "
              "below strobe.min_retention (default 90 %)",
      fix="shorten strobe.pulse_width to at most exposure.max_pulse_width_s; if even a short "
          "pulse misses, reduce the jitter, the phosphor decay or the smear",
      example=("levitator-40k", {"strobe.pulse_width": "9 us"}))
def retention_low(plan):
    e = plan.exposure
    if e is None:
        return None
    width = plan.design.pulse_width

    def hint():
        if e.max_pulse_width_s is not None:
            return (f"shorten strobe.pulse_width from {render(width, 'time')} to at most "
                    f"{render(e.max_pulse_width_s, 'time')}")
        return (f"no pulse width reaches {e.min_retention:.0%}: jitter keeps "
                f"{e.jitter_retention:.1%}, the phosphor {e.phosphor_retention:.1%} and the "
                f"smear {e.smear:.1%}; reduce those first")

    return Hit(lambda: f"the {render(width, 'time')} flash keeps {e.retention:.1%} of the "
               f"wave's contrast at {render(plan.timing.drive_frequency_hz, 'frequency')} "
               f"(target {e.min_retention:.0%})", value=e.retention, limit=e.min_retention,
               unit="1", hint=hint, when=~(np.asarray(e.retention) >= e.min_retention))


@rule("exposure.phosphor_dominates", "note",
      trigger=f"the gate pulse is shorter than {PHOSPHOR_RATIO:g} x led.phosphor_decay (with "
              "a phosphor fraction above 0): the light outlasts the gate and its tail, not "
              "the gate, sets the flash",
      fix="expect the reported optical duration rather than the gate time; a direct-emitting "
          "(non-phosphor) LED gives a sharper flash",
      example=("rangefinder-58k", {"strobe.pulse_width": "150 ns"}))
def phosphor_dominates(plan):
    led = plan.rig.led
    if led is None or led.phosphor_fraction <= 0 or not led.phosphor_decay:
        return None
    width = plan.design.pulse_width
    limit = PHOSPHOR_RATIO * led.phosphor_decay
    return Hit(lambda: f"the {render(width, 'time')} gate is under {PHOSPHOR_RATIO:g} phosphor "
               f"decay times ({render(led.phosphor_decay, 'time')}); {led.phosphor_fraction:.0%} "
               f"of "
               f"the light trails it (optical FWHM "
               f"{render(plan.exposure.optical_duration_s, 'time')})",
               value=width, limit=limit, unit="s", when=~(np.asarray(width) >= limit))


@rule("exposure.blur_over_pixel", "warning",
      trigger=f"travelling wave whose motion during the flash (speed of sound x optical "
              f"duration) exceeds camera.max_blur (default {BLUR_PIXEL_LIMIT:g}) camera "
              "pixels at the object (camera.object_pixel)",
      fix="shorten strobe.pulse_width (blur scales with the optical duration), accept a "
          "coarser camera.object_pixel or a larger camera.max_blur",
      example=("rangefinder-58k", {}))
def blur_over_pixel(plan):
    e = plan.exposure
    if e is None or plan.rig.wave.kind != "travelling" or e.blur_pixels is None:
        return None
    pixel = plan.rig.camera.object_pixel
    limit = plan.rig.camera.max_blur
    width_for_limit = limit * pixel / plan.air.speed_of_sound_m_s
    return Hit(lambda: f"the wave moves {render(e.blur_distance_m, 'length')} "
               f"({e.blur_pixels:.3g} px) during the {render(e.optical_duration_s, 'time')} "
               "flash", value=e.blur_pixels, limit=limit, unit="px",
               hint=lambda: f"an optical duration of at most {render(width_for_limit, 'time')} "
                            f"keeps the blur within {limit:g} px",
               when=~(np.asarray(e.blur_pixels) <= limit))
