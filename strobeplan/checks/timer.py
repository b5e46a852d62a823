"""Timer rules: does every count of the plan fit the controller's counters
([controller.timer], strobeplan/timers.py)?"""

from __future__ import annotations

from ..units import render
from .registry import Hit, rule

_NAMES = {"drive": "drive", "flash": "flash", "frame": "camera frame"}


def _fits(plan, how):
    s = plan.timer
    if s is None:
        return []
    return [(n, s._fits[n.counter]) for n in s._needs if s._fits[n.counter].how in how]


@rule("timer.count_overflow", "fault",
      trigger="a counter period of the plan exceeds what the counter can hold even with its "
              "largest prescaler and, when chainable, two chained counters",
      fix="use a wider counter (controller.timer), a slower controller.clock, or a shorter "
          "period (a higher camera.frame_rate, a smaller strobe.every)",
      example=("rangefinder-58k", {"controller.timer": {"profile": "counter8-prescale-pow2"}}))
def count_overflow(plan):
    out = []
    for need, _fit in _fits(plan, ("none",)):
        m = plan.timer._model
        cap = (1 << (m.bits * (2 if m.chainable else 1))) * m.prescaler_max
        out.append(Hit(f"the {_NAMES[need.counter]} period of {need.period:,} ticks does not "
                       f"fit a {m.bits}-bit counter (at most {cap:,} ticks with prescaler "
                       f"{m.prescaler_max}{' and chaining' if m.chainable else ''})",
                       value=need.period, limit=cap, unit="ticks", subject="timer"))
    return out


@rule("timer.prescaler_breaks_lock", "fault",
      trigger="a counter period fits only with a prescaler, and no allowed prescaler divides "
              "it: the prescaled period differs from the plan's, so the counter drifts "
              "against the others and the phase lock is lost",
      fix="chain two counters (controller.timer.chainable), use a wider counter, or choose "
          "a clock or frame rate whose period is a multiple of an allowed prescaler",
      example=("rangefinder-58k", {"camera.frame_rate": "20 Hz",
                                   "controller.timer": {"bits": 16,
                                                        "prescaler_max": 1024,
                                                        "prescaler_power_of_two": True}}))
def prescaler_breaks_lock(plan):
    out = []
    for need, fit in _fits(plan, ("prescaler",)):
        if fit.period_exact:
            continue
        p = fit.prescaler
        realised = round(need.period / p) * p
        ppm = (realised - need.period) / need.period * 1e6
        out.append(Hit(f"the {_NAMES[need.counter]} period of {need.period:,} ticks needs "
                       f"prescaler {p}, which does not divide it: {realised:,} ticks "
                       f"({ppm:+.0f} ppm), so the {_NAMES[need.counter]} slips against "
                       f"the drive", value=need.period, limit=realised, unit="ticks",
                       subject="timer"))
    return out


@rule("timer.prescaler_needed", "warning",
      trigger="a counter period fits only with a prescaler that divides it; compare values "
              "then move in steps of the prescaler, so the phase (or trigger) resolution is "
              "that many times coarser",
      fix="chain two counters (controller.timer.chainable) or use a wider counter to keep "
          "one-tick resolution",
      example=("levitator-40k", {"controller.timer": {"profile": "counter16-prescale16",
                                 "chainable": False}}))
def prescaler_needed(plan):
    out = []
    t = plan.timing
    for need, fit in _fits(plan, ("prescaler",)):
        if not fit.period_exact:
            continue
        p = fit.prescaler
        if need.counter == "frame":
            cost = (f"the camera trigger moves in steps of "
                    f"{render(p * t.tick_s, 'time')}")
        else:
            cost = (f"phase resolution {t.phase_resolution_deg * p:.3g} deg instead of "
                    f"{t.phase_resolution_deg:.3g} deg")
        exact = "" if fit.compares_exact else "; the plan's compare values round to it"
        out.append(Hit(f"the {_NAMES[need.counter]} period of {need.period:,} ticks needs "
                       f"prescaler {p}: {cost}{exact}", value=p, limit=1, unit="1",
                       subject="timer"))
    return out


@rule("timer.counter_chained", "note",
      trigger="a counter period exceeds one counter but fits two chained counters (one "
              "counts the other's overflows): exact, at the cost of one more counter",
      fix="nothing to fix; wire the chain, or use a wider counter to save one",
      example=("rangefinder-58k", {"controller.timer": {"profile": "counter16"}}))
def counter_chained(plan):
    out = []
    for need, _fit in _fits(plan, ("chained",)):
        out.append(Hit(f"the {_NAMES[need.counter]} period of {need.period:,} ticks needs two "
                       f"chained {plan.timer.bits}-bit counters", value=need.period,
                       limit=1 << plan.timer.bits, unit="ticks", subject="timer"))
    return out


@rule("timer.too_few_channels", "fault",
      trigger="a counter needs more compare channels than the timer has (the flash counter "
              "needs two: the flash edge and the gate end; the frame counter two: the camera "
              "trigger and the first flash)",
      fix="use a timer profile with at least two compare channels per counter",
      example=("levitator-40k", {"controller.timer": {"profile": "counter32", "channels": 1}}))
def too_few_channels(plan):
    s = plan.timer
    if s is None or s.channels >= s.channels_needed:
        return None
    return Hit(f"the plan needs {s.channels_needed} compare channels on one counter; the timer "
               f"has {s.channels}", value=s.channels, limit=s.channels_needed, unit="1")


@rule("timer.no_compare_reload", "fault",
      trigger="a sine-weighted PWM drive needs a new duty compare every carrier period, and "
              "the timer cannot reload its compare values per period "
              "(controller.timer.reload_per_period = false)",
      fix="use a timer with shadow compare registers or DMA updates "
          "(reload_per_period = true), or a square drive (remove [emitter.synthesis])",
      example=("levitator-40k", {"controller.timer": {"profile": "counter32",
                                 "reload_per_period": False}}))
def no_compare_reload(plan):
    s = plan.timer
    if s is None or s._model.reload_per_period:
        return None
    if not any(n.reload for n in s._needs):
        return None
    return Hit("the PWM drive needs a new duty compare every carrier period "
               f"({render(plan.timing.carrier_frequency_hz, 'frequency')}) and the timer "
               "cannot reload it per period")


@rule("timer.absolute_ticks_wrap", "note",
      trigger="the schedule's rows count ticks from the start of the run; a 32-bit count of "
              "them wraps after 2^32 ticks",
      fix="keep absolute counts in 64 bits, or run the per-frame counters of "
          "`strobeplan export`, which restart every frame",
      example=("levitator-40k", {"controller.timer": {"profile": "counter32"}}))
def absolute_ticks_wrap(plan):
    s = plan.timer
    if s is None or s.absolute_wrap_s is None:
        return None
    return Hit(f"a 32-bit count of absolute ticks wraps after "
               f"{render(s.absolute_wrap_s, 'time')} (frame {s.absolute_wrap_frame:,})",
               value=s.absolute_wrap_s, unit="s")
