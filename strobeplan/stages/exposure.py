"""Exposure stage: air density and absorption, then how sharply the flash freezes the wave.

Runs after the timing core (it needs the realised drive frequency and the smear of slow
motion or clock drift).

Definitions used in the section (see strobeplan.physics.exposure for the pulse model):

* ``optical_duration_s`` is the full width at half maximum of the optical pulse;
  ``energy_duration_s`` the shortest time holding 90 % of its light.
* ``retention`` is the temporal MTF at the realised drive frequency: pulse shape (edges and
  phosphor) x Gaussian jitter (controller and gate driver in quadrature) x smear.
  ``retention_by_harmonic`` evaluates pulse and jitter at n f but applies the timing core's
  smear (computed at the fundamental) unchanged; only the fundamental is checked against
  ``strobe.min_retention``.
* ``blur_distance_m`` is c x optical_duration_s for a travelling wave and 0 for a standing
  wave (its pattern does not move; the retention still counts its oscillation).
* ``max_pulse_width_s`` is the widest gate pulse whose retention at the drive frequency
  still meets ``strobe.min_retention``.
"""

from __future__ import annotations

import numpy as np

from ..physics import exposure as model
from ..plan import Section, q, scalar
from ..quickdc import dataclass
from .flash import phosphor


@dataclass
class ExposureSection(Section):
    """Design §4 ``exposure``: how much of the wave's contrast one flash keeps."""

    optical_duration_s: float = q("time")
    energy_duration_s: float | None = q("time")
    centroid_delay_s: float = q("time")
    optical_area_s: float = q("time")
    blur_distance_m: float = q("length")
    blur_pixels: float | None = q("px")
    wavelength_m: float = q("length")
    retention: float = q("1")
    retention_by_harmonic: list[float] | None = q("1")
    pulse_retention: float = q("1")
    phosphor_retention: float = q("1")
    jitter_retention: float = q("1")
    smear: float = q("1")
    jitter_rms_s: float = q("time")
    min_retention: float = q("ratio")
    max_pulse_width_s: float | None = q("time")


def jitter_rms(rig) -> float:
    """Controller and gate-driver jitter combined in quadrature. [s]"""
    gd = rig.gate_driver
    return float(model.combined_jitter(rig.controller.jitter_rms,
                                       gd.jitter_rms if gd is not None else 0.0))


def compute(rig, design, plan) -> ExposureSection:
    """The exposure section; needs ``plan.timing`` (realised frequency, smear) and
    ``plan.flash``. The widest pulse meeting the target and the harmonics are figures for
    people, computed for a scalar design only (None over a grid). A design search's plan
    (``plan.rules_only``) of a standing wave leaves the optical duration and the blur None:
    no rule or search figure reads them then."""
    width = plan.flash.current_width_s  # the current's duration (gate plus switch delays)
    rise, fall = plan.flash.rise_s, plan.flash.fall_s
    w, tau = phosphor(rig)
    f = plan.timing.drive_frequency_hz
    speed = plan.air.speed_of_sound_m_s
    sigma = jitter_rms(rig)
    smear = plan.timing.smear
    target = rig.strobe.min_retention
    retention = scalar(model.retention(f, width, rise, fall, w, tau, sigma, smear))
    travelling = rig.wave.kind == "travelling"
    if plan.rules_only and not travelling:
        # a design search's plan: the sampled FWHM feeds only the blur, which a standing
        # wave has not (and which only exposure.blur_over_pixel reads, for travelling waves)
        duration = blur = None
    else:
        duration = scalar(model.fwhm(width, rise, fall, w, tau))
        blur = scalar(model.blur_distance(speed, duration) if travelling
                      else np.zeros_like(np.asarray(duration, dtype=float)))
    cam = rig.camera
    pixel = cam.object_pixel if cam is not None else None
    by_harmonic = widest = energy = None
    if design.is_scalar:
        harmonics = f * np.arange(1, rig.wave.harmonics + 1)
        by_harmonic = [float(r) for r in
                       model.retention(harmonics, width, rise, fall, w, tau, sigma, smear)]
        retention = by_harmonic[0]  # the same number in both places of the JSON
        widest = float(model.max_pulse_width(f, target, rise, fall, w, tau, sigma, smear))
        widest = widest if np.isfinite(widest) else None
        energy = float(model.energy_duration(width, rise, fall, w, tau, 0.9))
    return ExposureSection(
        optical_duration_s=duration,
        energy_duration_s=energy,
        centroid_delay_s=scalar(model.optical_centroid(width, rise, fall, w, tau)),
        optical_area_s=scalar(model.optical_area(width, rise, fall, w, tau)),
        blur_distance_m=blur,
        blur_pixels=scalar(model.blur_pixels(blur, pixel)) if pixel and blur is not None
        else None,
        wavelength_m=float(model.wavelength(speed, f)),
        retention=retention,
        retention_by_harmonic=by_harmonic,
        pulse_retention=scalar(np.abs(model.pulse_spectrum(f, width, rise, fall, 0.0, 0.0))),
        phosphor_retention=float(abs(model.led_response(f, w, tau))),
        jitter_retention=float(model.jitter_factor(f, sigma)),
        smear=smear,
        jitter_rms_s=sigma,
        min_retention=target,
        max_pulse_width_s=widest,
    )
