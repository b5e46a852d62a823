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

import numpy as np

from ..plan import Section, q, scalar
from ..quickdc import dataclass


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
    turn_off_delay_s: float = q("time")
    current_width_s: float = q("time")
    led_rise_s: float = q("time")
    fundamental_delay_s: float = q("time")


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


def gate_delays(rig) -> tuple[float, float]:
    """(turn-on, turn-off) delays of the switch's current behind the gate edges. [s]

    Zero without a switch and a driver, or when the gate-charge model has no finite answer.
    """
    from .power import gate_edges

    d_on, d_off = gate_edges(rig)[:2]
    if not (math.isfinite(d_on) and math.isfinite(d_off)):
        return 0.0, 0.0
    return d_on, d_off


def led_rise(rig) -> float:
    """The LED's own optical rise time, applied on top of the current's edges. [s]

    With a switch and a driver the current edges come from the gate-charge model and the
    LED's ``rise_time`` adds to them (a pole); without them ``rise_time`` already serves
    as the current's edges (:func:`edges`) and is not counted twice.
    """
    led = rig.led
    if led is None or led.rise_time is None:
        return 0.0
    if rig.switch is not None and rig.gate_driver is not None:
        return led.rise_time
    return 0.0


def compute(rig, design, plan) -> FlashSection:
    """The light pulse after the timer edge, for the design's (whole-tick) gate width: the
    current flows from the driver's propagation plus the gate's turn-on delay until the gate
    closes plus its turn-off delay, with its switching edges; the LED adds its rise and
    phosphor tail. The flash is timed by the pulse's Fourier component at the wave
    frequency (``fundamental_delay_s``, from the timer edge), which is what the image
    shows. ``width`` may be an array (every figure then follows it)."""
    from ..physics import exposure as exposure_model

    width = np.asarray(design.pulse_width, dtype=float)
    delay, rise, fall, source = edges(rig)
    d_on, d_off = gate_delays(rig)
    current = np.maximum(width + d_off - d_on, 0.0)
    t_led = led_rise(rig)
    c, length = centroid(rig, current, rise, fall)
    c = np.asarray(c) + t_led / exposure_model.LN9
    length = np.asarray(length) + 3.0 * t_led / exposure_model.LN9
    w, tau = phosphor(rig)
    fundamental = np.asarray(exposure_model.fundamental_delay(
        rig.wave.frequency, current, rise, fall, w, tau, t_led, delay), dtype=float)
    fundamental = np.where(np.isfinite(fundamental), fundamental, delay)  # no current: start
    clock = rig.controller.clock
    return FlashSection(
        width_s=scalar(width), width_ticks=scalar(np.rint(width * clock).astype(np.int64)),
        requested_width_s=rig.strobe.pulse_width, delay_s=delay, rise_s=rise, fall_s=fall,
        edges_source=source, centroid_s=scalar(c), light_length_s=scalar(length),
        turn_off_delay_s=d_off, current_width_s=scalar(current), led_rise_s=t_led,
        fundamental_delay_s=scalar(fundamental))
