"""Timing stage: the drive chain and the timer settings of a design, on scalars and arrays.

The tick arithmetic (drive synthesis, phase of an edge, camera alignment, phasor means, the
schedule) is pure and lives in :mod:`strobeplan.timing`; this stage composes it for a rig and
a design: ``drive_section`` (the emitter drive chain at the realised frequency) and
``compute`` (the ``timing`` section; pulse width and ``every`` may be arrays).
"""

from __future__ import annotations

import math
from dataclasses import field
from typing import Any

import numpy as np

from ..physics import air as air_model
from ..physics import drive as drive_model
from ..plan import Section, q, scalar
from ..quickdc import dataclass
from ..timing import (
    TWO_PI,
    Lock,
    align_camera,
    choose_drive,
    continuous_train,
    edge_ticks_for_phase,
    flash_step,
    free_running_frame,
    phase_of_edge,
    phasor_mean,
    reduce_delay,
    slow_motion_apparent,
    slow_motion_step,
    trigger_slack,
    window_end_margin,
    wrap_error,
    wrap_phase,
)


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
