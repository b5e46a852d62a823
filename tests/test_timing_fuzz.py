"""Random valid rigs never get an impossible timing plan (the hardening fuzz test).

Mutated bundled examples (hypothesis, derandomized: the same 2,800 rigs on every run; at
least 2,000 of them valid) go through the stages that make the timing (air, flash, trigger
link, timing) and its rules. The invariants are checked here from the rig's own numbers,
independently of the code that places the camera trigger:

* the realised pulse is at least one timer tick;
* the exposure window is never negative in the plan;
* every frame's first flash lies inside that frame, and no camera trigger comes before the
  previous frame's exposure has closed -- unless the plan carries the fault that says so
  (timing.flash_outside_frame, timing.trigger_in_exposure), and then it really is so.

Kept fast (about 4 ms a rig): deadline=None, derandomize=True, no example database.
"""

from __future__ import annotations

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan import timing
from strobeplan.checks import run_checks
from strobeplan.errors import RigError
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from tests.conftest import EXAMPLES, patched

RIGS_PER_TEST = 700  # four tests: 2,800 rigs drawn
MIN_VALID = 500  # per test: at least 2,000 valid rigs in all
FAULTS = {"timing.flash_outside_frame", "timing.trigger_in_exposure"}


def _s(x: float) -> str:
    return f"{x!r} s"


@st.composite
def timing_rig(draw, base: str):
    raw = patched(base, {})
    clock = draw(st.sampled_from([10e6, 16e6, 48e6, 100e6, 250e6, 1e9]))
    f = 40e3 if base != "rangefinder-58k" else 58e3
    every = draw(st.integers(1, 8))
    flash_period = every / f
    tick = 1.0 / clock
    raw["controller"]["clock"] = f"{clock!r} Hz"
    raw["strobe"]["every"] = every
    raw["strobe"]["pulse_width"] = _s(draw(st.floats(0.5, 1.0)) * max(
        tick, draw(st.floats(1e-3, 0.9)) * flash_period))
    raw["strobe"]["phase"] = f"{draw(st.floats(-360, 360))!r} deg"
    raw["strobe"]["calibration_offset"] = _s(draw(st.sampled_from(
        [0.0, 1e-6, -3e-5, 1e-3, 0.37, -0.99, 1.0])))
    cam = raw.setdefault("camera", {"exposure": "1 ms", "frame_rate": "50 Hz"})
    frame_rate = draw(st.floats(1.0, 0.5 * f / every))
    frame = 1.0 / frame_rate
    cam["frame_rate"] = f"{frame_rate!r} Hz"
    exposure = draw(st.floats(0.001, 1.0)) * frame
    cam["exposure"] = _s(exposure)
    cam["trigger_latency"] = _s(draw(st.sampled_from([0.0, 0.1, 0.5, 0.9, 0.99])) * frame)
    if draw(st.booleans()):
        cam["shutter"] = "rolling"
        cam["readout"] = _s(draw(st.floats(0.0, 1.5)) * exposure)
    else:
        cam["shutter"] = "global"
        cam.pop("readout", None)
    mode = draw(st.sampled_from(["frozen", "sweep", "slow"]))
    if mode == "frozen":
        raw.pop("sweep", None)
    elif mode == "sweep":
        raw["sweep"] = {"steps": draw(st.integers(1, 60)),
                        "span": f"{draw(st.floats(1, 360))!r} deg"}
    else:
        # at least frame_rate/100, so a schedule has at most ~100 rows (keeps the test fast)
        top = 0.45 * f / every
        low = min(frame_rate / 100.0, top)
        apparent = draw(st.floats(low, top)) * draw(st.sampled_from([-1.0, 1.0]))
        raw["sweep"] = {"slow_motion": f"{apparent!r} Hz"}
    return raw


def _timing_plan(rig):
    plan = solve(rig, upto="timing")  # the stages the timing needs, not the power stage
    plan.findings = run_checks(plan, only=("timing.",))
    return plan


def _impossible(rig, plan, sched) -> str | None:
    """The first impossible frame, worked out from the rig's own numbers."""
    cam = rig.camera
    clock = rig.controller.clock
    frame = sched.frame_period_ticks
    link_delay = getattr(plan.trigger_link, "delay_to_vih_s", None) or 0.0
    if not math.isfinite(link_delay):
        link_delay = 0.0
    # trigger -> exposure closed (a rolling readout longer than the exposure keeps the
    # sensor busy for the readout)
    readout = cam.readout if cam.shutter == "rolling" else 0.0
    closes = cam.trigger_latency + link_delay + max(cam.exposure, readout)
    rows = sched.rows
    for i, row in enumerate(rows):
        start = row.frame * frame
        if row.first_flash_ticks is not None and not (
                start <= row.first_flash_ticks < start + frame):
            return "timing.flash_outside_frame"
        nxt = rows[i + 1].camera_trigger_ticks if i + 1 < len(rows) else (
            row.camera_trigger_ticks + frame if len(rows) == 1 else None)
        if nxt is not None and nxt < row.camera_trigger_ticks + math.ceil(
                closes * clock - 1e-9):
            return "timing.trigger_in_exposure"
    return None


def _check(raw, seen):
    try:
        rig = rig_from_dict(raw)
    except RigError:
        return
    plan = _timing_plan(rig)
    t = plan.timing
    assert timing.pulse_ticks(rig.strobe.pulse_width, rig.controller.clock) >= 1
    assert t.window_s is not None and t.window_s >= 0.0
    sched = timing.schedule(rig, plan, plan.lock)
    flagged = {f.code for f in plan.findings} & FAULTS
    problem = _impossible(rig, plan, sched)
    if problem is None:
        assert not flagged, (flagged, raw)
    else:
        assert problem in flagged, (problem, flagged, raw)
    seen.append(1)


def _run(base: str):
    seen: list[int] = []

    @settings(max_examples=RIGS_PER_TEST, deadline=None, derandomize=True, database=None,
              suppress_health_check=list(HealthCheck))
    @given(raw=timing_rig(base))
    def inner(raw):
        _check(raw, seen)

    inner()
    assert len(seen) >= MIN_VALID, f"only {len(seen)} valid rigs of {RIGS_PER_TEST}"


def test_fuzz_timing_levitator():
    _run(EXAMPLES[0])


def test_fuzz_timing_rangefinder():
    _run(EXAMPLES[1])


def test_fuzz_timing_unsafe_bench():
    _run(EXAMPLES[2])


def test_fuzz_timing_levitator_again():
    # a second, differently shaped draw of the first example (hypothesis derandomizes by
    # the test's name, so this is a different set of rigs)
    _run(EXAMPLES[0])
