"""Exposure stage: air density and absorption, then how sharply the flash freezes the wave.

Runs after the timing core (it needs the realised drive frequency and the smear of slow
motion or clock drift). It extends ``plan.air`` with the moist-air density and the ISO
9613-1 absorption at the drive frequency, and stores ``plan.exposure``.

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

from dataclasses import asdict, dataclass

import numpy as np

from ..physics import air as air_model
from ..physics import exposure as model
from ..plan import Section
from .air import AirSection


@dataclass
class AirPropertiesSection(AirSection):
    """The air section with density and absorption (plan JSON ``air``)."""

    density_kg_m3: float
    absorption_db_m: float


@dataclass
class ExposureSection(Section):
    """Design §4 ``exposure``: how much of the wave's contrast one flash keeps."""

    optical_duration_s: float
    energy_duration_s: float
    centroid_delay_s: float
    optical_area_s: float
    blur_distance_m: float
    blur_pixels: float | None
    wavelength_m: float
    retention: float
    retention_by_harmonic: list[float]
    pulse_retention: float
    phosphor_retention: float
    jitter_retention: float
    smear: float
    jitter_rms_s: float
    min_retention: float
    max_pulse_width_s: float | None


def pulse_parameters(rig, plan) -> tuple[float, float, float, float, float]:
    """(width, rise, fall, phosphor fraction, phosphor decay) of the flash. [s, s, s, 1, s]"""
    led = rig.led
    w = led.phosphor_fraction if led is not None else 0.0
    tau = (led.phosphor_decay or 0.0) if led is not None else 0.0
    if tau == 0.0:
        w = 0.0  # no decay time given: the phosphor part is as fast as the rest
    return rig.strobe.pulse_width, plan.flash.rise_s, plan.flash.fall_s, w, tau


def jitter_rms(rig) -> float:
    """Controller and gate-driver jitter combined in quadrature. [s]"""
    gd = rig.gate_driver
    return float(model.combined_jitter(rig.controller.jitter_rms,
                                       gd.jitter_rms if gd is not None else 0.0))


def build_air(rig, plan) -> None:
    """Replace ``plan.air`` by the section with density and absorption added."""
    a = rig.air
    frequency = plan.timing.drive_frequency_hz
    plan.air = AirPropertiesSection(
        **asdict(plan.air),
        density_kg_m3=float(air_model.density(a.temperature, a.relative_humidity, a.pressure,
                                              a.co2)),
        absorption_db_m=float(air_model.absorption(frequency, a.temperature,
                                                   a.relative_humidity, a.pressure)),
    )


def build(rig, plan) -> None:
    """Store ``plan.exposure`` (and the air extras); needs ``plan.timing``."""
    build_air(rig, plan)
    width, rise, fall, w, tau = pulse_parameters(rig, plan)
    f = plan.timing.drive_frequency_hz
    speed = plan.air.speed_of_sound_m_s
    sigma = jitter_rms(rig)
    smear = float(plan.timing.smear)
    harmonics = f * np.arange(1, rig.wave.harmonics + 1)
    by_harmonic = model.retention(harmonics, width, rise, fall, w, tau, sigma, smear)
    duration = float(model.fwhm(width, rise, fall, w, tau))
    if rig.wave.kind == "travelling":
        blur = float(model.blur_distance(speed, duration))
    else:
        blur = 0.0
    cam = rig.camera
    pixel = cam.object_pixel if cam is not None else None
    target = rig.strobe.min_retention
    widest = float(model.max_pulse_width(f, target, rise, fall, w, tau, sigma, smear))
    plan.exposure = ExposureSection(
        optical_duration_s=duration,
        energy_duration_s=float(model.energy_duration(width, rise, fall, w, tau, 0.9)),
        centroid_delay_s=float(model.optical_centroid(width, rise, fall, w, tau)),
        optical_area_s=float(model.optical_area(width, rise, fall, w, tau)),
        blur_distance_m=blur,
        blur_pixels=float(model.blur_pixels(blur, pixel)) if pixel else None,
        wavelength_m=float(model.wavelength(speed, f)),
        retention=float(by_harmonic[0]),
        retention_by_harmonic=[float(r) for r in by_harmonic],
        pulse_retention=float(abs(model.pulse_spectrum(f, width, rise, fall, 0.0, 0.0))),
        phosphor_retention=float(abs(model.led_response(f, w, tau))),
        jitter_retention=float(model.jitter_factor(f, sigma)),
        smear=smear,
        jitter_rms_s=sigma,
        min_retention=target,
        max_pulse_width_s=widest if np.isfinite(widest) else None,
    )
