"""Timer stage: which counter and compare channel holds each count of the plan, and whether
it fits the controller's counters (``[controller.timer]``, strobeplan/timers.py).

The plan runs on three counters of the controller clock, all started together at tick 0:

* **drive** - period: the drive period N_d (square drive, compare N_d/2 for the falling
  edge), or the PWM carrier period N_c with one duty compare per carrier period (the
  sine table, repeated ``M`` times per drive cycle; its compare must be reloaded every
  period);
* **flash** - period: the flash period (``every`` x N_d, or plus the slow-motion step);
  compare 1: the flash edge (the gate opens), compare 2: the gate end (edge + width);
* **frame** - period: the camera frame (a whole number of flash periods unless in slow
  motion); compare 1: the camera trigger, compare 2: the first flash enabled in the frame
  (then ``repetition`` flashes fire).

When a period does not fit the counter, two chained counters (no loss) or a prescaler
(compare values move in steps of the prescaler: phase resolution x prescaler) are proposed.
"""

from __future__ import annotations

import math
from dataclasses import field

from ..plan import Section, q
from ..quickdc import dataclass
from ..timers import DEFAULT_PROFILE, PROFILES, Fit, fit_counter, wrap_time
from ..timing import edge_ticks_for_phase, wrap_phase

ABSOLUTE_BITS = 32


@dataclass(frozen=True)
class Need:
    """One counter the plan needs: its period, compare values and channels."""

    counter: str
    period: int
    compares: tuple[int, ...]
    channels: int
    reload: bool
    holds: str


def gate_ticks(pulse_width: float, clock: float) -> int:
    """Gate-on time in whole ticks (at least one). [ticks]"""
    return max(1, int(round(pulse_width * clock)))


def sine_duty_table(carrier_ticks: int, carriers_per_cycle: int) -> tuple[int, ...]:
    """Duty compare for each carrier period of one drive cycle: the sine sampled at the
    start of carrier period i (index 0 at the drive period's start, the rising zero
    crossing), offset to half duty. [ticks]"""
    m, nc = carriers_per_cycle, carrier_ticks
    # half-up rounding (round() would send 62.5 down and 62.500...01 up)
    return tuple(int(math.floor(nc * (1.0 + math.sin(2.0 * math.pi * i / m)) / 2.0 + 0.5))
                 for i in range(m))


def counter_needs(rig, plan, pulse_width: float | None = None) -> list[Need]:
    """The counters the solved plan needs (drive, flash and, with a camera, frame)."""
    t, drive = plan.timing, plan.drive
    clock = rig.controller.clock
    w = gate_ticks(rig.strobe.pulse_width if pulse_width is None else pulse_width, clock)
    out = []
    if drive is not None and drive.waveform == "pwm":
        out.append(Need("drive", drive.carrier_period_ticks,
                        sine_duty_table(drive.carrier_period_ticks,
                                        drive.carrier_periods_per_cycle), 1, True,
                        "carrier period; duty compare per carrier period"))
    else:
        nd = t.drive_period_ticks
        out.append(Need("drive", nd, (nd // 2,), 1, False, "drive period; half-period compare"))
    p = t.flash_period_ticks
    edges = {t.flash_edge_ticks}
    lock = getattr(plan, "lock", None)
    if t.mode == "sweep" and lock is not None:  # every frame's edge of the sweep table
        step = math.radians(t.sweep_step_deg)
        edges |= {edge_ticks_for_phase(wrap_phase(rig.strobe.phase + k * step), lock.frequency,
                                       lock.clock, lock.period_ticks, lock.chain_delay,
                                       lock.flash_delay) for k in range(rig.sweep.steps)}
    compares = sorted({e % p for e in edges} | {(e + w) % p for e in edges})
    out.append(Need("flash", p, tuple(compares), 2, False,
                    "flash period; flash edge and gate end compares"))
    if t.frame_period_ticks is not None:
        fp = t.frame_period_ticks
        first = t.first_flash_ticks if t.first_flash_ticks is not None else 0
        out.append(Need("frame", fp, ((t.camera_trigger_offset_ticks or 0) % fp, first % fp),
                        2, False, "frame period; camera trigger and first-flash compares"))
    return out


def fit_text(fit: Fit) -> str:
    if fit.how == "prescaler":
        return f"prescaler {fit.prescaler}" + (" + chained" if fit.chained else "")
    return {"none": "does not fit"}.get(fit.how, fit.how)


@dataclass
class TimerSection(Section):
    """Counter assignment and feasibility on the controller's timer model."""

    profile: str = q()
    bits: int = q()
    prescaler_max: int = q()
    channels: int = q()
    counters_needed: int = q()
    channels_needed: int = q()
    drive_counter: str = q()
    drive_prescaler: int = q()
    flash_counter: str = q()
    flash_prescaler: int = q()
    frame_counter: str | None = q()
    frame_prescaler: int | None = q()
    phase_resolution_deg: float = q("deg")
    trigger_resolution_s: float | None = q("time")
    absolute_wrap_s: float | None = q("time")
    absolute_wrap_frame: int | None = q()
    _needs: list = field(default_factory=list, repr=False)
    _fits: dict = field(default_factory=dict, repr=False)
    _model: object = None


def timer_model(rig):
    """The rig's counter model, or the default profile when none is given."""
    tm = rig.controller.timer
    return tm.resolved() if tm is not None else PROFILES[DEFAULT_PROFILE]


def assess(rig, plan, model, pulse_width: float | None = None) -> TimerSection:
    """Fit every counter the plan needs on ``model`` (also used by ``export``)."""
    t = plan.timing
    clock = rig.controller.clock
    needs = counter_needs(rig, plan, pulse_width)
    fits = {n.counter: fit_counter(n.period, n.compares, model) for n in needs}
    frame = fits.get("frame")
    uses_absolute = t.frame_period_ticks is not None or t.mode == "slow_motion"
    wrap = wrap_time(clock, ABSOLUTE_BITS) if uses_absolute else None
    frame_ticks = t.frame_period_ticks or t.flash_period_ticks
    return TimerSection(
        profile=model.name,
        bits=model.bits,
        prescaler_max=model.prescaler_max,
        channels=model.channels,
        counters_needed=sum(2 if f.chained else 1 for f in fits.values()),
        channels_needed=max(n.channels for n in needs),
        drive_counter=fit_text(fits["drive"]),
        drive_prescaler=fits["drive"].prescaler,
        flash_counter=fit_text(fits["flash"]),
        flash_prescaler=fits["flash"].prescaler,
        frame_counter=fit_text(frame) if frame else None,
        frame_prescaler=frame.prescaler if frame else None,
        phase_resolution_deg=t.phase_resolution_deg * fits["flash"].prescaler,
        trigger_resolution_s=frame.prescaler / clock if frame else None,
        absolute_wrap_s=wrap,
        absolute_wrap_frame=(1 << ABSOLUTE_BITS) // frame_ticks if wrap is not None else None,
        _needs=needs, _fits=fits, _model=model,
    )


def compute(rig, design, plan) -> TimerSection | None:
    """The timer section when the rig states ``[controller.timer]`` (else None).

    The counter fits are discrete per design; for an array design (the search) the stage is
    not evaluated and the search verifies its choice through ``check``, which runs it.
    """
    if rig.controller.timer is None or not design.is_scalar:
        return None
    return assess(rig, plan, rig.controller.timer.resolved(), float(design.pulse_width))
