"""Timing rules: flashes in the exposure, rolling-shutter window, sweep resolution, clocks."""

from __future__ import annotations

import numpy as np

from ..units import render
from .registry import Hit, rule

# Contrast kept across one exposure below which clock drift or slow motion counts as a
# visible smear: 98 % (common practice: a 2 % loss is about one grey level at 6 bits).
SMEAR_LIMIT = 0.98


@rule("timing.no_flash_in_exposure", "fault",
      trigger="a camera is given and no whole light pulse fits inside the exposure window, "
              "even with the camera trigger placed just before a flash (rolling shutters "
              "are reported as timing.rolling_window_too_short)",
      fix="lengthen camera.exposure to at least the light pulse "
          "(flash.light_length_s), or shorten strobe.pulse_width",
      example=("levitator-40k", {"camera.exposure": "500 ns"}))
def no_flash_in_exposure(plan):
    t, cam = plan.timing, plan.rig.camera
    if cam is None or cam.shutter == "rolling":
        return None
    if plan.banding is not None and plan.banding.free_running:  # banding.* judge it
        return None
    return Hit(lambda: f"the {render(t.window_s, 'time')} exposure is shorter than one light "
               f"pulse ({render(plan.flash.light_length_s, 'time')}): the frame stays dark",
               value=t.window_s, limit=plan.flash.light_length_s, unit="s",
               when=~(np.asarray(t.flashes_per_frame) >= 1))


@rule("timing.rolling_window_too_short", "fault",
      trigger="rolling shutter and exposure - readout is shorter than one light pulse, so "
              "no flash can light every row (a continuous train or a free-running camera is "
              "judged by banding.* instead)",
      fix="lengthen camera.exposure beyond camera.readout by at least one flash period, or "
          "use a global-shutter camera",
      example=("rangefinder-58k", {"camera.readout": "2 ms"}))
def rolling_window_too_short(plan):
    t, cam = plan.timing, plan.rig.camera
    if cam is None or cam.shutter != "rolling":
        return None
    if plan.banding is not None:
        return None
    if cam.readout >= cam.exposure:
        return Hit(lambda: f"the readout ({render(cam.readout, 'time')}) is not shorter than "
                   f"the exposure ({render(cam.exposure, 'time')}): no moment exposes all "
                   "rows together, so every flash bands the image",
                   value=t.window_s, limit=plan.flash.light_length_s, unit="s")
    return Hit(lambda: f"all rows expose together for only {render(t.window_s, 'time')} "
               f"(exposure {render(cam.exposure, 'time')} - readout "
               f"{render(cam.readout, 'time')}); a flash outside it bands the image",
               value=t.window_s, limit=plan.flash.light_length_s, unit="s",
               when=~(np.asarray(t.flashes_per_frame) >= 1))


@rule("timing.phase_step_below_resolution", "warning",
      trigger="a phase-sweep step is finer than the timer's phase resolution "
              "(360 deg x tick x f), so neighbouring frames repeat the same edge",
      fix="use fewer sweep steps, a larger span per step, or a faster controller.clock",
      example=("rangefinder-58k", {"sweep.steps": 1000}))
def phase_step_below_resolution(plan):
    t = plan.timing
    if t.sweep_step_deg is None or t.sweep_step_deg >= t.phase_resolution_deg:
        return None
    return Hit(lambda: f"sweep step {t.sweep_step_deg:.4g} deg is finer than the timer resolution "
               f"{t.phase_resolution_deg:.4g} deg", value=t.sweep_step_deg,
               limit=t.phase_resolution_deg, unit="deg")


@rule("timing.clock_drift_smear", "warning",
      trigger="separate clocks (shared_clock = false) drift far enough within one exposure "
              f"to keep less than {SMEAR_LIMIT:.0%} of the contrast",
      fix="drive the emitter and the strobe from one clock (shared_clock = true), or shorten "
          "the exposure",
      example=("levitator-40k", {"controller.shared_clock": False,
                                 "controller.clock_tolerance": "1000 ppm",
                                 "camera.exposure": "20 ms"}))
def clock_drift_smear(plan):
    t = plan.timing
    if plan.rig.controller.shared_clock or t.drift_per_exposure_deg is None:
        return None
    if t.mode == "slow_motion":
        return None
    return Hit(lambda: f"the clocks drift {t.drift_per_exposure_deg:.3g} deg within one exposure; "
               f"{t.smear:.1%} of the contrast is kept", value=t.smear, limit=SMEAR_LIMIT,
               unit="1", when=~(np.asarray(t.smear) >= SMEAR_LIMIT))


@rule("timing.phase_unlocked", "warning",
      trigger="shared_clock = false: the flash is not locked to the drive, so the frozen "
              "phase wanders from frame to frame at 360 deg x f x tolerance per second",
      fix="derive the emitter drive and the flash timer from one clock, or re-synchronise "
          "on a drive edge every frame",
      example=("levitator-40k", {"controller.shared_clock": False,
                                 "controller.clock_tolerance": "20 ppm"}))
def phase_unlocked(plan):
    t = plan.timing
    if plan.rig.controller.shared_clock:
        return None
    return Hit(lambda: f"the frozen phase can wander by up to {t.clock_drift_deg_per_s:.3g} deg/s "
               "with separate clocks", value=t.clock_drift_deg_per_s, unit="deg/s")


@rule("timing.slow_motion_smear", "warning",
      trigger=f"slow motion advances the phase so fast that the flashes of one exposure keep "
              f"less than {SMEAR_LIMIT:.0%} of the contrast",
      fix="lower sweep.slow_motion, shorten the exposure, or raise strobe.every",
      example=("levitator-40k", {"sweep": {"slow_motion": "300 Hz"}, "strobe.every": 1}))
def slow_motion_smear(plan):
    t = plan.timing
    if t.mode != "slow_motion" or plan.rig.camera is None:
        return None
    return Hit(lambda: f"{t.flashes_per_frame} flashes per frame at "
               f"{360 * t.slow_motion_step_ticks / t.drive_period_ticks:.3g} deg apart keep "
               f"{t.smear:.1%} of the contrast", value=t.smear, limit=SMEAR_LIMIT, unit="1",
               when=~(np.asarray(t.smear) >= SMEAR_LIMIT))


@rule("timing.slow_motion_quantised", "warning",
      trigger="the apparent frequency the timer can realise (an integer tick step per flash) "
              "differs from sweep.slow_motion by more than 5 %",
      fix="use a faster controller.clock or choose an apparent frequency near the reported one",
      example=("levitator-40k", {"sweep": {"slow_motion": "1 Hz"}, "strobe.every": 1}))
def slow_motion_quantised(plan):
    t = plan.timing
    if t.mode != "slow_motion":
        return None
    want = plan.rig.sweep.slow_motion
    return Hit(lambda: f"slow motion realises {render(t.apparent_frequency_hz, 'frequency')} for "
                       f"the "
               f"requested {render(want, 'frequency')}", value=t.apparent_frequency_hz,
               limit=want, unit="Hz",
               when=~(np.abs(np.asarray(t.apparent_frequency_hz) - want) <= 0.05 * abs(want)))


@rule("timing.frame_rate_adjusted", "note",
      trigger="the frame period was rounded to a whole number of flash periods and the "
              "realised frame rate differs from camera.frame_rate by more than 0.1 %",
      fix="pick a frame rate that divides the flash rate, or accept the reported one",
      example=("levitator-40k", {"strobe.every": 7, "camera.frame_rate": "53 Hz"}))
def frame_rate_adjusted(plan):
    t, cam = plan.timing, plan.rig.camera
    if cam is None:
        return None
    return Hit(lambda: f"frames run at {render(t.frame_rate_hz, 'frequency')} (asked "
               f"{render(cam.frame_rate, 'frequency')}) to stay locked to the drive",
               value=t.frame_rate_hz, limit=cam.frame_rate, unit="Hz",
               when=~(np.abs(np.asarray(t.frame_rate_hz) - cam.frame_rate)
                      <= 1e-3 * cam.frame_rate))


_NOT_YET = object()


def _schedule_conflict(plan):
    """The first impossible frame of the plan's schedule (scalar plans only), or None.

    Computed once per plan (two rules read it); the rows are read a block at a time (a
    100,000-step sweep, the most ``sweep.steps`` allows, takes about 0.3 s).
    """
    from ..timing import Lock, schedule, schedule_conflict

    cached = getattr(plan, "_schedule_conflict", _NOT_YET)
    if cached is not _NOT_YET:
        return cached
    lock = getattr(plan, "lock", None)
    found = None
    if isinstance(lock, Lock) and plan.rig.camera is not None and \
            isinstance(lock.flash_ticks, int) and lock.frame_ticks is not None:
        found = schedule_conflict(schedule(plan.rig, plan, lock), lock)
    try:
        plan._schedule_conflict = found
    except AttributeError:
        pass
    return found


@rule("timing.trigger_in_exposure", "fault",
      trigger="a camera trigger of the schedule (frozen, sweep or slow motion) comes before "
              "the previous frame's exposure window has closed",
      fix="shorten camera.exposure or camera.trigger_latency, or lower camera.frame_rate, so "
          "that latency + exposure fits in the frame period less one flash period",
      example=("levitator-40k", {"camera.exposure": "19.97 ms"}))
def trigger_in_exposure(plan):
    found = _schedule_conflict(plan)
    if found is None or found[0] != "trigger_in_exposure":
        return None
    return Hit(found[2], value=found[1], unit="frame")


@rule("timing.flash_outside_frame", "fault",
      trigger="the first flash a frame's exposure sees lies beyond that frame (the trigger "
              "latency and window push it into the next frame)",
      fix="shorten camera.trigger_latency or lower camera.frame_rate",
      example=("levitator-40k", {"camera.trigger_latency": "19.99 ms",
                                 "camera.exposure": "100 us"}))
def flash_outside_frame(plan):
    found = _schedule_conflict(plan)
    if found is None or found[0] != "flash_outside_frame":
        return None
    return Hit(found[2], value=found[1], unit="frame")


@rule("timing.pulse_below_tick", "warning",
      trigger="strobe.pulse_width is shorter than one timer tick; the timer realises one "
              "whole tick (longer than asked)",
      fix="use a faster controller.clock, or a pulse width of at least one tick",
      example=("unsafe-bench", {"controller.clock": "150 kHz", "strobe.pulse_width": "5 us"}))
def pulse_below_tick(plan):

    width = plan.flash.requested_width_s  # the rig's; the design realises whole ticks
    tick = plan.timing.tick_s
    return Hit(lambda: f"the {render(width, 'time')} pulse is shorter than one "
                       f"{render(tick, 'time')} timer tick; the timer gives one tick",
               value=width, limit=tick, unit="s", when=width < tick)


@rule("timing.trigger_jitter_flicker", "warning",
      trigger="camera.trigger_jitter (3 sigma) exceeds the distance from the exposure "
              "window's end to the nearest flash, so some frames hold one flash more or "
              "less than others (a 1/n brightness flicker)",
      fix="shorten or lengthen camera.exposure by half a flash period, or use a camera with "
          "a steadier trigger",
      example=("levitator-40k", {"camera.trigger_jitter": "1 us",
                                 "camera.exposure": "1.003 ms"}))
def trigger_jitter_flicker(plan):
    t, cam = plan.timing, plan.rig.camera
    if cam is None or cam.trigger_jitter <= 0 or t.window_end_margin_s is None:
        return None
    n = t.flashes_per_frame
    margin = np.asarray(t.window_end_margin_s, dtype=float)
    return Hit(lambda: f"the exposure ends {render(t.window_end_margin_s, 'time')} from a "
                       f"flash edge, within 3 sigma of the trigger jitter "
                       f"({render(cam.trigger_jitter, 'time')} RMS): frames flicker by "
                       f"1/{n}", value=t.window_end_margin_s, limit=3.0 * cam.trigger_jitter,
               unit="s", when=margin < 3.0 * cam.trigger_jitter)
