"""Timer export: the plan's counters, compare values and per-frame table, in counts.

:func:`build_export` turns a solved plan into an :class:`Export` (pure data); the renderers
in ``report/export.py`` write it as a C header or JSON. The words are the model's own
(strobeplan/stages/timer.py): every counter has a *prescaler* (clock divider), a *period*
and *compare* values, counted in ticks of the controller clock divided by the prescaler;
a *repetition* is how many times something happens (carrier periods per drive cycle,
flashes per frame). Chained counters hold values of up to twice the counter's bits: the
value is high * 2**bits + low.

Run model (all counters start together at tick 0 of the controller clock):

* drive counter: ``period`` counts; square drive: the output is high from 0 to the compare;
  PWM: one duty compare per carrier period from the table, ``repetition`` carrier periods
  per drive cycle;
* flash counter: when it reaches the frame's flash compare and a flash is enabled, the gate
  opens; it closes ``gate width`` counts later (compare = flash compare + width, modulo the
  period);
* frame counter: at 0 the next table row is loaded (the table repeats); at the trigger
  compare the camera trigger fires; at the enable compare ``repetition`` flashes are
  enabled (each flash compare match then fires one). ``continuous``: every match fires.
"""

from __future__ import annotations

import math
from dataclasses import field

from .quickdc import dataclass
from .stages.timer import assess, gate_ticks, sine_duty_table, timer_model


@dataclass(frozen=True)
class Value:
    """One constant: its counts and the comment that says what it realises."""

    counts: int
    comment: str


@dataclass
class CounterConfig:
    name: str
    role: str
    prescaler: int
    chained: bool
    fit: str
    period: Value
    values: dict = field(default_factory=dict)  # name -> Value (single constants)
    table: list = field(default_factory=list)  # list[Value] (drive: the duty table)


@dataclass(frozen=True)
class FrameRow:
    flash_compare: Value
    trigger_compare: Value
    enable_compare: Value
    repetition: Value


@dataclass
class Export:
    rig: str
    clock_hz: float
    timer: object
    timer_given: bool
    mode: str
    continuous: bool
    trigger: bool
    exact: bool
    counters: dict
    frames: list
    notes: list


def _r(x: float, kind: str) -> str:
    from .units import render

    return render(x, kind)


def _counts(ticks: int, prescaler: int, down: bool = False) -> int:
    return ticks // prescaler if down else int(round(ticks / prescaler))


def build_export(plan) -> Export:
    """The counters and the per-frame table of a solved plan (see the module docstring)."""
    from .solve import build_schedule
    from .timing import MAX_ROWS, continuous_train

    rig, t, drive = plan.rig, plan.timing, plan.drive
    clock = rig.controller.clock
    tick = 1.0 / clock
    model = timer_model(rig)
    sec = assess(rig, plan, model)
    fits = sec._fits
    pf, ff0 = t.flash_period_ticks, t.frame_period_ticks
    cycle = None
    if t.mode == "slow_motion" and ff0:
        # the free-running flash and frame counters line up again after pf / gcd(ff, pf)
        # frames: a table of that many rows repeats exactly
        cycle = pf // math.gcd(ff0 % pf, pf) if ff0 % pf else 1
        sched = build_schedule(plan, steps=min(cycle, MAX_ROWS))
    else:
        sched = build_schedule(plan)
    exact = all(f.how in ("direct", "chained") for f in fits.values())
    counters: dict[str, CounterConfig] = {}

    # drive
    f = fits["drive"]
    p = f.prescaler
    if drive is not None and drive.waveform == "pwm":
        nc, m = drive.carrier_period_ticks, drive.carrier_periods_per_cycle
        c = CounterConfig("drive", "PWM carrier; one duty compare per carrier period", p,
                          f.chained, f.how, Value(_counts(nc, p),
                                                  f"carrier period [counts]: {nc} ticks, "
                                                  f"{_r(clock / nc, 'frequency')} carrier"))
        c.values["repetition"] = Value(m, f"carrier periods per drive cycle: drive "
                                          f"{_r(t.drive_frequency_hz, 'frequency')} "
                                          f"({t.drive_frequency_error_ppm:+.1f} ppm)")
        for i, d in enumerate(sine_duty_table(nc, m)):
            c.table.append(Value(_counts(d, p), f"carrier period {i}: duty "
                                                f"{100.0 * d / nc:.1f} %"))
    else:
        nd = t.drive_period_ticks
        c = CounterConfig("drive", "square drive", p, f.chained, f.how,
                          Value(_counts(nd, p), f"drive period [counts]: {nd} ticks, "
                                                f"{_r(t.drive_frequency_hz, 'frequency')} "
                                                f"({t.drive_frequency_error_ppm:+.1f} ppm)"))
        c.values["repetition"] = Value(1, "drive cycles per period")
        c.table.append(Value(_counts(nd // 2, p), f"falling edge [counts]: {nd // 2} ticks "
                                                  f"({_r(nd // 2 * tick, 'time')})"))
    counters["drive"] = c

    # flash
    f = fits["flash"]
    p = f.prescaler
    pf = t.flash_period_ticks
    w = gate_ticks(rig.strobe.pulse_width, clock)
    c = CounterConfig("flash", "flash edge and gate end", p, f.chained, f.how,
                      Value(_counts(pf, p), f"flash period [counts]: {pf} ticks, "
                                            f"{_r(pf * tick, 'time')}, flash rate "
                                            f"{_r(clock / pf, 'frequency')}"))
    c.values["gate_width"] = Value(max(1, _counts(w, p)),
                                   f"gate-on [counts]: {w} ticks = {_r(w * tick, 'time')} "
                                   f"(asked {_r(rig.strobe.pulse_width, 'time')})")
    counters["flash"] = c

    # frame
    triggered = t.frame_period_ticks is not None
    ff = t.frame_period_ticks or sched.frame_period_ticks or pf
    f = fits.get("frame") or fits["flash"]
    p = f.prescaler
    what = (f"frame period [counts]: {ff} ticks, {_r(ff * tick, 'time')}, "
            f"{_r(clock / ff, 'frequency')}" if triggered else
            f"table period [counts]: {ff} ticks (no triggered camera: one row per flash "
            f"period)")
    counters["frame"] = CounterConfig("frame", "camera trigger and flash enable", p, f.chained,
                                      f.how, Value(_counts(ff, p), what))

    continuous = continuous_train(rig)
    pe = counters["flash"].prescaler
    frames = []
    for k, row in enumerate(sched.rows):
        start = k * ff
        edge = (t.flash_edge_ticks % pf) if t.mode == "slow_motion" else row.edge_ticks % pf
        trig = row.camera_trigger_ticks - start
        first = (row.first_flash_ticks - start) if row.first_flash_ticks is not None else 0
        n = row.flashes or 0
        frames.append(FrameRow(
            Value(_counts(edge, pe), f"frame {k}: edge {edge} ticks = "
                                     f"{_r(edge * tick, 'time')}: phase "
                                     f"{row.achieved_phase_deg:.2f} deg (target "
                                     f"{row.target_phase_deg:.2f} deg)"),
            Value(_counts(trig, p, down=True), f"frame {k}: trigger {trig} ticks = "
                                               f"{_r(trig * tick, 'time')} after frame start"
                  if triggered else f"frame {k}: no trigger output"),
            Value(_counts(first, p, down=True), f"frame {k}: first flash enabled at {first} "
                                                f"ticks = {_r(first * tick, 'time')}"),
            Value(n if triggered else 0, f"frame {k}: {n} flashes in the exposure"
                  if triggered else f"frame {k}: continuous train"),
        ))
    notes = []
    late = [k for k, r in enumerate(frames)
            if triggered and max(r.trigger_compare.counts, r.enable_compare.counts)
            >= counters["frame"].period.counts]
    if late:
        exact = False
        notes.append(f"frame {late[0]}: the trigger or the first flash falls after the "
                     f"frame's end (trigger latency and exposure longer than the frame "
                     f"period); a frame counter cannot hold that compare")
    if not exact:
        notes.append("a prescaler rounds some values: the realised ticks differ from the "
                     "plan's by less than one prescaled count")
    if rig.controller.timer is None:
        notes.append(f"no [controller.timer] in the rig: the {model.name} profile is assumed")
    if cycle is not None:
        if cycle <= MAX_ROWS:
            notes.append(f"slow motion: the flash and frame counters line up again every "
                         f"{cycle} frames; the table covers them and repeats exactly")
        else:
            notes.append(f"slow motion: the counters line up again only every {cycle} "
                         f"frames; the table holds the first {MAX_ROWS}, and repeated it is "
                         f"off by {(MAX_ROWS * ff) % pf} ticks per repeat")
    if triggered is False and rig.camera is not None:
        notes.append("free-running camera: the LED flashes continuously; no trigger output")
    return Export(rig=rig.name, clock_hz=clock, timer=model,
                  timer_given=rig.controller.timer is not None, mode=t.mode,
                  continuous=continuous or not triggered, trigger=triggered, exact=exact,
                  counters=counters, frames=frames, notes=notes)


def max_value(exp: Export) -> int:
    """Largest count in the export (chooses 32- or 64-bit types)."""
    vals = []
    for c in exp.counters.values():
        vals += [c.period.counts, *(v.counts for v in c.values.values()),
                 *(v.counts for v in c.table)]
    for r in exp.frames:
        vals += [r.flash_compare.counts, r.trigger_compare.counts, r.enable_compare.counts,
                 r.repetition.counts]
    return max(vals)


__all__ = ["Export", "build_export", "max_value"]
