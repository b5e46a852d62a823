"""Flash stage: timer edge -> LED current -> light. Delay, edges and optical centroid.

This is the one place the timing core learns how late, how long and how sharp the light
is after the timer edge. Two functions, owned by two domains:

* :func:`edges` - delay from the timer edge to the start of the LED current, and the
  current's rise and fall times (power-stage domain).
* :func:`centroid` - delay of the optical centroid after the current starts, and the length
  of the light pulse (exposure domain).

Edges (power-stage switching model, see :func:`edges`): the delay is the gate driver's
propagation delay plus the gate-charge turn-on delay; the edges are the gate-charge
estimates, overridden by the measured ``gate_driver.rise_time`` / ``fall_time``; the
light is the trapezoid current plus a single-exponential phosphor tail (fraction w, decay
tau), whose centroid is the trapezoid's plus w*tau.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..plan import Section, q, scalar


@dataclass
class FlashSection(Section):
    width_s: float = q("time")
    width_ticks: int = q("ticks")
    requested_width_s: float = q("time")
    delay_s: float = q("time")
    rise_s: float = q("time")
    fall_s: float = q("time")
    edges_source: str = q()
    centroid_s: float = q("time")
    light_length_s: float = q("time")


def edges(rig) -> tuple[float, float, float, str]:
    """(delay, rise, fall, source) of the LED current after the timer edge. [s]

    Power-stage model (strobeplan.stages.power.gate_edges): the delay is the gate driver's
    propagation delay plus the gate-charge turn-on delay (RC charge of the gate to its
    threshold); the rise and fall are the gate-charge estimates of the drain-current edges,
    overridden by measured ``gate_driver.rise_time`` / ``fall_time``; without a switch and a
    driver, ``led.rise_time`` or ideal edges.
    """
    from .power import gate_edges

    gd = rig.gate_driver
    d_on, _d_off, rise, fall, source = gate_edges(rig)
    if not all(math.isfinite(x) for x in (d_on, rise, fall)):
        # the drive never reaches the plateau (a hazard the power checks report): the edges
        # are undefined, so time the flash as if they were ideal
        d_on, rise, fall = 0.0, 0.0, 0.0
        source = "undefined (gate drive below the plateau); timed as ideal"
    delay = (gd.propagation_delay if gd else 0.0) + d_on
    return delay, rise, fall, source


def centroid(rig, width, rise: float, fall: float):
    """(centroid delay after the current starts, length of the light pulse). [s]

    Exposure model (strobeplan.physics.exposure): the slew-limited current (ramp 0->1 over
    ``rise``, fall from t = width at 1/``fall``; cut short at width/rise when the gate is
    shorter than the rise) convolved with the LED response (fast part plus a phosphor
    fraction w with single-exponential decay tau). The centroid is the first moment of that
    optical pulse; the length runs to the end of the current plus 3 tau of phosphor tail
    (95 % of the tail's light). ``width`` may be an array.
    """
    from ..physics import exposure as exposure_model

    w, tau = phosphor(rig)
    c = exposure_model.optical_centroid(width, rise, fall, w, tau)
    width = np.asarray(width, dtype=float)
    peak = np.minimum(width / rise, 1.0) if rise > 0 else np.ones_like(width)
    length = width + peak * fall + (3 * tau if w > 0 else 0.0)
    return scalar(c), scalar(length)


def phosphor(rig) -> tuple[float, float]:
    """(phosphor fraction, decay) of the LED; no decay time given: the phosphor part is
    as fast as the rest (fraction 0). [1, s]"""
    led = rig.led
    w = led.phosphor_fraction if led is not None else 0.0
    tau = (led.phosphor_decay or 0.0) if led is not None else 0.0
    return (0.0, 0.0) if tau == 0.0 else (w, tau)


def compute(rig, design, plan) -> FlashSection:
    """The flash section for the design's (realised, whole-tick) pulse width."""
    width = design.pulse_width
    delay, rise, fall, source = edges(rig)
    c, length = centroid(rig, width, rise, fall)
    clock = rig.controller.clock
    return FlashSection(width_s=width, width_ticks=scalar(np.rint(np.asarray(width) * clock)
                                                          .astype(np.int64)),
                        requested_width_s=rig.strobe.pulse_width, delay_s=delay, rise_s=rise,
                        fall_s=fall, edges_source=source, centroid_s=c, light_length_s=length)
