"""The phase-locked timing core: ticks, drive synthesis, chain delay, flash edge, schedules.

Everything a hardware timer needs is an integer number of ticks of the controller clock
(1 tick = 1/clock). The drive period is N_d = M * N_c ticks (M carrier periods of N_c
ticks; M = 1 for a plain square drive). The flash timer runs at exactly ``every`` drive
periods, so the flash is locked to the drive by construction; its compare value (the edge,
in ticks after the drive period starts) places the optical centroid at the requested wave
phase *at the view*, after the drive chain's phase delay and the acoustic travel time.

Phase convention: the drive period starts (tick 0) at the drive's rising zero crossing
(sine table index 0, or the rising edge of a square drive), so the wave at the view is
sin(2 pi f (t - chain delay)); phase 0 deg is its rising zero crossing, 90 deg its crest.

The functions here are pure over floats and ints (no pydantic): :func:`build` is the stage
that reads the rig and stores the ``timing`` and ``drive`` sections on the plan.

References
----------
1. A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed. (2010), §5.1
   (phase delay of a steady sinusoid).
2. Dirichlet kernel: the mean of n unit phasors spaced by delta has magnitude
   |sin(n delta/2) / (n sin(delta/2))| (e.g. Oppenheim & Schafer, §2.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .physics import air as air_model
from .physics import drive as drive_model
from .plan import Section, q, scalar

TWO_PI = 2.0 * math.pi


# --- pure helpers -------------------------------------------------------------------------


CARRIER_TOLERANCE = 0.10  # the carrier may sit this fraction off the requested one [1]


def choose_drive(clock: float, frequency: float, carrier: float | None = None,
                 samples_per_cycle: int | None = None,
                 carrier_tolerance: float = CARRIER_TOLERANCE) -> tuple[int, int]:
    """Integers (M, N_c) whose drive frequency clock/(M N_c) is closest to ``frequency``.

    M (carrier periods per drive cycle) and N_c (ticks per carrier period) are searched
    jointly: every M whose carrier M f can lie within ``carrier_tolerance`` of the requested
    carrier, each with the N_c nearest clock/(M f), keeping the carrier clock/N_c inside the
    tolerance. Ties in frequency go to the carrier closest to the requested one, then to the
    smaller M. When no pair keeps the carrier inside the tolerance (a slow clock), the
    nearest M is used, as with a fixed ``samples_per_cycle``.

    Parameters
    ----------
    clock : float
        Timer clock. [Hz]
    frequency : float
        Requested drive (wave) frequency. [Hz]
    carrier : float, optional
        Requested PWM carrier. [Hz]
    samples_per_cycle : int, optional
        Carrier periods per drive cycle, fixing M.
    carrier_tolerance : float, optional
        Largest relative distance of the realised carrier from ``carrier``. [1]

    Returns
    -------
    (int, int)
        M carrier periods per drive cycle, N_c ticks per carrier period.
    """
    def best_of(ms, bound):
        best = None
        for m in ms:
            n0 = clock / (m * frequency)
            for nc in {max(1, math.floor(n0)), max(1, math.ceil(n0))}:
                c_err = abs(clock / nc - carrier) / carrier if carrier else 0.0
                if c_err > bound:
                    continue
                key = (abs(clock / (m * nc) - frequency) / frequency, c_err, m)
                if best is None or key < best[0]:
                    best = (key, m, nc)
        return best

    if samples_per_cycle:
        found = best_of([int(samples_per_cycle)], math.inf)
    elif carrier:
        m0 = carrier / frequency
        lo = max(1, math.floor(m0 * (1.0 - carrier_tolerance)))
        hi = max(1, math.ceil(m0 * (1.0 + carrier_tolerance)))
        found = best_of(range(lo, hi + 1), carrier_tolerance * (1.0 + 1e-12)) or best_of(
            sorted({max(1, math.floor(m0)), max(1, math.ceil(m0))}), math.inf)
    else:
        found = best_of([1], math.inf)
    assert found is not None
    return found[1], found[2]


def wrap_phase(phase):
    """Phase wrapped to [0, 2 pi). [rad]"""
    return scalar(np.mod(phase, TWO_PI))


def wrap_error(phase):
    """Phase difference wrapped to [-pi, pi). [rad]"""
    return scalar(np.mod(np.asarray(phase) + math.pi, TWO_PI) - math.pi)


def time_of_phase(phase: float, frequency: float, chain_delay: float) -> float:
    """Time after the drive period starts when the wave at the view has ``phase``. [s]

    The first such time at or after the chain delay (phase wrapped to [0, 2 pi)).
    """
    return chain_delay + wrap_phase(phase) / (TWO_PI * frequency)


def wave_at_view(time, frequency: float, chain_delay: float):
    """The wave at the view, sin(2 pi f (t - chain delay)), relative amplitude. [1]

    Parameters
    ----------
    time : float or ndarray
        Time after the drive period starts. [s]
    """
    return np.sin(TWO_PI * frequency * (np.asarray(time, dtype=float) - chain_delay))


def edge_ticks_for_phase(phase: float, frequency: float, clock: float, period_ticks: int,
                         chain_delay: float, flash_delay: float) -> int:
    """Compare value (ticks after the drive period starts) that puts the optical centroid
    at wave phase ``phase`` at the view.

    Parameters
    ----------
    phase : float
        Requested wave phase at the view. [rad]
    frequency : float
        Realised drive frequency. [Hz]
    clock : float
        Timer clock. [Hz]
    period_ticks : int
        Drive period. [ticks]
    chain_delay : float
        Drive edge to wave at the view (filter, amplifier, transducer, travel, calibration). [s]
    flash_delay : float
        Timer edge to optical centroid (driver, switch, LED). [s]
    """
    t_target = time_of_phase(phase, frequency, chain_delay)
    ticks = np.rint((t_target - np.asarray(flash_delay, dtype=float)) * clock).astype(np.int64)
    return scalar(np.mod(ticks, period_ticks))


def phase_of_edge(edge_ticks: int, frequency: float, clock: float, chain_delay: float,
                  flash_delay: float) -> float:
    """Wave phase at the view when the flash of a given edge is seen. [rad]"""
    t_centroid = np.asarray(edge_ticks) / clock + np.asarray(flash_delay, dtype=float)
    return wrap_phase(TWO_PI * frequency * (t_centroid - chain_delay))


def pulse_ticks(width: float, clock: float) -> int:
    """Whole timer ticks a gate pulse of ``width`` is realised as (rounded; 0 means the
    timer cannot produce it).

    Parameters
    ----------
    width : float
        Requested gate-on time. [s]
    clock : float
        Timer clock. [Hz]
    """
    return int(round(width * clock))


def reduce_delay(delay: float, clock: float, period_ticks: int) -> float:
    """``delay`` reduced modulo the drive period, exactly, into [0, period). [s]

    A steady wave repeats every drive period, so only the delay modulo the period moves
    the phase. The reduction is done in exact rational arithmetic (the float ``delay`` and
    ``clock`` are exact binary fractions), so a delay of many periods keeps its fraction
    of a period to the last bit instead of losing it in ``delay * clock``.

    Parameters
    ----------
    delay : float
        Any delay, possibly many periods or negative. [s]
    clock : float
        Timer clock. [Hz]
    period_ticks : int
        Drive period. [ticks]
    """
    from fractions import Fraction

    ticks = Fraction(delay) * Fraction(clock)
    reduced = float((ticks % period_ticks) / Fraction(clock))
    return 0.0 if reduced >= period_ticks / clock else reduced  # a hair below: rounds up


def dirichlet_smear(n, step):
    """Contrast kept when n equal flashes land at phases spaced by ``step`` (Dirichlet).

    Parameters
    ----------
    n : int or ndarray
        Flashes averaged in one image.
    step : float or ndarray
        Phase advance between consecutive flashes. [rad]

    Returns
    -------
    float or ndarray
        |sin(n step/2) / (n sin(step/2))|, 1 for n <= 1 or step = 0. [1]
    """
    n = np.asarray(n, dtype=float)
    half = 0.5 * np.asarray(step, dtype=float)
    den = n * np.sin(half)
    flat = (n <= 1) | (np.abs(np.sin(half)) < 1e-15)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.abs(np.sin(n * half) / np.where(flat, 1.0, den))
    return scalar(np.where(flat, 1.0, ratio))


def phasor_mean(first_phase: float, step: float, n: int) -> tuple[float, float]:
    """Phase and magnitude of the mean of n unit phasors e^{j (first + k step)}, k < n.

    An exposure that holds n flashes at wave phases first, first + step, ... shows the
    wave at the argument of their mean phasor and with its magnitude as the contrast kept
    (the smear). Closed form: e^{j (first + (n - 1) step / 2)} sin(n step/2) / (n sin(step/2)).

    Parameters
    ----------
    first_phase : float
        Phase seen by the first flash. [rad]
    step : float
        Phase advance from one flash to the next. [rad]
    n : int
        Flashes in the exposure (0 or 1: the first flash alone).

    Returns
    -------
    (float, float)
        Phase wrapped to [0, 2 pi) [rad]; magnitude 0..1 [1].

    References
    ----------
    1. Oppenheim & Schafer (2010), sec. 2.7 (the Dirichlet kernel, a geometric sum).
    """
    first = np.asarray(first_phase, dtype=float)
    n = np.asarray(0 if n is None else n, dtype=float)
    half = 0.5 * np.asarray(wrap_error(step), dtype=float)  # a whole turn is no step at all
    s = np.sin(half)
    flat = np.abs(s) < 1e-15
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(flat, 1.0, np.sin(n * half) / np.where(flat, 1.0, n * s))
    centre = first + (n - 1) * half + np.where(ratio < 0, math.pi, 0.0)
    one = n <= 1
    return (wrap_phase(np.where(one, first, centre)),
            scalar(np.where(one, 1.0, np.abs(ratio))))


def flash_step(frequency: float, clock: float, period_ticks: int, flash_ticks: int,
               slow_step: int | None, clock_tolerance: float = 0.0) -> float:
    """Phase advance of the wave seen from one flash to the next. [rad]

    Slow motion adds 2 pi s / N_d per flash; separate clocks slip by the tolerance times
    the flash period (worst case, one sign). Both add, so one phasor sum holds both.
    """
    step = TWO_PI * np.asarray(0 if slow_step is None else slow_step) / period_ticks
    return step + TWO_PI * clock_tolerance * frequency * flash_ticks / clock


def slow_motion_step(apparent: float, clock: float, period_ticks: int, every: int) -> int:
    """Extra ticks s per flash period (every*N_d + s) for an apparent frequency.

    Each flash advances the seen phase by 2 pi s/N_d, at a flash rate clock/(every N_d + s),
    so apparent = s clock / (N_d (every N_d + s)), solved for s and rounded.
    """
    nd = period_ticks
    s = apparent * np.asarray(every) * nd * nd / (clock - apparent * nd)
    return scalar(np.rint(s).astype(np.int64))


def slow_motion_apparent(step_ticks: int, clock: float, period_ticks: int, every: int) -> float:
    """Apparent frequency realised by a slow-motion step of ``step_ticks``. [Hz]"""
    nd = period_ticks
    return scalar(np.asarray(step_ticks) * clock / (nd * (np.asarray(every) * nd + step_ticks)))


def align_camera(edge_ticks: int, spacing_ticks: int, clock: float, light_delay: float,
                 light_length: float, lead: float, window: float) -> tuple[int, int, int]:
    """Place the camera trigger so that its exposure window opens at a flash.

    The flash slots are ``edge + j*spacing`` ticks (j >= 0) after the frame start; the light
    of slot j starts ``light_delay`` later and lasts ``light_length``. The window opens
    ``lead`` after the trigger (trigger latency, plus the readout for a rolling shutter) and
    lasts ``window``. The trigger goes at the latest tick that still opens the window before
    the light of the first slot that can be reached (trigger tick >= 0).

    Returns
    -------
    (int, int, int)
        Trigger offset after the frame start [ticks], flashes whose whole light falls in
        the window, offset of the first of them after the frame start [ticks] (arrays when
        the edge, spacing or light figures are arrays).
    """
    edge_ticks = np.asarray(edge_ticks, dtype=np.int64)
    spacing_ticks = np.asarray(spacing_ticks, dtype=np.int64)
    t_light0 = edge_ticks / clock + light_delay
    dt = spacing_ticks / clock
    j = np.maximum(0, np.ceil((lead - t_light0) / dt - 1e-12)).astype(np.int64)
    t_light = t_light0 + j * dt
    trigger = np.maximum(0, np.floor((t_light - lead) * clock + 1e-9)).astype(np.int64)
    w_start = trigger / clock + lead
    w_end = w_start + window
    n = np.floor((w_end - light_length - t_light) / dt + 1e-9).astype(np.int64) + 1
    n = np.where(w_end - light_length < t_light - 1e-12, 0, n)
    return scalar(trigger), scalar(n), scalar(edge_ticks + j * spacing_ticks)


def continuous_train(rig) -> bool:
    """True when the LED flashes in every slot, not only inside a triggered exposure.

    That is ``strobe.continuous = true``, no camera, or a free-running camera
    (``camera.trigger = "none"``: nothing tells the controller when it exposes).
    """
    cam = rig.camera
    return bool(rig.strobe.continuous) or cam is None or cam.trigger == "none"


def free_running_frame(exposure: float, frame_rate: float, flash_ticks: int,
                       clock: float) -> tuple[float, float, int]:
    """Frame rate, window and flashes per exposure of a free-running camera.

    The camera runs on its own clock, so no frame period is locked to the flashes; each
    exposure (each row, for a rolling shutter) collects the continuous train for its whole
    length: at least floor(exposure / flash period) flash starts.

    Returns
    -------
    (float, float, int)
        Frame rate [Hz], exposure window [s], fewest flash starts in one exposure [1].
    """
    period = np.asarray(flash_ticks) / clock
    return frame_rate, exposure, scalar(np.floor(exposure / period + 1e-9).astype(np.int64))


def trigger_slack(jitter_rms: float, clock: float) -> float:
    """How long before the first flash's light the exposure window opens: 3 sigma of the
    camera's trigger jitter plus one tick (a 3-sigma normal margin keeps 99.87 % of the
    frames from losing the flash). [s]"""
    return 3.0 * jitter_rms + 1.0 / clock


def window_end_margin(trigger: int, n: int, first: int, spacing: int, clock: float,
                      light_delay: float, light_length: float, lead: float,
                      window: float) -> float | None:
    """Distance from the window's end to the nearest light edge: the end of the last flash
    inside or the start of the next one outside. Jitter larger than this can drop or add
    a flash (1/n flicker). None without flashes. [s]"""
    n = np.asarray(0 if n is None else n)
    w_end = np.asarray(trigger) / clock + lead + window
    t0 = np.asarray(first) / clock + light_delay
    dt = np.asarray(spacing) / clock
    last_end = t0 + (n - 1) * dt + light_length
    next_start = t0 + n * dt
    return scalar(np.where(n > 0, np.minimum(w_end - last_end, next_start - w_end), np.nan))


# --- sections -----------------------------------------------------------------------------


@dataclass
class DriveSection(Section):
    """The emitter drive chain at the realised frequency."""

    waveform: str = q()
    carrier_periods_per_cycle: int = q()
    carrier_period_ticks: int = q("ticks")
    pwm_resolution_bits: float | None = q()
    filter_delay_s: float = q("time")
    amplifier_delay_s: float = q("time")
    sample_hold_delay_s: float = q("time")
    transducer_delay_s: float = q("time")
    transducer_phase_deg: float = q("deg")
    detuning_db: float | None = q("dB")
    travel_time_s: float = q("time")
    field_delay_s: float | None = q("time")
    field_phase_deg: float | None = q("deg")
    calibration_offset_s: float = q("time")
    carrier_attenuation_db: float | None = q("dB")


@dataclass
class TimingSection(Section):
    """Timer settings and what they achieve (plan JSON ``timing``)."""

    tick_s: float = q("time")
    drive_frequency_hz: float = q("frequency")
    drive_frequency_error_ppm: float = q("ppm")
    drive_period_ticks: int = q("ticks")
    carrier_frequency_hz: float | None = q("frequency")
    flash_period_ticks: int = q("ticks")
    flash_rate_hz: float = q("frequency")
    chain_delay_s: float = q("time")
    flash_delay_s: float = q("time")
    flash_edge_ticks: int = q("ticks")
    flash_edge_s: float = q("time")
    phase_requested_deg: float = q("deg")
    phase_achieved_deg: float = q("deg")
    phase_error_deg: float = q("deg")
    image_phase_deg: float = q("deg")
    phase_resolution_deg: float = q("deg")
    mode: str = q()
    frame_period_ticks: int | None = q("ticks")
    frame_rate_hz: float | None = q("frequency")
    camera_trigger_offset_ticks: int | None = q("ticks")
    window_start_s: float | None = q("time")
    window_s: float | None = q("time")
    flashes_per_frame: int | None = q()
    first_flash_ticks: int | None = q("ticks")
    trigger_slack_s: float | None = q("time")
    window_end_margin_s: float | None = q("time")
    duty_in_burst: float = q("ratio")
    duty_average: float = q("ratio")
    phase_per_kelvin_deg: float = q("deg/K")
    sweep_step_deg: float | None = q("deg")
    slow_motion_step_ticks: int | None = q("ticks")
    apparent_frequency_hz: float | None = q("frequency")
    clock_drift_deg_per_s: float | None = q("deg/s")
    drift_per_exposure_deg: float | None = q("deg")
    smear: float = q("1")
    _lock: Any = field(default=None, repr=False)  # the schedule's integers (scalar designs)


@dataclass(frozen=True)
class Lock:
    """The integers and delays the schedule needs (internal, not an output section)."""

    clock: float
    frequency: float
    period_ticks: int
    flash_ticks: int
    every: int
    chain_delay: float
    flash_delay: float
    light_delay: float
    light_length: float
    frame_ticks: int | None
    lead: float | None
    window: float | None
    slow_step: int | None
    step: float = 0.0  # wave phase advance from one flash to the next [rad]
    slack: float = 0.0  # the window opens this long before the first flash's light [s]


def _chain(rig, frequency: float, speed: float, field=None) -> tuple[DriveSection, float]:
    """The drive section and the chain delay: filter + amplifier + sample-and-hold +
    transducer + the field's delay from the first emitter's surface velocity to the
    pressure at the view (the travel time d/c when there is no field) + calibration. [s]"""
    em = rig.emitter
    synth = em.synthesis if em else None
    filt = synth.filter if synth else None
    if filt is None:
        phi_f = 0.0
    elif filt.kind == "rc":
        phi_f = float(math.atan2(-frequency / filt.cutoff, 1.0))
    else:
        phi_f = float(drive_model.butterworth_phase(frequency, filt.cutoff, filt.order))
    amp_bw = synth.amplifier_bandwidth if synth else None
    phi_a = float(math.atan2(-frequency / amp_bw, 1.0)) if amp_bw else 0.0
    if em is not None:
        h_t = complex(drive_model.motional_response(frequency, em.resonance, em.quality_factor))
        phi_t = math.atan2(h_t.imag, h_t.real)
        detune = float(drive_model.attenuation_db(h_t))
        travel = em.distance_to_view / speed
    else:
        phi_t, detune, travel = 0.0, None, 0.0
    d_f = float(drive_model.phase_delay(phi_f, frequency))
    d_a = float(drive_model.phase_delay(phi_a, frequency))
    d_t = float(drive_model.phase_delay(phi_t, frequency))
    m, nc = choose_drive(rig.controller.clock, rig.wave.frequency,
                         synth.carrier if synth else None,
                         synth.samples_per_cycle if synth else None)
    offset = rig.strobe.calibration_offset
    if abs(offset) * frequency >= 1.0:  # whole periods only move the phase by 2 pi k
        offset = reduce_delay(offset, rig.controller.clock, m * nc)
    has_field = field is not None and math.isfinite(field.delay_s)
    acoustic = field.delay_s if has_field else travel
    chain = d_f + d_a + d_t + acoustic + offset
    d_sh = float(drive_model.sample_hold_delay(rig.controller.clock / nc)) if synth else 0.0
    chain += d_sh
    carrier_att = None
    if synth is not None:
        fc = rig.controller.clock / nc

        def gain(f):
            g = 1.0
            if filt is not None:
                h = drive_model.rc_response(f, filt.cutoff) if filt.kind == "rc" else \
                    drive_model.butterworth_response(f, filt.cutoff, filt.order)
                g *= abs(complex(h))
            if amp_bw:
                g *= abs(complex(drive_model.single_pole_response(f, amp_bw)))
            return g

        carrier_att = 20.0 * math.log10(gain(frequency) / gain(fc))
    section = DriveSection(
        waveform="pwm" if synth else "square",
        carrier_periods_per_cycle=m,
        carrier_period_ticks=nc,
        pwm_resolution_bits=math.log2(nc) if synth else None,
        filter_delay_s=d_f,
        amplifier_delay_s=d_a,
        sample_hold_delay_s=d_sh,
        transducer_delay_s=d_t,
        transducer_phase_deg=math.degrees(phi_t),
        detuning_db=detune,
        travel_time_s=travel,
        field_delay_s=field.delay_s if has_field else None,
        field_phase_deg=field.phase_deg if has_field else None,
        calibration_offset_s=rig.strobe.calibration_offset,
        carrier_attenuation_db=carrier_att,
    )
    return section, chain


def drive_frequency(rig) -> float:
    """The realised drive frequency clock / (M N_c) of the rig's timer synthesis. [Hz]"""
    synth = rig.emitter.synthesis if rig.emitter else None
    m, nc = choose_drive(rig.controller.clock, rig.wave.frequency,
                         synth.carrier if synth else None,
                         synth.samples_per_cycle if synth else None)
    return rig.controller.clock / (m * nc)


def drive_section(rig, design, plan) -> DriveSection:
    """The drive stage: the emitter drive chain at the realised frequency (needs
    ``plan.air``). Independent of the design."""
    return _chain(rig, drive_frequency(rig), plan.air.speed_of_sound_m_s,
                  getattr(plan, "field", None))[0]


def compute(rig, design, plan) -> TimingSection:
    """Timing stage: the ``timing`` section for the design (pulse width and ``every`` may
    be arrays: every figure then has their broadcast shape).

    Needs ``plan.air`` (speed of sound), ``plan.flash`` (delay to the optical centroid,
    pulse length) and ``plan.trigger_link`` (the divider's delay to the camera's VIH). For a
    scalar design the section carries the :class:`Lock` the schedule needs (``_lock``).
    """
    clock = rig.controller.clock
    strobe = rig.strobe
    synth = rig.emitter.synthesis if rig.emitter else None
    m, nc = choose_drive(clock, rig.wave.frequency, synth.carrier if synth else None,
                         synth.samples_per_cycle if synth else None)
    nd = m * nc
    f = clock / nd
    speed = plan.air.speed_of_sound_m_s
    _drive, chain = _chain(rig, f, speed, getattr(plan, "field", None))
    # the flash is placed by what the image shows (the pulse's fundamental), not its centroid
    flash_delay = np.asarray(plan.flash.fundamental_delay_s, dtype=float)
    light_length = np.asarray(plan.flash.light_length_s, dtype=float)
    light_delay = plan.flash.delay_s
    every = np.asarray(design.every, dtype=np.int64)
    width = np.asarray(design.pulse_width, dtype=float)
    flash_ticks = every * nd
    edge = np.asarray(edge_ticks_for_phase(strobe.phase, f, clock, nd, chain, flash_delay))
    achieved = np.asarray(phase_of_edge(edge, f, clock, chain, flash_delay))
    err = np.asarray(wrap_error(achieved - wrap_phase(strobe.phase)))

    sweep = rig.sweep
    slow_step = None
    apparent = None
    mode = "frozen"
    sweep_step = None
    if sweep is not None and sweep.slow_motion is not None:
        mode = "slow_motion"
        slow_step = np.asarray(slow_motion_step(sweep.slow_motion, clock, nd, every))
        slow_step = np.where(slow_step == 0, 1 if sweep.slow_motion > 0 else -1, slow_step)
        apparent = slow_motion_apparent(slow_step, clock, nd, every)
        flash_ticks = every * nd + slow_step
    elif sweep is not None:
        mode = "sweep"
        sweep_step = (sweep.span or TWO_PI) / sweep.steps

    cam = rig.camera
    slack, end_margin = 0.0, None
    frame_ticks = lead = window = trigger = slack = end_margin = None
    n_frame = first = None
    frame_rate = None
    if cam is not None:
        if mode == "slow_motion":
            frame_ticks = np.broadcast_to(max(1, round(clock / cam.frame_rate)),
                                          np.shape(flash_ticks))
        else:
            frame_ticks = np.maximum(1, np.rint(clock / cam.frame_rate / flash_ticks)
                                     ).astype(np.int64) * flash_ticks
        frame_rate = clock / frame_ticks
        readout = cam.readout if cam.shutter == "rolling" else 0.0
        # The divider's edge reaches the camera's VIH late (worst case): the exposure opens
        # that much later, so the trigger goes that much earlier.
        link = getattr(plan, "trigger_link", None)
        link_delay = getattr(link, "delay_to_vih_s", None)
        if link_delay is None or not math.isfinite(link_delay):
            link_delay = 0.0  # never reaches VIH: trigger_link.below_vih says so
        lead = cam.trigger_latency + readout + link_delay
        window = max(cam.exposure - readout, 0.0)  # a readout beyond the exposure: none
        slack = trigger_slack(cam.trigger_jitter, clock)
        trigger, n_frame, first = (np.asarray(x) for x in align_camera(
            edge, flash_ticks, clock, light_delay - slack, light_length + slack, lead, window))
        end_margin = window_end_margin(trigger, n_frame, first, flash_ticks, clock,
                                       light_delay, light_length, lead, window)
        if cam.trigger == "none":  # free-running: no trigger, no frame lock
            frame_ticks = lead = trigger = first = end_margin = None
            frame_rate, window, n_frame = free_running_frame(cam.exposure, cam.frame_rate,
                                                             flash_ticks, clock)
            n_frame = np.asarray(n_frame)
    duty_burst = width / (flash_ticks / clock)
    if not continuous_train(rig):
        duty_avg = n_frame * width * frame_rate
    else:
        duty_avg = duty_burst

    # Separate clocks: the strobe timer slips against the drive by tol per unit time.
    drift_rate = drift_exp = None
    if not rig.controller.shared_clock:
        drift_rate = 360.0 * f * rig.controller.clock_tolerance
        if cam is not None:
            drift_exp = drift_rate * cam.exposure
    step = flash_step(f, clock, nd, flash_ticks, slow_step, rig.controller.clock_tolerance
                      if not rig.controller.shared_clock else 0.0)
    if cam is not None:
        image_phase, smear = phasor_mean(achieved, step, n_frame)
    else:
        image_phase, smear = achieved, 1.0
    smear = np.broadcast_to(smear, np.broadcast_shapes(np.shape(width), np.shape(every),
                                                       np.shape(smear))) + 0.0

    field = getattr(plan, "field", None)
    if field is not None:
        per_k = field.phase_per_kelvin_deg
    elif rig.emitter is not None and rig.wave.speed is None:
        # d(phase)/dT = w d/c^2 dc/dT (travel time only, without a field model).
        a = rig.air
        dc_dt = (air_model.speed_of_sound(a.temperature + 0.5, a.relative_humidity, a.pressure,
                                          a.co2)
                 - air_model.speed_of_sound(a.temperature - 0.5, a.relative_humidity,
                                            a.pressure, a.co2))
        per_k = math.degrees(TWO_PI * f * rig.emitter.distance_to_view / speed**2 * dc_dt)
    else:
        per_k = 0.0

    section = TimingSection(
        tick_s=1.0 / clock,
        drive_frequency_hz=f,
        drive_frequency_error_ppm=(f - rig.wave.frequency) / rig.wave.frequency * 1e6,
        drive_period_ticks=nd,
        carrier_frequency_hz=clock / nc if synth else None,
        flash_period_ticks=scalar(flash_ticks),
        flash_rate_hz=scalar(clock / flash_ticks),
        chain_delay_s=chain,
        flash_delay_s=scalar(flash_delay),
        flash_edge_ticks=scalar(edge),
        flash_edge_s=scalar(edge / clock),
        phase_requested_deg=math.degrees(wrap_phase(strobe.phase)),
        phase_achieved_deg=scalar(np.degrees(achieved)),
        phase_error_deg=scalar(np.degrees(err)),
        image_phase_deg=scalar(np.degrees(image_phase)),
        phase_resolution_deg=360.0 * f / clock,
        mode=mode,
        frame_period_ticks=scalar(frame_ticks),
        frame_rate_hz=scalar(frame_rate),
        camera_trigger_offset_ticks=scalar(trigger),
        window_start_s=scalar(trigger / clock + lead) if lead is not None else None,
        window_s=window,
        flashes_per_frame=scalar(n_frame),
        first_flash_ticks=scalar(first),
        trigger_slack_s=slack if cam is not None else None,
        window_end_margin_s=scalar(end_margin) if cam is not None else None,
        duty_in_burst=scalar(duty_burst),
        duty_average=scalar(duty_avg),
        phase_per_kelvin_deg=per_k,
        sweep_step_deg=math.degrees(sweep_step) if sweep_step is not None else None,
        slow_motion_step_ticks=scalar(slow_step),
        apparent_frequency_hz=scalar(apparent),
        clock_drift_deg_per_s=drift_rate,
        drift_per_exposure_deg=drift_exp,
        smear=scalar(smear),
    )
    if design.is_scalar:
        section._lock = Lock(clock=clock, frequency=f, period_ticks=nd,
                             flash_ticks=int(flash_ticks), every=int(every), chain_delay=chain,
                             flash_delay=float(flash_delay), light_delay=light_delay,
                             light_length=float(light_length),
                             frame_ticks=scalar(frame_ticks), lead=lead, window=window,
                             slow_step=scalar(slow_step), step=float(step), slack=slack)
    return section


# --- schedule -----------------------------------------------------------------------------


@dataclass(frozen=True)
class ScheduleRow:
    frame: int
    target_phase_deg: float
    achieved_phase_deg: float
    phase_error_deg: float
    edge_ticks: int
    edge_time_s: float
    camera_trigger_ticks: int
    first_flash_ticks: int | None
    flashes: int | None
    smear: float = 1.0


@dataclass(frozen=True)
class Schedule:
    mode: str
    clock_hz: float
    drive_period_ticks: int
    flash_period_ticks: int
    frame_period_ticks: int | None
    rows: list[ScheduleRow]

    COLUMNS = ("frame", "target_phase_deg", "achieved_phase_deg", "phase_error_deg",
               "edge_ticks", "edge_time_s", "camera_trigger_ticks", "first_flash_ticks",
               "flashes", "smear")


MAX_ROWS = 100_000


def schedule(rig, plan, lock: Lock, steps: int | None = None) -> Schedule:
    """One row per camera frame: target and achieved phase, timer edge, flashes.

    Sweep: frames step the phase by span/steps from ``strobe.phase`` (``steps`` overrides
    ``sweep.steps``; without a [sweep] section, ``steps`` sweeps a full cycle). Slow
    motion: flashes run continuously at every*N_d + s ticks; each row is the first flash
    seen in that frame. Frozen (no sweep, no ``steps``): one row.
    """
    t = plan.timing
    clock = lock.clock
    nd = lock.period_ticks
    frame_ticks = lock.frame_ticks or lock.flash_ticks
    rows: list[ScheduleRow] = []
    base = rig.strobe.phase

    def frame_row(k: int, target, edge_in_frame: int, spacing: int) -> ScheduleRow:
        """Row for frame k whose first flash slot is ``edge_in_frame`` ticks after its start.

        ``target`` is the intended phase [rad], or (slow motion) a function of the absolute
        tick of the flash actually seen first in the window.
        """
        start = k * frame_ticks
        if lock.lead is not None:
            trig, n, first = align_camera(edge_in_frame, spacing, clock,
                                          lock.light_delay - lock.slack,
                                          lock.light_length + lock.slack, lock.lead,
                                          lock.window)
        else:
            trig, n, first = 0, None, edge_in_frame
        edge_abs = start + first
        achieved = phase_of_edge(edge_abs % nd, lock.frequency, clock, lock.chain_delay,
                                 lock.flash_delay) if t.mode == "slow_motion" else \
            phase_of_edge(edge_in_frame % nd, lock.frequency, clock, lock.chain_delay,
                          lock.flash_delay)
        edge = (edge_abs % nd) if t.mode == "slow_motion" else edge_in_frame % nd
        # The image shows the phasor mean over the flashes of its exposure.
        seen = n if n is not None else 1
        achieved, smear = phasor_mean(achieved, lock.step, seen)
        if callable(target):  # slow motion: the apparent wave at the exposure's middle
            target = target(edge_abs + 0.5 * max(seen - 1, 0) * spacing)
        return ScheduleRow(k, math.degrees(target), math.degrees(achieved),
                           math.degrees(wrap_error(achieved - target)), edge, edge / clock,
                           start + trig, edge_abs if (n is None or n) else None, n, smear)

    if t.mode == "slow_motion":
        n_rows = steps or min(MAX_ROWS, max(1, math.ceil(
            (t.frame_rate_hz or t.flash_rate_hz) / abs(t.apparent_frequency_hz))))
        edge0 = t.flash_edge_ticks
        for k in range(min(n_rows, MAX_ROWS)):
            start = k * frame_ticks
            j = max(0, math.ceil((start - edge0) / lock.flash_ticks))
            first_abs = edge0 + j * lock.flash_ticks

            def target(edge_abs, _f=t.apparent_frequency_hz):
                return wrap_phase(base + TWO_PI * _f * (edge_abs - edge0) / clock)

            rows.append(frame_row(k, target, first_abs - start, lock.flash_ticks))
    else:
        if steps is not None:
            span = rig.sweep.span if (rig.sweep and rig.sweep.span) else TWO_PI
            n_rows, step = steps, span / steps
        elif t.mode == "sweep":
            n_rows, step = rig.sweep.steps, math.radians(t.sweep_step_deg)
        else:
            n_rows, step = 1, 0.0
        for k in range(min(n_rows, MAX_ROWS)):
            target = wrap_phase(base + k * step)
            edge = edge_ticks_for_phase(target, lock.frequency, clock, nd, lock.chain_delay,
                                        lock.flash_delay)
            rows.append(frame_row(k, target, edge, lock.flash_ticks))
    return Schedule(t.mode, clock, nd, lock.flash_ticks, lock.frame_ticks, rows)


def schedule_conflict(sched: Schedule, lock: Lock) -> tuple[str, int, str] | None:
    """The first impossible row of a schedule, or None.

    Checked per frame k (frame k spans ``k * frame_period_ticks`` to the next frame): the
    first flash seen lies inside frame k; the camera trigger of frame k+1 comes after the
    exposure window of frame k has closed (a trigger inside an exposure is ignored or
    restarts it, depending on the camera). A one-row schedule repeats every frame.

    Returns
    -------
    (str, int, str) or None
        ``("flash_outside_frame" | "trigger_in_exposure", frame, description)``.
    """
    frame_ticks = lock.frame_ticks
    if frame_ticks is None or lock.lead is None or not sched.rows:
        return None
    clock = lock.clock
    busy = math.ceil((lock.lead + max(lock.window, 0.0)) * clock - 1e-9)
    rows = sched.rows
    for i, row in enumerate(rows):
        start = row.frame * frame_ticks
        if row.first_flash_ticks is not None and not (
                start <= row.first_flash_ticks < start + frame_ticks):
            return ("flash_outside_frame", row.frame,
                    f"frame {row.frame}'s first flash comes {row.first_flash_ticks - start} "
                    f"ticks after the frame starts, beyond its {frame_ticks}-tick frame")
        if i + 1 < len(rows):
            nxt = rows[i + 1].camera_trigger_ticks
        elif len(rows) == 1:
            nxt = row.camera_trigger_ticks + frame_ticks
        else:
            continue
        if nxt < row.camera_trigger_ticks + busy:
            return ("trigger_in_exposure", row.frame,
                    f"frame {row.frame + 1}'s camera trigger comes "
                    f"{row.camera_trigger_ticks + busy - nxt} ticks before frame "
                    f"{row.frame}'s exposure has closed")
    return None
