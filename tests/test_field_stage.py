"""The field stage and the rig keys of the sound-field model ([[emitter]], [[reflector]],
[view], strobe.calibration_offset as an angle, air.temperature_range)."""

import math

import numpy as np
import pytest

from strobeplan import solve
from strobeplan.errors import RigError
from strobeplan.physics import air
from strobeplan.rig import rig_from_dict
from tests.conftest import patched

LEVITATOR_REFLECTOR = [{"position": ["0 mm", "0 mm", "64.5 mm"], "normal": [0, 0, -1]}]


def _plan(patch, base="levitator-40k"):
    # The levitator without its reflector unless the patch gives one: a free field.
    return solve(rig_from_dict(patched(base, {"reflector": None, **patch})))


def test_single_emitter_phase_is_the_on_axis_closed_form():
    # Kinsler et al., Fundamentals of Acoustics (4th ed.), sec. 7.4: on the axis of a baffled
    # piston p = rho c U [e^{-jkz} - e^{-jk sqrt(z^2 + a^2)}]; here with the ISO 9613-1 loss
    # as an imaginary part of k, at the rig's air. No reflector, resonance = drive frequency.
    plan = _plan({"emitter.spl_at_view": None, "emitter.resonance": "40 kHz"},
                 "levitator-40k")
    rig = plan.rig
    a, z, f = rig.emitter.radius, rig.emitter.distance_to_view, rig.wave.frequency
    c = plan.air.speed_of_sound_m_s
    alpha = air.absorption(f, rig.air.temperature, rig.air.relative_humidity,
                           rig.air.pressure) * math.log(10) / 20
    k = 2 * math.pi * f / c - 1j * alpha
    p = np.exp(-1j * k * z) - np.exp(-1j * k * math.hypot(z, a))
    assert plan.field.phase_deg == pytest.approx(math.degrees(np.angle(p)), abs=0.05)
    # The far-field radiation lead: the pressure leads the travel-time phase -kz by 70-90
    # deg here (the piston is small: ka = 5.9 at 40 kHz, 8 mm).
    lead = (plan.field.phase_deg + math.degrees(k.real * z)) % 360
    assert 45 < lead < 95


def test_rating_comes_back_at_the_reference_distance():
    # The surface velocity is scaled so the on-axis SPL at the datasheet distance and
    # voltage is the rating (ISO 1683: RMS level re 20 uPa); at resonance, no detuning.
    plan = _plan({"emitter.spl_at_view": None, "emitter.resonance": "40 kHz",
                  "emitter.distance_to_view": "300 mm", "emitter.drive_voltage": "10 V"})
    assert plan.field.spl_at_view_db == pytest.approx(120.0, abs=0.05)
    assert plan.optics.spl_estimate_db == pytest.approx(plan.field.spl_at_view_db)
    louder = _plan({"emitter.spl_at_view": None, "emitter.resonance": "40 kHz",
                    "emitter.distance_to_view": "300 mm", "emitter.drive_voltage": "20 V"})
    assert louder.field.spl_at_view_db - plan.field.spl_at_view_db == pytest.approx(
        20 * math.log10(2), abs=1e-6)  # a linear transducer: pressure proportional to drive


def test_standing_wave_phase_does_not_follow_the_travel_time():
    # With a rigid reflector the pressure between the nodes oscillates in phase (Kinsler et
    # al., ch. 10, standing waves): moving the view by lambda/8 inside a cell moves the phase
    # by little; moving it across a node flips it by 180 deg.
    lam = 343.8 / 40e3
    base = {"reflector": LEVITATOR_REFLECTOR, "emitter.spl_at_view": None}
    p0 = _plan({**base, "emitter.distance_to_view": "60 mm"}).field
    assert p0.image_orders == 1 and p0.sources == 2
    from_wall = 0.0645 - 0.06
    assert lam / 4 < from_wall < 3 * lam / 4  # a cell between two nodes (rigid wall)
    inside = _plan({**base, "emitter.distance_to_view": f"{0.06 + lam / 16} m"}).field
    across = _plan({**base, "emitter.distance_to_view": f"{0.06 - lam / 2} m"}).field
    def diff(a, b):
        return (a - b + 180) % 360 - 180
    assert abs(diff(inside.phase_deg, p0.phase_deg)) < 15
    assert abs(abs(diff(across.phase_deg, p0.phase_deg)) - 180) < 15
    # A travelling wave over the same step moves by the travel phase, 360/8 = 45 deg.
    free = _plan({"emitter.spl_at_view": None, "emitter.distance_to_view": "60 mm"}).field
    free2 = _plan({"emitter.spl_at_view": None,
                   "emitter.distance_to_view": f"{0.06 + lam / 8} m"}).field
    assert abs(diff(free2.phase_deg, free.phase_deg)) > 35
    assert p0.standing_wave_ratio > 3 > free.standing_wave_ratio


def test_view_point_and_several_emitters():
    # Two identical emitters in phase, facing each other across 80 mm: by symmetry the
    # view at the midpoint gets twice the pressure of one (superposition, Kinsler sec. 7.2).
    one = {"emitter.position": ["0 mm", "0 mm", "0 mm"], "emitter.spl_at_view": None}
    raw = patched("levitator-40k", {**one, "reflector": None})
    e1 = raw["emitter"]
    e2 = {**e1, "position": ["0 mm", "0 mm", "80 mm"], "axis": [0, 0, -1]}
    e2.pop("distance_to_view")
    raw["emitter"] = [e1, e2]
    raw["view"] = {"point": ["0 mm", "0 mm", "40 mm"]}
    two = solve(rig_from_dict(raw)).field
    raw["emitter"] = [e1]
    single = solve(rig_from_dict(raw)).field
    assert two.pressure_amplitude_pa == pytest.approx(2 * single.pressure_amplitude_pa,
                                                      rel=1e-5)
    assert two.phase_deg == pytest.approx(single.phase_deg, abs=1e-3)
    # Antiphase drive: the midpoint is a node.
    raw["emitter"] = [e1, {**e2, "phase": "180 deg"}]
    anti = solve(rig_from_dict(raw))
    assert anti.field.pressure_amplitude_pa < 1e-4 * two.pressure_amplitude_pa
    assert anti.field.node_ratio < 0.1


def test_temperature_range_phase():
    # d(phase)/dT through c(T) (Cramer 1993): about -k z / (2 T) per kelvin for a path z.
    plan = _plan({"air.temperature_range": ["15 degC", "25 degC"], "emitter.spl_at_view": None})
    f = plan.field
    assert f.temperature_range_phase_deg == pytest.approx(10 * abs(f.phase_per_kelvin_deg),
                                                          rel=0.05)
    z, lam = 0.06, plan.air.speed_of_sound_m_s / 40e3
    # c ~ sqrt(T): dc/c = dT/2T, d(kz) = -kz dT/(2T) (ideal gas; common practice estimate)
    expected = math.degrees(2 * math.pi * z / lam / (2 * 295.15))
    assert f.phase_per_kelvin_deg == pytest.approx(expected, rel=0.1)


@pytest.mark.parametrize("patch, path", [
    ({"reflector": [{"position": ["0 mm", "0 mm", "64 mm"], "normal": [0, 0, 1]}]},
     "reflector[0].normal"),
    ({"reflector": [{"position": ["0 mm", "0 mm", "-5 mm"], "normal": [0, 0, -1]}]},
     "reflector[0].normal"),
    ({"reflector": [{"position": ["0 mm", "0 mm", "64 mm"]}]}, "reflector[0].normal"),
    ({"view": {"point": ["0 mm", "30 mm"]}}, "view.point"),
    ({"emitter.axis": [0, 0, 0]}, "emitter.axis"),
    ({"emitter.phase": "2 kHz"}, "emitter.phase"),
    ({"strobe.calibration_offset": "3 V"}, "strobe.calibration_offset"),
    ({"air.temperature_range": ["25 degC"]}, "air.temperature_range"),
    ({"emitter.distance_to_view": None}, "emitter.distance_to_view"),
])
def test_bad_field_keys_are_one_line_errors(patch, path):
    with pytest.raises(RigError) as info:
        rig_from_dict(patched("levitator-40k", patch))
    msg = str(info.value)
    assert msg.startswith(path) and "\n" not in msg


def test_calibration_offset_as_angle():
    # 12 deg of a 40 kHz wave is 12/360 of 25 us (definition of phase).
    rig = rig_from_dict(patched("levitator-40k", {"strobe.calibration_offset": "12 deg"}))
    assert rig.strobe.calibration_offset == pytest.approx(12 / 360 / 40e3, rel=1e-12)
    rig = rig_from_dict(patched("levitator-40k", {"strobe.calibration_offset": "-200 ns"}))
    assert rig.strobe.calibration_offset == pytest.approx(-200e-9)


def test_emitter_array_keeps_the_first_as_emitter():
    raw = patched("levitator-40k", {})
    e1 = raw["emitter"]
    raw["emitter"] = [e1, {**e1, "position": ["20 mm", "0 mm", "0 mm"]}]
    rig = rig_from_dict(raw)
    assert rig.emitter is rig.emitters[0] and len(rig.emitters) == 2
    raw["emitter"] = [e1, {**e1, "radius": "x"}]
    with pytest.raises(RigError, match=r"^emitter\[1\]\.radius"):
        rig_from_dict(raw)
