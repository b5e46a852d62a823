"""Air stage: speed of sound (Cramer 1993) unless the rig gives ``wave.speed``."""

from __future__ import annotations

from dataclasses import dataclass

from ..physics import air as air_model
from ..plan import Section


@dataclass
class AirSection(Section):
    speed_of_sound_m_s: float
    speed_source: str
    temperature_c: float
    relative_humidity: float
    pressure_pa: float


def build(rig, plan) -> None:
    a = rig.air
    if rig.wave.speed is not None:
        speed, source = rig.wave.speed, "wave.speed (given)"
    else:
        speed = float(air_model.speed_of_sound(a.temperature, a.relative_humidity, a.pressure,
                                               a.co2))
        source = "Cramer (1993)"
    plan.air = AirSection(
        speed_of_sound_m_s=speed,
        speed_source=source,
        temperature_c=a.temperature - air_model.ZERO_CELSIUS,
        relative_humidity=a.relative_humidity,
        pressure_pa=a.pressure,
    )
