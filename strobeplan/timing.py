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
import operator
from collections.abc import Sequence

import numpy as np

from .plan import scalar
from .quickdc import dataclass

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
    rows: ScheduleRows

    COLUMNS = ("frame", "target_phase_deg", "achieved_phase_deg", "phase_error_deg",
               "edge_ticks", "edge_time_s", "camera_trigger_ticks", "first_flash_ticks",
               "flashes", "smear")


MAX_ROWS = 100_000
"""Rows of a slow-motion schedule when neither ``steps`` nor a frame count is given and
one apparent period would be longer (a default length, never a cap on ``steps``)."""

BLOCK_ROWS = 4096
"""Rows computed together (one numpy pass per column)."""


class ScheduleRows(Sequence):
    """The rows of a schedule, computed on demand in blocks of :data:`BLOCK_ROWS`.

    A row depends only on its frame number, so a schedule of any length costs the memory
    of one block: iterate it, index it (``rows[k]``, ``rows[a:b]``), or read whole columns
    a block at a time with :meth:`blocks` (what the writers in report/tables.py do).
    """

    def __init__(self, n: int, columns):
        self._n = int(n)
        self._columns = columns  # (start, stop) -> dict column -> list of plain values
        self._cached: tuple[int, list[ScheduleRow]] | None = None

    def __len__(self) -> int:
        return self._n

    def columns(self, start: int, stop: int) -> dict[str, list]:
        """Columns of rows ``start <= k < stop`` as lists of plain ints, floats, None."""
        return self._columns(start, min(stop, self._n))

    def blocks(self, size: int = BLOCK_ROWS):
        """Columns of consecutive blocks of rows (dicts as from :meth:`columns`)."""
        for start in range(0, self._n, size):
            yield self.columns(start, start + size)

    def _rows(self, start: int, stop: int) -> list[ScheduleRow]:
        cols = self.columns(start, stop)
        return [ScheduleRow(*vals) for vals in zip(*(cols[c] for c in Schedule.COLUMNS),
                                                       strict=True)]

    def __iter__(self):
        for start in range(0, self._n, BLOCK_ROWS):
            yield from self._rows(start, start + BLOCK_ROWS)

    def __getitem__(self, index):
        if isinstance(index, slice):
            start, stop, step = index.indices(self._n)
            if step != 1:
                return [self[k] for k in range(start, stop, step)]
            return self._rows(start, stop) if start < stop else []
        k = operator.index(index)
        if k < 0:
            k += self._n
        if not 0 <= k < self._n:
            raise IndexError("schedule row out of range")
        first = k - k % BLOCK_ROWS
        if self._cached is None or self._cached[0] != first:
            self._cached = (first, self._rows(first, first + BLOCK_ROWS))
        return self._cached[1][k - first]

    def __repr__(self) -> str:
        return f"ScheduleRows({self._n} rows)"


def schedule(rig, plan, lock: Lock, steps: int | None = None) -> Schedule:
    """One row per camera frame: target and achieved phase, timer edge, flashes.

    Sweep: frames step the phase by span/steps from ``strobe.phase`` (``steps`` overrides
    ``sweep.steps``; without a [sweep] section, ``steps`` sweeps a full cycle). Slow
    motion: flashes run continuously at every*N_d + s ticks; each row is the first flash
    seen in that frame (``steps`` rows, by default one apparent period, at most
    :data:`MAX_ROWS`). Frozen (no sweep, no ``steps``): one row.

    The rows are computed when read (:class:`ScheduleRows`), so ``steps`` may be any
    length; ``workload.require_schedule_rows`` bounds it.
    """
    from .workload import require_schedule_rows

    t = plan.timing
    clock = lock.clock
    nd = lock.period_ticks
    frame_ticks = lock.frame_ticks or lock.flash_ticks
    base = rig.strobe.phase
    slow = t.mode == "slow_motion"

    if slow:
        n_rows = steps or min(MAX_ROWS, max(1, math.ceil(
            (t.frame_rate_hz or t.flash_rate_hz) / abs(t.apparent_frequency_hz))))
        step = 0.0
    elif steps is not None:
        span = rig.sweep.span if (rig.sweep and rig.sweep.span) else TWO_PI
        n_rows, step = steps, span / steps
    elif t.mode == "sweep":
        n_rows, step = rig.sweep.steps, math.radians(t.sweep_step_deg)
    else:
        n_rows, step = 1, 0.0
    require_schedule_rows(n_rows)
    edge0 = t.flash_edge_ticks if slow else 0
    apparent = t.apparent_frequency_hz if slow else 0.0
    spacing = lock.flash_ticks

    def columns(first: int, stop: int) -> dict[str, list]:
        """Rows first..stop-1 with numpy: the same operations, in the same order, as the
        scalar helpers applied to one frame at a time (the outputs are byte-identical)."""
        k = np.arange(first, stop, dtype=np.int64)
        start = k * frame_ticks
        if slow:
            j = np.maximum(0, np.ceil((start - edge0) / spacing)).astype(np.int64)
            edge_in_frame = edge0 + j * spacing - start
            target = None
        else:
            target = wrap_phase(base + k * step)
            edge_in_frame = edge_ticks_for_phase(target, lock.frequency, clock, nd,
                                                 lock.chain_delay, lock.flash_delay)
        edge_in_frame = np.asarray(edge_in_frame, dtype=np.int64)
        if lock.lead is not None:
            trig, n, first_in_frame = align_camera(
                edge_in_frame, spacing, clock, lock.light_delay - lock.slack,
                lock.light_length + lock.slack, lock.lead, lock.window)
            trig, n = np.asarray(trig, dtype=np.int64), np.asarray(n, dtype=np.int64)
            seen = n
        else:
            trig, n, first_in_frame = np.zeros_like(k), None, edge_in_frame
            seen = 1
        edge_abs = start + first_in_frame
        edge = edge_abs % nd if slow else edge_in_frame % nd
        achieved = phase_of_edge(edge, lock.frequency, clock, lock.chain_delay,
                                 lock.flash_delay)
        achieved, smear = phasor_mean(achieved, lock.step, seen)
        if slow:  # the apparent wave at the exposure's middle
            mid = edge_abs + 0.5 * np.maximum(np.asarray(seen) - 1, 0) * spacing
            target = wrap_phase(base + TWO_PI * apparent * (mid - edge0) / clock)
        size = stop - first
        full = np.broadcast_to
        target_deg = np.degrees(full(target, (size,)))
        achieved_deg = np.degrees(full(achieved, (size,)))
        error_deg = np.degrees(full(wrap_error(np.asarray(achieved) - target), (size,)))
        edge = full(edge, (size,))
        cols = {
            "frame": k.tolist(), "target_phase_deg": target_deg.tolist(),
            "achieved_phase_deg": achieved_deg.tolist(), "phase_error_deg": error_deg.tolist(),
            "edge_ticks": edge.tolist(), "edge_time_s": (edge / clock).tolist(),
            "camera_trigger_ticks": (start + trig).tolist(),
            "smear": np.asarray(full(smear, (size,)), dtype=float).tolist()}
        first_abs = full(edge_abs, (size,)).tolist()
        if n is None:
            cols["first_flash_ticks"] = first_abs
            cols["flashes"] = [None] * size
        else:
            cols["first_flash_ticks"] = [e if m else None
                                         for e, m in zip(first_abs, full(n, (size,)).tolist(),
                                                         strict=True)]
            cols["flashes"] = full(n, (size,)).tolist()
        return cols

    return Schedule(t.mode, clock, nd, lock.flash_ticks, lock.frame_ticks,
                    ScheduleRows(n_rows, columns))


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
    one = len(rows) == 1
    row = None
    for nxt_row in rows:  # each row is checked when the next one (its trigger) is known
        if row is not None:
            found = _row_conflict(row, nxt_row.camera_trigger_ticks, frame_ticks, busy)
            if found is not None:
                return found
        row = nxt_row
    return _row_conflict(row, row.camera_trigger_ticks + frame_ticks if one else None,
                         frame_ticks, busy)


def _row_conflict(row: ScheduleRow, nxt: int | None, frame_ticks: int, busy: int):
    """:func:`schedule_conflict` for one row, given the next frame's trigger (or None)."""
    start = row.frame * frame_ticks
    if row.first_flash_ticks is not None and not (
            start <= row.first_flash_ticks < start + frame_ticks):
        return ("flash_outside_frame", row.frame,
                f"frame {row.frame}'s first flash comes {row.first_flash_ticks - start} "
                f"ticks after the frame starts, beyond its {frame_ticks}-tick frame")
    if nxt is not None and nxt < row.camera_trigger_ticks + busy:
        return ("trigger_in_exposure", row.frame,
                f"frame {row.frame + 1}'s camera trigger comes "
                f"{row.camera_trigger_ticks + busy - nxt} ticks before frame "
                f"{row.frame}'s exposure has closed")
    return None
