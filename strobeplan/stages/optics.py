"""Optics stage: SPL at the view, and whether the schlieren optics will show the wave.

Runs after the exposure stage (it needs the absorption in ``plan.air`` and the retention
in ``plan.exposure``). The SPL at the view is ``emitter.spl_at_view`` when given (a measured
level, e.g. the antinode of a standing wave), else the datasheet estimate: SPL at the
reference distance and voltage, + 20 log10(drive/reference voltage), spherical spreading,
ISO 9613-1 absorption over the path difference and the Butterworth-Van Dyke detuning loss at
the realised drive frequency. Without ``[optics]`` only the acoustic figures are computed.
"""

from __future__ import annotations

import math

from ..physics import acoustics, drive, schlieren
from ..plan import Section, q, scalar
from ..quickdc import dataclass

# Distance from the emitter at which the ultrasound-exposure caution is evaluated. [m]
SAFETY_DISTANCE = 1.0


@dataclass
class OpticsSection(Section):
    """The ``optics`` section: SPL at the view and the schlieren contrast it makes."""

    spl_at_view_db: float = q("dB")
    spl_source: str = q()
    spl_estimate_db: float | None = q("dB")
    spl_at_1m_db: float | None = q("dB")
    detuning_loss_db: float = q("dB")
    pressure_amplitude_pa: float = q("pressure")
    near_field_m: float | None = q("length")
    in_near_field: bool | None = q()
    deflection_rad: float | None = q("rad")
    gladstone_dale: float | None = q("m3/kg", json="gladstone_dale_m3_kg")
    contrast: float | None = q()
    visible_contrast: float | None = q()
    min_contrast: float | None = q()
    saturated: bool | None = q()


def _datasheet_spl(em, frequency, absorption, distance):
    """Datasheet estimate at ``distance`` (None without a complete datasheet rating)."""
    if em.spl_at_reference is None or em.reference_distance is None:
        return None
    ref_v, drive_v = em.reference_voltage, em.drive_voltage
    if ref_v is None or drive_v is None:
        ref_v = drive_v = 1.0  # no voltage correction without both voltages
    h = abs(complex(drive.motional_response(frequency, em.resonance, em.quality_factor)))
    return float(acoustics.spl_at_view(
        em.spl_at_reference, em.reference_distance, ref_v, drive_v, distance, absorption, h,
    ))


def gladstone_dale(rig) -> float:
    """K = (n - 1)/rho of the rig's air at the light's wavelength (Ciddor 1996 moist-air
    index; the one value the optics, the preview and analyse use). [m^3/kg]"""
    from ..physics import refraction

    light = rig.optics.light_wavelength if rig.optics is not None else 630e-9
    a = rig.air
    return float(refraction.gladstone_dale(light, a.temperature, a.pressure,
                                           a.relative_humidity, a.co2 * 1e6))


def compute(rig, design, plan) -> OpticsSection | None:
    """The optics section when the emitter's level is known (the retention, hence the
    visible contrast, follows the design)."""
    em = rig.emitter
    if em is None:
        return None
    f = plan.timing.drive_frequency_hz
    alpha = plan.air.absorption_db_m
    speed = plan.air.speed_of_sound_m_s
    estimate = _datasheet_spl(em, f, alpha, em.distance_to_view)
    how = "datasheet rating, spreading, absorption, detuning"
    fld = getattr(plan, "field", None)
    if fld is not None and fld.spl_at_view_db is not None and math.isfinite(
            fld.spl_at_view_db):
        # The field model: pistons from their ratings, reflectors, absorption, detuning.
        estimate, how = fld.spl_at_view_db, "sound-field model (rated pistons, reflectors)"
    if em.spl_at_view is not None:
        spl, source = em.spl_at_view, "emitter.spl_at_view (given)"
    elif estimate is not None:
        spl, source = estimate, how
    else:
        return None
    at_1m = _datasheet_spl(em, f, alpha, SAFETY_DISTANCE)
    if at_1m is None and rig.wave.kind == "travelling":
        # A measured travelling-wave level extrapolates by spreading and absorption.
        at_1m = float(acoustics.spl_at_distance(spl, em.distance_to_view, SAFETY_DISTANCE,
                                                alpha))
    loss = float(acoustics.detuning_loss_db(
        abs(complex(drive.motional_response(f, em.resonance, em.quality_factor)))))
    p = float(acoustics.pressure_amplitude(spl))
    wavelength = speed / f
    near = float(acoustics.near_field_distance(em.radius, wavelength)) if em.radius else None
    section = OpticsSection(
        spl_at_view_db=float(spl), spl_source=source, spl_estimate_db=estimate,
        spl_at_1m_db=at_1m, detuning_loss_db=loss, pressure_amplitude_pa=p,
        near_field_m=near, in_near_field=(em.distance_to_view < near) if near else None,
        deflection_rad=None, gladstone_dale=None, contrast=None, visible_contrast=None,
        min_contrast=None, saturated=None,
    )
    opt = rig.optics
    if opt is not None:
        rho = schlieren.density_amplitude(p, speed)
        k_gd = gladstone_dale(rig)
        section.gladstone_dale = k_gd
        n1 = schlieren.index_amplitude(rho, k_gd)
        eps = float(schlieren.deflection(opt.passes, opt.sound_path,
                                         schlieren.wavenumber(f, speed), n1))
        contrast = float(schlieren.knife_edge_contrast(opt.cutoff_distance, eps,
                                                       opt.cutoff_opening))
        retention = plan.exposure.retention if plan.exposure is not None else 1.0
        bits = rig.camera.bit_depth if rig.camera is not None else 8
        minimum = opt.min_contrast if opt.min_contrast is not None else \
            float(schlieren.default_min_contrast(bits))
        section.deflection_rad = eps
        section.contrast = contrast
        section.visible_contrast = scalar(schlieren.visible_contrast(contrast, retention))
        section.min_contrast = minimum
        section.saturated = bool(schlieren.saturated(contrast))
    return section
