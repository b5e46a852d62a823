"""Flash stage: timer edge -> LED current -> light. Delay, edges and optical centroid.

This is the one place the timing core learns how late, how long and how sharp the light
is after the timer edge. Two functions, owned by two domains:

* :func:`edges` - delay from the timer edge to the start of the LED current, and the
  current's rise and fall times (power-stage domain).
* :func:`centroid` - delay of the optical centroid after the current starts, and the length
  of the light pulse (exposure domain).

Foundation model (to be refined by the switching and exposure models): the delay is the
gate driver's propagation delay; the edges are the measured ``gate_driver.rise_time`` /
``fall_time`` when given, else ``led.rise_time``, else zero; the light is the trapezoid
current plus a single-exponential phosphor tail (fraction w, decay tau), whose centroid is
the trapezoid's plus w*tau.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..plan import Section


@dataclass
class FlashSection(Section):
    width_s: float
    delay_s: float
    rise_s: float
    fall_s: float
    edges_source: str
    centroid_s: float
    light_length_s: float


def edges(rig) -> tuple[float, float, float, str]:
    """(delay, rise, fall, source) of the LED current after the timer edge. [s]"""
    gd = rig.gate_driver
    delay = gd.propagation_delay if gd else 0.0
    led_edge = rig.led.rise_time if (rig.led and rig.led.rise_time is not None) else None
    rise = gd.rise_time if (gd and gd.rise_time) else led_edge
    fall = gd.fall_time if (gd and gd.fall_time) else led_edge
    if gd and (gd.rise_time or gd.fall_time):
        source = "measured (gate_driver.rise_time/fall_time)"
    elif led_edge is not None:
        source = "led.rise_time"
    else:
        source = "ideal (no edge data)"
    return delay, rise or 0.0, fall or 0.0, source


def centroid(rig, width: float, rise: float, fall: float) -> tuple[float, float]:
    """(centroid delay after the current starts, length of the light pulse). [s]

    Exposure model (strobeplan.physics.exposure): the slew-limited current (ramp 0->1 over
    ``rise``, fall from t = width at 1/``fall``; cut short at width/rise when the gate is
    shorter than the rise) convolved with the LED response (fast part plus a phosphor
    fraction w with single-exponential decay tau). The centroid is the first moment of that
    optical pulse; the length runs to the end of the current plus 3 tau of phosphor tail
    (95 % of the tail's light).
    """
    from ..physics import exposure as exposure_model

    w = rig.led.phosphor_fraction if rig.led else 0.0
    tau = (rig.led.phosphor_decay or 0.0) if rig.led else 0.0
    if tau == 0.0:
        w = 0.0
    c = float(exposure_model.optical_centroid(width, rise, fall, w, tau))
    peak = min(width / rise, 1.0) if rise > 0 else 1.0
    return c, width + peak * fall + (3 * tau if w > 0 else 0.0)


def build(rig, plan) -> None:
    width = rig.strobe.pulse_width
    delay, rise, fall, source = edges(rig)
    c, length = centroid(rig, width, rise, fall)
    plan.flash = FlashSection(width_s=width, delay_s=delay, rise_s=rise, fall_s=fall,
                              edges_source=source, centroid_s=c, light_length_s=length)
