"""Curves for people: the plan's models sampled over time or frequency, for the plots.

The plots draw; they evaluate no model. Every curve here is computed from a solved plan's
sections with the same physics functions the stages use (the optical pulse of the flash
stage's current, the retention of the exposure stage, the Foster network's periodic steady
state of the power stage's pattern, the cutoff response of the image stage).
"""

from __future__ import annotations

import math

import numpy as np

from .. import timing
from ..errors import RigError


def _need(obj, name: str, what: str):
    section = getattr(obj, name, None)
    if section is None:
        raise RigError(name, None, f"the {what} plot needs the plan's {name} section")
    return section


def pulse_params(plan):
    """(width, rise, fall, phosphor fraction, phosphor decay) of the flash. [s, s, s, 1, s]

    The flash section's current (its real duration: gate plus switch delays) and edges, the
    LED's phosphor: what the exposure stage reads.
    """
    from .flash import phosphor

    flash = _need(plan, "flash", "pulse")
    w, tau = phosphor(plan.rig)
    return flash.current_width_s, flash.rise_s, flash.fall_s, w, tau


def jitter(plan) -> float:
    """Combined RMS timing jitter of the flash: the exposure section's, else the rig's. [s]"""
    from .exposure import jitter_rms

    e = plan.exposure
    if e is not None and getattr(e, "jitter_rms_s", None) is not None:
        return float(e.jitter_rms_s)
    return jitter_rms(plan.rig)


def drive_period_curves(plan, n: int = 2001) -> dict[str, np.ndarray]:
    """Curves over one drive period centred on the optical centroid: drive, wave at the
    view, optical pulse (all [1]); times from the start of a drive period."""
    from ..physics import exposure as ex

    t, fl = plan.timing, plan.flash
    f = t.drive_frequency_hz
    period = t.drive_period_ticks * t.tick_s
    centre = math.fmod(t.flash_edge_s + t.flash_delay_s, period)
    time = np.linspace(centre - period / 2, centre + period / 2, n)
    phase = 2.0 * np.pi * f * time
    waveform = plan.drive.waveform if plan.drive is not None else "square"
    if waveform == "square":
        drive = np.where(np.mod(phase, 2 * np.pi) < np.pi, 1.0, -1.0)
    else:  # sine-weighted PWM: its reference (the fundamental the filter passes)
        drive = np.sin(phase)
    wave = timing.wave_at_view(time, f, t.chain_delay_s)
    width, rise, fall, w, tau = pulse_params(plan)
    gate_open = np.mod(t.flash_edge_s + fl.delay_s, period)
    since_gate = np.mod(time - gate_open, period)
    light = np.asarray(ex.optical_pulse(since_gate, width, rise, fall, w, tau), dtype=float)
    return {"time": time, "drive": drive, "wave": wave, "light": light, "waveform": waveform}


def retention_curve(plan, frequency):
    """Contrast retention at the given frequencies for the plan's flash (jitter, smear). [1]"""
    from ..physics import exposure as ex

    width, rise, fall, w, tau = pulse_params(plan)
    smear = plan.timing.smear if plan.timing is not None else 1.0
    return ex.retention(frequency, width, rise, fall, w, tau, jitter(plan), smear)


def pulse_curves(plan, time):
    """(LED current, light output, optical centroid) of the flash after the gate opens:
    relative levels [1] at ``time`` [s], and the centroid [s]."""
    from ..physics import exposure as ex

    width, rise, fall, w, tau = pulse_params(plan)
    current = ex.optical_pulse(time, width, rise, fall, 0.0, 0.0)
    light = ex.optical_pulse(time, width, rise, fall, w, tau)
    return current, light, float(ex.optical_centroid(width, rise, fall, w, tau))


def junction_trace(plan, time):
    """Junction temperature in the periodic steady state of the plan's flash pattern.

    Gathers the plan's flash pattern for
    :func:`strobeplan.physics.thermal.periodic_burst_rise` (closed form).

    Parameters
    ----------
    plan : Plan
        A solved plan with ``led`` and ``timing`` sections.
    time : ndarray
        Times after the frame start, within one frame period. [s]

    Returns
    -------
    ndarray
        Junction temperature. [K]
    """
    from ..physics import thermal as th

    led, rig = plan.led, plan.rig
    width = plan.flash.current_width_s
    spacing = led.flash_spacing_s
    n = max(1, int(led.flashes_per_burst))
    frame = led.frame_period_s if led.pattern == "burst" else spacing
    first = first_light(plan) if led.pattern == "burst" else 0.0
    # Closed-form periodic sum: the work does not grow with the flashes per frame.
    rise = th.periodic_burst_rise(time, led.heat_per_pulse_j / width, width, first, spacing,
                                  n, frame, [t.resistance for t in rig.led.thermal],
                                  [t.time_constant for t in rig.led.thermal])
    return rig.led.ambient + rise


def first_light(plan) -> float:
    """Start of the first flash's current after the frame start. [s]"""
    t = plan.timing
    first = t.first_flash_ticks if t.first_flash_ticks is not None else t.flash_edge_ticks
    return first * t.tick_s + plan.flash.delay_s


def image_response(plan, n: int = 401):
    """(deflection, level) of the cutoff response: the mean signal in electrons per pixel per
    frame against a steady deflection, over twice the measuring range each way. [rad, e-]"""
    from ..physics import cutoff as cut_model
    from .image import cutoff_blur

    img, opt = plan.image, plan.rig.optics
    unit = img.electrons_open
    span = 2.0 * max(img.measuring_range_rad, abs(img.deflection_rad or 0.0))
    eps = np.linspace(-span, span, n)
    blur = cutoff_blur(plan.rig)
    t = cut_model.transmission(opt.cutoff_distance * eps, img.source_image_m,
                               opt.cutoff == "rod", opt.cut_fraction, opt.cutoff_width or 0.0,
                               blur)
    return eps, unit * np.asarray(t)
