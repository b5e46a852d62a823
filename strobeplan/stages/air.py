"""Air stage: speed of sound (Cramer 1993) unless the rig gives ``wave.speed``; density of
moist air and ISO 9613-1 absorption at the realised drive frequency. Independent of the
design."""

from __future__ import annotations

from ..physics import air as air_model
from ..plan import Section, q
from ..quickdc import dataclass


@dataclass
class AirSection(Section):
    """The ``air`` section: speed of sound, density, absorption."""

    speed_of_sound_m_s: float = q("m/s")
    speed_source: str = q()
    temperature_k: float = q("temperature", json="temperature_c")
    relative_humidity: float = q("ratio")
    pressure_pa: float = q("pressure")
    density_kg_m3: float = q("kg/m3")
    absorption_db_m: float = q("dB/m")


def compute(rig, design, plan) -> AirSection:
    """The air section (needs nothing earlier; the drive frequency comes from the timer
    synthesis, which depends on the rig alone)."""
    from .timing import drive_frequency

    a = rig.air
    if rig.wave.speed is not None:
        speed, source = rig.wave.speed, "wave.speed (given)"
    else:
        speed = float(air_model.speed_of_sound(a.temperature, a.relative_humidity, a.pressure,
                                               a.co2))
        source = "Cramer (1993)"
    return AirSection(
        speed_of_sound_m_s=speed,
        speed_source=source,
        temperature_k=a.temperature,
        relative_humidity=a.relative_humidity,
        pressure_pa=a.pressure,
        density_kg_m3=float(air_model.density(a.temperature, a.relative_humidity, a.pressure,
                                              a.co2)),
        absorption_db_m=float(air_model.absorption(drive_frequency(rig), a.temperature,
                                                   a.relative_humidity, a.pressure)),
    )
