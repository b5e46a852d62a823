"""Optics rules: will the schlieren show the wave; near field; ultrasound exposure."""

from __future__ import annotations

import math

import numpy as np

from ..units import render
from .registry import Hit, rule

# One-third-octave bands with nominal centres 25 to 50 kHz, where the occupational consensus
# limit is 110 dB. IEC 61260-1 base-10 bands: exact centres 1000 * 10^(k/10) Hz (k = 14 is
# "25 kHz", k = 17 is "50 kHz"), edges at centre * 10^(+-1/20): 22.39 kHz to 56.23 kHz.
ULTRASOUND_BAND = (1000.0 * 10 ** (1.4 - 0.05), 1000.0 * 10 ** (1.7 + 0.05))
ULTRASOUND_LIMIT_DB = 110.0
ULTRASOUND_SOURCE = ("Howard, Hansen & Zander 2004, J. Occup. Health Safety - Aust. NZ 21(3): "
                     "occupational consensus 110 dB in the 25-50 kHz one-third-octave bands")


@rule("optics.not_visible", "fault",
      trigger="without a camera sensor model (image.snr_low decides then): the schlieren "
              "contrast times the flash's retention is below optics.min_contrast "
              "(default two grey levels at half scale, 2 / 2^(bits - 1), common practice)",
      fix="raise the SPL at the view (drive voltage), lengthen the sound path, use a longer "
          "cutoff_distance or a smaller cutoff_opening (cut more of the source image)",
      example=("rangefinder-58k", {"emitter.drive_voltage": "2 V", "camera.full_well": None}))
def not_visible(plan):
    o = plan.optics
    if o is None or o.visible_contrast is None:
        return None
    if plan.image is not None and plan.image.snr is not None:
        return None  # the SNR of the modelled camera decides (image.snr_low)

    def hint():
        factor = o.min_contrast / o.visible_contrast if o.visible_contrast > 0 else math.inf
        opening = plan.rig.optics.cutoff_opening / factor
        return (f"gain x{factor:.3g}: e.g. cutoff_opening {render(opening, 'length')}, or "
                f"+{20 * _log10(factor):.1f} dB at the view")

    return Hit(lambda: f"the wave's image contrast would be {o.visible_contrast:.3g} (optics "
               f"{abs(o.contrast):.3g} at {o.spl_at_view_db:.1f} dB, retention "
               f"{plan.exposure.retention:.3g}); the camera needs {o.min_contrast:.3g}",
               value=o.visible_contrast, limit=o.min_contrast, unit="1", hint=hint,
               when=~(np.asarray(o.visible_contrast) >= o.min_contrast))


def _log10(x: float) -> float:
    return math.log10(x) if 0 < x < math.inf else math.inf


@rule("optics.saturated", "warning",
      trigger="the knife-edge contrast reaches 1: the source image moves wholly on or off the "
              "edge, so the image clips and no longer scales with the pressure",
      fix="widen optics.cutoff_opening, shorten the cutoff_distance or lower the drive",
      example=("levitator-40k", {"optics.cutoff_opening": "20 um"}))
def saturated(plan):
    o = plan.optics
    if o is None or not o.saturated:
        return None
    return Hit(lambda: f"knife-edge contrast {abs(o.contrast):.3g} at {o.spl_at_view_db:.1f} dB: "
                       f"the "
               "image saturates", value=abs(o.contrast), limit=1.0, unit="1",
               hint=lambda: f"widen optics.cutoff_opening to at least "
                    f"{render(plan.rig.optics.cutoff_opening * abs(o.contrast), 'length')}")


@rule("optics.near_field", "note",
      trigger="emitter.radius is given and the view is nearer than the near-field length "
              "radius^2 / wavelength: the far-field SPL estimate does not hold there",
      fix="measure the level at the view and give it as emitter.spl_at_view, or image beyond "
          "the near field",
      example=("rangefinder-58k", {"emitter.radius": "40 mm"}))
def near_field(plan):
    o = plan.optics
    if o is None or not o.in_near_field:
        return None
    d = plan.rig.emitter.distance_to_view
    return Hit(lambda: f"the view ({render(d, 'length')}) lies inside the near field "
               f"({render(o.near_field_m, 'length')}); the SPL at the view is uncertain",
               value=d, limit=o.near_field_m, unit="m")


@rule("safety.ultrasound_exposure", "warning",
      trigger="the drive frequency is in the 25-50 kHz one-third-octave bands and the SPL at "
              f"1 m from the emitter exceeds {ULTRASOUND_LIMIT_DB:g} dB ({ULTRASOUND_SOURCE}); "
              "a caution, not a physics limit: local rules decide",
      fix="enclose or shield the emitter, keep people beyond the distance where the level "
          "falls below the limit, or wear hearing protection; follow local regulations",
      example=("unsafe-bench", {}))
def ultrasound_exposure(plan):
    o = plan.optics
    f = plan.timing.drive_frequency_hz
    if o is None or o.spl_at_1m_db is None:
        return None
    if not (ULTRASOUND_BAND[0] <= f <= ULTRASOUND_BAND[1]):
        return None
    if o.spl_at_1m_db <= ULTRASOUND_LIMIT_DB:
        return None
    return Hit(lambda: f"about {o.spl_at_1m_db:.0f} dB at 1 m from the emitter at "
               f"{render(f, 'frequency')}, above the {ULTRASOUND_LIMIT_DB:g} dB occupational "
               "consensus for 25-50 kHz (Howard, Hansen & Zander 2004); a caution: local "
               "rules decide",
               value=o.spl_at_1m_db, limit=ULTRASOUND_LIMIT_DB, unit="dB")
