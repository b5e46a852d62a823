"""The image shows the line-of-sight integral, and `analyse` reads back what `preview` drew.

1. `stages.field.view_projection` against the stationary-phase limit: a small source far
   from the view, its field integrated along a long light path through the view, has the
   projection sqrt(2 pi z / k) p(view) exp(-i pi/4) (the e^{-ikr} convention of the field
   model; Born & Wolf, *Principles of Optics*, 7th ed., app. III, the method of stationary
   phase) — the reason the plan's pressure phase at the view is not the image's phase.
2. Round trip: frames drawn by `preview` from the rig's full field model (pistons, the
   reflector's images, the projection, the cutoff, the light budget and the camera noise)
   analysed by `analyse`: the wavelength within 1 %, the phase at the view within 3 deg and
   an injected calibration offset recovered within 2 deg of the wave. The pictures of both
   rigs are curved (a plane pair of waves explains under half of the map), so analyse
   measures them against the field model's own picture: measured 0.00 % and -0.1 deg
   (levitator), -0.4 % and -1.0 deg (opposed pair, seed 5); plain plane-wave measurement
   read +0.8 % and +2.1 % long.
3. A room warmer than planned: frames drawn at 30 degC, analysed with the rig at its own
   temperature, give back the speed of sound at 30 degC (Cramer 1993, the model the plan
   uses) within 0.5 %: the field model's picture is redrawn at the corrected speed.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from strobeplan import solve
from strobeplan.analyse import analyse_frames
from strobeplan.preview import render_preview
from strobeplan.rig import load_rig, rig_from_dict
from strobeplan.stages.field import pressure_at, view_projection
from strobeplan.viewgrid import view_grid
from tests.conftest import example, patched


def test_projection_of_a_far_small_source_is_the_stationary_phase_limit():
    raw = patched("rangefinder-58k", {"view": {
        "point": ["0 mm", "0 mm", "1000 mm"], "centre": ["0 mm", "0 mm", "1000 mm"],
        "width": "50 mm", "height": "50 mm", "depth": "1600 mm", "samples": 4096,
        "light_axis": [1, 0, 0]}})
    raw["emitter"]["radius"] = "0.3 mm"  # a point-like source (ka = 0.3)
    raw["emitter"].pop("distance_to_view", None)
    rig = rig_from_dict(raw)
    plan = solve(rig, checks=False)
    grid = view_grid(rig, plan)
    f, c = rig.wave.frequency, plan.air.speed_of_sound_m_s
    k = 2 * math.pi * f / c
    q, p = view_projection(rig, grid, f, c)
    # the field model's convention: the phase falls by k dz along the axis (e^{-ikr})
    pa = pressure_at(rig, np.array([[0, 0, 1.0], [0, 0, 1.001]]), f)[0]
    assert np.angle(pa[1] / pa[0]) == pytest.approx(-k * 1e-3, rel=1e-6)
    # stationary phase: arg(Q/p) = -45 deg, |Q/p| = sqrt(2 pi z / k) (z = 1 m); the
    # truncation at +-0.8 m and the piston's directivity leave 1 deg and 3 %
    assert math.degrees(np.angle(q / p)) == pytest.approx(-45.0, abs=1.5)
    assert abs(q / p) == pytest.approx(math.sqrt(2 * math.pi * 1.0 / k), rel=0.05)
    # a thin slab of the same field: the projection is the pressure times the depth
    thin = replace(grid, depth_m=1e-3, samples=3)
    q1, p1 = view_projection(rig, thin, f, c)
    assert q1 / p1 == pytest.approx(1e-3, rel=1e-3)


@pytest.fixture(scope="module")
def levitator():
    rig = load_rig(example("levitator-40k"))
    plan = solve(rig)
    pv = render_preview(rig, plan, frames=12, noise=True, seed=3)
    return rig, plan, pv


def _deg(plan, seconds):
    return 360.0 * plan.timing.drive_frequency_hz * seconds


@pytest.mark.slow
@pytest.mark.parametrize("injected_ns", [0.0, 1500.0])
def test_preview_frames_analyse_back(levitator, injected_ns):
    rig, plan, pv = levitator
    # Inject: the real wave arrives `injected` later than planned, i.e. each frame shows the
    # wave at its planned phase minus omega * injected; analyse is told the planned phases.
    shift = _deg(plan, injected_ns * 1e-9)
    told = [p + shift for p in pv.phases_deg]
    a = analyse_frames(rig, pv.frames, told, plan=plan).summary
    wave, view, cal = a["wave"], a["view"], a["calibration"]
    assert wave["kind"] == "standing"
    assert wave["wavelength_m"] == pytest.approx(wave["planned_wavelength_m"], rel=0.01)
    # the image's phase at the view: the projection's phase is accounted for (about -35 deg
    # here); what is left is the local two-wave model's bias near a spreading beam
    assert view["line_of_sight_phase_deg"] == pytest.approx(
        pv.summary["line_of_sight_phase_deg"], abs=0.5)
    # the phase at the view against the plan, less what was injected
    assert view["phase_difference_deg"] == pytest.approx(-_deg(plan, injected_ns * 1e-9),
                                                         abs=3.0)
    # the injected offset comes back (the rig's own offset is 0)
    assert _deg(plan, cal["offset_s"]) == pytest.approx(_deg(plan, injected_ns * 1e-9),
                                                        abs=2.0)


@pytest.mark.slow
def test_opposed_pair_preview_analyses_back():
    # two emitters facing each other, a double-pass layout (the map plus itself shifted)
    rig = load_rig(example("opposed-pair-40k"))
    plan = solve(rig)
    pv = render_preview(rig, plan, frames=12, noise=True, seed=5)
    a = analyse_frames(rig, pv.frames, list(pv.phases_deg), plan=plan).summary
    assert a["wave"]["kind"] == "standing"
    assert abs(a["view"]["phase_difference_deg"]) < 3.0
    # the picture is curved: it is measured against the field model's own picture
    model = a["wave"]["wavelength_model"]
    assert model["applied"] and model["model_explains"] > model["plane_explains"]
    assert a["wave"]["wavelength_m"] == pytest.approx(a["wave"]["planned_wavelength_m"],
                                                      rel=0.01)


@pytest.mark.slow
@pytest.mark.parametrize("name", ["levitator-40k", "opposed-pair-40k"])
def test_a_warmer_room_is_measured_at_its_speed(name):
    from strobeplan.physics import air

    hot = rig_from_dict(patched(name, {"air.temperature": "30 degC"}))
    rig = rig_from_dict(patched(name, {}))
    pv = render_preview(hot, solve(hot), frames=12, noise=True, seed=3)
    w = analyse_frames(rig, pv.frames, list(pv.phases_deg), plan=solve(rig)).summary["wave"]
    a = hot.air
    # Cramer (1993) at 30 degC and the rig's humidity, pressure and CO2 (physics.air)
    c30 = float(air.speed_of_sound(a.temperature, a.relative_humidity, a.pressure, a.co2))
    assert w["speed_of_sound_m_s"] == pytest.approx(c30, rel=0.005)
    assert w["wavelength_model"]["model_speed_m_s"] == pytest.approx(c30, rel=0.005)


def test_the_plan_reports_the_images_phase_like_the_preview():
    # one definition: check's field section, the preview and view_projection agree, and the
    # note says how far the picture's phase is from strobe.phase's
    rig = load_rig(example("levitator-40k"))
    plan = solve(rig)
    grid = view_grid(rig, plan)
    q, p = view_projection(rig, grid, rig.wave.frequency, plan.air.speed_of_sound_m_s)
    assert plan.field.line_of_sight_phase_deg == pytest.approx(
        math.degrees(np.angle(q / p)), abs=1e-9)
    pv = render_preview(rig, plan, frames=2, noise=False, max_pixels=64)
    assert pv.summary["line_of_sight_phase_deg"] == pytest.approx(
        plan.field.line_of_sight_phase_deg, abs=1e-6)
    assert "field.image_phase_differs" in {f.code for f in plan.findings}
    # without a [view] there is no light path to integrate: no figure, no note
    bare = solve(rig.model_copy(update={"view": None}))
    assert bare.field.line_of_sight_phase_deg is None
    assert "field.image_phase_differs" not in {f.code for f in bare.findings}
