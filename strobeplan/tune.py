"""``strobeplan tune``: the brightest safe flash that still freezes the wave.

A vectorised search over the design space of one rig:

* the gate pulse width, on a fine log grid of whole timer ticks from the switching limit
  (the current's rise plus fall time, at least two ticks) up to (not including) one wave
  period;
* the series resistor, every value of an IEC 60063 E-series in a range
  (:func:`strobeplan.physics.logic.series_values`);
* ``every`` (flash on every N-th wave cycle), 1..N;
* optionally the supply (boost) voltage, on a linear grid within a range.

Constraints (each a named test; a candidate is feasible when it passes all that apply to
the rig): contrast retention at the wave frequency >= the target; thermal margin (junction
limit minus the peak of the real flash pattern) >= ``min_margin``; the LED's peak-current
ratings (``max_pulse_current`` and the interpolated ``pulse_ratings`` table) and its DC rating
against the average current; the switch's pulse current and drain-voltage ratings; the
supply's average power and current and the recharge of the storage capacitor before the next
burst; the stuck-on gate (time to the junction limit >= 10 s, series-resistor power); the
visible contrast when [optics] is given; and the camera window (at least one whole flash in
the exposure, flash rate not below the frame rate).

Objective: light per frame, the integral of the optical pulse times the flashes per frame, in
**ampere-seconds of LED current** (relative light: at constant efficiency the light is
proportional to the current, so 1 A s is a fixed amount of light for a given LED). One flash
gives ``mean current over the gate-on time x optical_area(width, rise, fall)``; without a
[camera] a "frame" is one flash. Ties are broken by the larger thermal margin.

Every per-candidate quantity comes from the physics functions (they take arrays): the pulse
operating point with capacitor droop (:mod:`~strobeplan.physics.led`), the Foster burst peak
(:mod:`~strobeplan.physics.thermal`), retention and optical area
(:mod:`~strobeplan.physics.exposure`), overshoot (:mod:`~strobeplan.physics.switching`),
supply budget and stuck-on state (:mod:`~strobeplan.physics.supply`). The timer quantities
that depend only on (width, every) - flashes per frame, frame period, smear - come from the
ordinary timing stage, run once per (width, every) pair; the grid is separable, so the
operating point is computed once per (width, resistor, voltage) and broadcast over ``every``.
Candidates are evaluated in chunks, so memory stays bounded whatever the grid size.

The search's model of a candidate is checked against the ordinary ``solve`` path in the tests,
and :func:`tune` verifies the winner through ``solve`` before returning it.
"""

from __future__ import annotations

import math
import re
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import RigError
from .physics import exposure as exposure_model
from .physics import led as led_model
from .physics import logic as logic_model
from .physics import schlieren as schlieren_model
from .physics import supply as supply_model
from .physics import switching as switching_model
from .physics import thermal as thermal_model

__all__ = [
    "CONSTRAINTS", "Grid", "Limits", "Design", "TuneResult", "default_grid", "tune",
    "evaluate_grid", "candidate_rig", "violations_from_plan", "light_from_plan",
    "tuned_rig_text", "result_text", "STUCK_ON_MIN_TIME",
]

STUCK_ON_MIN_TIME = 10.0  # [s] a stuck gate must take this long to reach the junction limit
DEFAULT_MIN_MARGIN = 10.0  # [K]
DEFAULT_CHUNK = 1 << 16  # candidates per chunk (about 40 MB of temporaries)

# Constraint names, in the order used to break ties in explanations. Each entry:
# name -> (what to change when it excludes the candidates).
CONSTRAINTS: dict[str, str] = {
    "camera window": "lengthen camera.exposure or allow a smaller `every` (more flashes "
                     "fit the exposure; the flash rate must not fall below the frame rate)",
    "retention": "shorten the pulse (the switching limit bounds the grid from below), lower "
                 "the timing jitter, or relax --min-retention",
    "visible contrast": "raise the SPL or the sound path, move the knife edge (larger "
                        "cutoff_distance, smaller cutoff_opening), or lower optics.min_contrast",
    "junction temperature": "larger series resistors, a lower supply voltage, a larger "
                            "`every`, a shorter exposure or a better heat sink (or a smaller "
                            "--min-margin)",
    "LED pulse rating": "larger series resistors or a lower supply voltage (less peak "
                        "current), or an LED rated for more pulse current",
    "LED average current": "a larger `every`, fewer flashes per frame or less peak current",
    "switch pulse current": "larger series resistors or a switch rated for more pulse current",
    "drain voltage": "a lower supply voltage, a smaller loop inductance or a switch with a "
                     "higher drain rating",
    "supply power": "a larger `every` or less current per flash, or a boost with more power",
    "supply current": "a larger `every` or less current per flash, or a boost with a higher "
                      "current limit",
    "recharge time": "a larger storage capacitor, a boost with a higher current limit, or "
                     "fewer flashes per frame",
    "stuck-on gate": "higher series resistors (widen --resistor-range upwards) or a lower "
                     "boost current limit (and a hardware limit on the gate's on-time plus a "
                     "fuse)",
    "series resistor power": "a series resistor rated for more power, a lower boost current "
                             "limit, or higher resistors (widen --resistor-range upwards)",
}


@dataclass(frozen=True)
class Limits:
    """Targets of the search. ``min_contrast`` None: the rig's (or the optics default)."""

    min_retention: float
    min_margin: float = DEFAULT_MIN_MARGIN
    min_contrast: float | None = None


@dataclass(frozen=True)
class Grid:
    """The decision variables: the search covers their full Cartesian product."""

    widths: np.ndarray  # [s] gate-on times (whole ticks)
    resistors: np.ndarray  # [ohm]
    everys: np.ndarray  # [1] integers
    voltages: np.ndarray  # [V]
    series: str = "E24"

    @property
    def shape(self) -> tuple[int, int, int, int]:
        """(widths, resistors, everys, voltages)."""
        return (self.widths.size, self.resistors.size, self.everys.size, self.voltages.size)

    @property
    def size(self) -> int:
        return int(np.prod(self.shape))

    def at(self, flat: int) -> tuple[float, float, int, float]:
        iw, ir, ie, iv = np.unravel_index(int(flat), self.shape)
        return (float(self.widths[iw]), float(self.resistors[ir]), int(self.everys[ie]),
                float(self.voltages[iv]))


@dataclass
class Design:
    """One candidate rig with its figures (SI; JSON keys as `tune --json` documents them)."""

    pulse_width_s: float
    series_resistor_ohm: float
    every: int
    supply_voltage_v: float
    light_per_frame: float  # [A s] relative light (see module docstring)
    limited_by: str | None
    retention: float
    thermal_margin_k: float
    junction_peak_c: float
    peak_current_a: float
    flashes_per_frame: int
    violates: list[str] = field(default_factory=list)
    _flat: int = -1  # index in the grid (not output)

    def to_json(self) -> dict:
        from .plan import jsonable

        return jsonable(self)


@dataclass
class TuneResult:
    """What :func:`tune` found."""

    best: Design | None
    runner_ups: list[Design]
    frontier: list[Design]  # light against retention, retention descending
    candidates: int
    feasible: int
    seconds: float
    excluded: dict[str, int]  # candidates violating each constraint
    only_excluded: dict[str, int]  # candidates violating that constraint alone
    best_reached: dict[str, float]  # best value of each constraint's metric over the grid
    explanation: str | None  # why nothing is feasible and what to change
    grid: Grid
    limits: Limits
    rejected_by_check: list[dict] = field(default_factory=list)
    plan: Any = None  # the solved Plan of the best rig

    def to_json(self) -> dict:
        from .plan import jsonable

        best = None
        if self.best is not None:
            b = self.best
            best = {"pulse_width_s": b.pulse_width_s, "series_resistor_ohm": b.series_resistor_ohm,
                    "every": b.every, "supply_voltage_v": b.supply_voltage_v,
                    "light_per_frame": b.light_per_frame, "limited_by": b.limited_by,
                    "retention": b.retention, "thermal_margin_k": b.thermal_margin_k,
                    "junction_peak_c": b.junction_peak_c, "peak_current_a": b.peak_current_a,
                    "flashes_per_frame": b.flashes_per_frame}
        g = self.grid
        return jsonable({
            "format": "strobeplan.tune", "version": 1,
            "best": best,
            "runner_ups": [d.to_json() for d in self.runner_ups],
            "frontier": [d.to_json() for d in self.frontier],
            "candidates": self.candidates,
            "feasible": self.feasible,
            "seconds": self.seconds,
            "light_unit": "A s (LED current integrated over the optical pulse, per frame)",
            "limits": {"min_retention": self.limits.min_retention,
                       "min_margin_k": self.limits.min_margin,
                       "min_contrast": self.limits.min_contrast},
            "grid": {"pulse_width_min_s": float(g.widths[0]), "pulse_width_max_s":
                     float(g.widths[-1]), "pulse_widths": int(g.widths.size),
                     "series": g.series, "series_resistor_min_ohm": float(g.resistors[0]),
                     "series_resistor_max_ohm": float(g.resistors[-1]),
                     "series_resistors": int(g.resistors.size),
                     "every_max": int(g.everys[-1]),
                     "supply_voltage_min_v": float(g.voltages[0]),
                     "supply_voltage_max_v": float(g.voltages[-1]),
                     "supply_voltages": int(g.voltages.size)},
            "excluded": self.excluded,
            "excluded_only_by": self.only_excluded,
            "explanation": self.explanation,
            "rejected_by_check": self.rejected_by_check,
            "plan": self.plan.to_json() if self.plan is not None else None,
        })


# --- the rig's invariants -----------------------------------------------------------------


@dataclass(frozen=True)
class _Context:
    """Everything that does not depend on the decision variables (from rig + base plan)."""

    rig: Any
    plan: Any
    frequency: float  # [Hz] wave frequency the retention is evaluated at
    rise: float  # [s]
    fall: float  # [s]
    phosphor_fraction: float
    phosphor_decay: float  # [s]
    jitter: float  # [s]
    fit: Any  # led.DiodeFit
    on_resistance: float  # [ohm]
    loop_inductance: float  # [H]
    contrast: float | None  # optics contrast before retention
    min_contrast: float | None


def _require(rig) -> None:
    for name in ("led", "supply"):
        if getattr(rig, name) is None:
            raise RigError(name, None, f"tune needs a [{name}] section (the search varies the "
                                       "LED current and checks its heating)")


def _context(rig, plan, limits: Limits) -> _Context:
    from .stages import power as power_stage

    _require(rig)

    fit = power_stage.diode(rig)
    from .stages import exposure as exposure_stage

    _w, rise, fall, w_ph, tau = exposure_stage.pulse_parameters(rig, plan)
    jitter = exposure_stage.jitter_rms(rig)
    contrast = None
    min_contrast = None
    if plan.optics is not None and getattr(plan.optics, "contrast", None) is not None:
        contrast = plan.optics.contrast
        min_contrast = limits.min_contrast
        if min_contrast is None:
            min_contrast = plan.optics.min_contrast
    sw = rig.switch
    return _Context(
        rig=rig, plan=plan, frequency=plan.timing.drive_frequency_hz,
        rise=rise, fall=fall, phosphor_fraction=w_ph, phosphor_decay=tau,
        jitter=jitter, fit=fit,
        on_resistance=sw.on_resistance if sw else 0.0,
        loop_inductance=(sw.loop_inductance or 0.0) if sw else 0.0,
        contrast=None if contrast is None else float(contrast), min_contrast=min_contrast,
    )


def _with(rig, width: float | None = None, every: int | None = None,
          resistor: float | None = None, voltage: float | None = None,
          min_retention: float | None = None):
    """A copy of the rig with some decision variables replaced (no re-validation)."""
    update = {}
    s = {}
    if min_retention is not None:
        s["min_retention"] = float(min_retention)
    if width is not None:
        s["pulse_width"] = float(width)
    if every is not None:
        s["every"] = int(every)
    if s:
        update["strobe"] = rig.strobe.model_copy(update=s)
    p = {}
    if resistor is not None:
        p["series_resistor"] = float(resistor)
    if voltage is not None:
        p["voltage"] = float(voltage)
    if p:
        update["supply"] = rig.supply.model_copy(update=p)
    return rig.model_copy(update=update)


# --- timing table over (width, every) -------------------------------------------------------


@dataclass(frozen=True)
class _Timing:
    """Per (width, every) quantities from the ordinary timing stage; arrays (nW, nE)."""

    n_frame: np.ndarray  # flashes per frame (1 without a camera): the light's multiplier
    n_burst: np.ndarray  # flashes per heating burst (1 for a continuous train)
    spacing: np.ndarray  # [s] flash period
    frame_period: np.ndarray  # [s] burst period (the spacing for a continuous train)
    rate: np.ndarray  # [Hz] average flash rate
    duty: np.ndarray  # duty in the burst
    smear: np.ndarray
    window_ok: np.ndarray  # bool: camera window constraint met
    retention: np.ndarray
    area: np.ndarray  # [s] optical area per unit current
    rated: np.ndarray  # [A] rated pulse current (inf without ratings)


def _timing_table(ctx: _Context, widths, everys) -> _Timing:
    from . import timing
    from .plan import Plan
    from .stages import flash as flash_stage
    from .stages import power as power_stage

    rig = ctx.rig
    nw, ne = widths.size, everys.size
    n_frame = np.ones((nw, ne))
    n_burst = np.ones((nw, ne))
    spacing = np.empty((nw, ne))
    frame = np.empty((nw, ne))
    rate = np.empty((nw, ne))
    smear = np.ones((nw, ne))
    ok = np.ones((nw, ne), dtype=bool)
    cam = rig.camera
    # The timing stage is scalar (integer ticks); it depends on (width, every) only, so it
    # runs once per pair, not per candidate. The flash pattern the LED sees is the power
    # stage's own (burst per frame or continuous train).
    # The flash section depends on the width only: built once per width.
    flashes = []
    for w in widths:
        r = _with(rig, width=w)
        plan = Plan(rig=r)
        flash_stage.build(r, plan)
        flashes.append(plan.flash)
    for j, e in enumerate(everys):
        for i, w in enumerate(widths):
            r = _with(rig, width=w, every=int(e))
            plan = Plan(rig=r)
            plan.air = ctx.plan.air
            plan.flash = flashes[i]
            plan.trigger_link = ctx.plan.trigger_link
            timing.build(r, plan)
            t = plan.timing
            pat = power_stage.flash_pattern(r, t)
            spacing[i, j] = pat.spacing
            n_burst[i, j] = pat.n
            frame[i, j] = pat.frame if pat.frame is not None else pat.spacing
            rate[i, j] = pat.rate
            smear[i, j] = t.smear
            if cam is not None:
                n_frame[i, j] = t.flashes_per_frame or 0
                ok[i, j] = (t.flashes_per_frame or 0) >= 1 and \
                    cam.frame_rate <= rig.wave.frequency / int(e)
    w2 = widths[:, None]
    duty = w2 / spacing
    retention = np.asarray(exposure_model.retention(
        ctx.frequency, w2, ctx.rise, ctx.fall, ctx.phosphor_fraction, ctx.phosphor_decay,
        ctx.jitter, smear))
    area = np.broadcast_to(np.asarray(exposure_model.optical_area(
        w2, ctx.rise, ctx.fall, ctx.phosphor_fraction, ctx.phosphor_decay)), (nw, ne))
    led = rig.led
    rated = np.full((nw, ne), np.inf)
    if led.max_pulse_current is not None:
        rated = np.minimum(rated, led.max_pulse_current)
    if led.pulse_ratings:
        tab, _inside = led_model.rated_pulse_current(
            np.broadcast_to(w2, (nw, ne)), duty,
            [p.width for p in led.pulse_ratings], [p.duty for p in led.pulse_ratings],
            [p.current for p in led.pulse_ratings])
        rated = np.minimum(rated, tab)
    return _Timing(n_frame=n_frame, n_burst=n_burst, spacing=spacing, frame_period=frame,
                   rate=rate, duty=duty, smear=smear, window_ok=ok, retention=retention,
                   area=np.array(area), rated=rated)


# --- the vectorised evaluation ------------------------------------------------------------


def _stuck_table(ctx: _Context, resistors, voltages):
    """Stuck-on gate per (resistor, voltage): the rise a stuck gate adds in 10 s, and the
    series resistor's power.

    The step response is monotonic, so "the limit is reached in no less than 10 s" is
    exactly "heat x Zth(10 s) <= room left below junction_max", tested per candidate
    without a root find.
    """
    rig = ctx.rig
    led, sup = rig.led, rig.supply
    r2, v2 = resistors[:, None], voltages[None, :]
    st = supply_model.stuck_on_state(v2, sup.max_current, r2, ctx.on_resistance,
                                     ctx.fit.n_vt, ctx.fit.saturation_current,
                                     ctx.fit.series_resistance)
    heat = (1.0 - led.efficiency) * np.asarray(st.led_power)
    rth = [t.resistance for t in led.thermal]
    tau = [t.time_constant for t in led.thermal]
    rise_10s = heat * thermal_model.zth(STUCK_ON_MIN_TIME, rth, tau)
    return np.asarray(rise_10s, dtype=float), np.asarray(st.resistor_power, dtype=float)


def _evaluate_block(ctx: _Context, tt: _Timing, stuck, grid: Grid, iw, ir, iv,
                    min_retention, min_margin, ie=None):
    """Metrics and violations for candidates (iw, ir, iv) x every: arrays of shape (m, nE);
    with ``ie`` (one every index per row) only those candidates: shape (m, 1)."""
    rig = ctx.rig

    def take(a):  # a per-(width, every) table at the rows' widths (and everys)
        return a[iw] if ie is None else a[iw, ie][:, None]

    led, sup = rig.led, rig.supply
    w = grid.widths[iw]
    r = grid.resistors[ir]
    v = grid.voltages[iv]
    op = led_model.pulse_operating_point(v, sup.storage_capacitance, sup.esr, r,
                                         ctx.on_resistance, sup.max_current, w, ctx.fit.n_vt,
                                         ctx.fit.saturation_current, ctx.fit.series_resistance)
    col = (slice(None), None)
    peak = np.asarray(op.peak_current)[col]
    charge = np.asarray(op.charge)[col]
    energy = np.asarray(op.led_energy)[col]
    w_c = w[col]
    v_c = v[col]
    n = take(tt.n_frame)
    n_burst = take(tt.n_burst)
    spacing = take(tt.spacing)
    frame = take(tt.frame_period)
    rate = take(tt.rate)
    heat = (1.0 - led.efficiency) * energy / w_c
    rth = [t.resistance for t in led.thermal]
    tau = [t.time_constant for t in led.thermal]
    # A continuous train is the burst of one flash per spacing (burst_peak reduces to the
    # pulse-train peak exactly), so one call covers both patterns.
    rise_k = thermal_model.burst_peak(heat, w_c, spacing, n_burst, frame, rth, tau)
    junction = led.ambient + np.asarray(rise_k)
    margin = led.junction_max - junction
    retention = take(tt.retention)
    light = (charge / w_c) * take(tt.area) * n
    avg_current = np.asarray(supply_model.average_current(charge, rate))
    # Energy drawn per flash: LED + series resistor + switch + ESR (the power stage's budget).
    e_flash = energy + np.asarray(op.i2t)[col] * (r[col] + ctx.on_resistance + sup.esr)
    avg_power = np.asarray(supply_model.average_power(e_flash, rate))
    droop = supply_model.burst_droop(charge, sup.storage_capacitance, sup.max_current, w_c,
                                     spacing, n_burst)
    recharge = np.asarray(supply_model.recharge_time(sup.storage_capacitance,
                                                     np.asarray(droop.at_end), sup.max_current))
    idle = frame - (n_burst - 1) * spacing - w_c
    rise_10s, r_power = stuck
    rise_10s = rise_10s[ir, iv][col]
    # The stuck gate's step response starts from the mean junction temperature of normal
    # operation (the power stage's convention).
    mean = thermal_model.mean_rise(heat, w_c * rate, rth)
    allowed = led.junction_max - (led.ambient + mean)
    r_power = r_power[ir, iv][col]

    def bad(ok):  # nan counts as a violation
        return ~np.asarray(ok, dtype=bool)

    shape = margin.shape
    viol = {
        "camera window": np.broadcast_to(bad(take(tt.window_ok)), shape),
        "retention": np.broadcast_to(bad(retention >= min_retention), shape),
        "junction temperature": bad(margin >= min_margin),
        "LED pulse rating": bad(peak <= take(tt.rated)),
        "LED average current": bad(avg_current <= led.max_dc_current),
        "supply power": bad(avg_power <= sup.max_power),
        "supply current": bad(avg_current <= sup.max_current),
        "recharge time": bad(recharge <= idle),
        "stuck-on gate": bad((rise_10s <= allowed) & (allowed > 0)),
        "series resistor power": np.broadcast_to(bad(r_power <= sup.series_resistor_power),
                                                 shape),
    }
    if rig.switch is not None:
        sw = rig.switch
        viol["switch pulse current"] = np.broadcast_to(bad(peak <= sw.max_pulse_current), shape)
        vds = switching_model.turn_off_overshoot(v_c, ctx.loop_inductance,
                                                 np.asarray(op.end_current)[col],
                                                 max(ctx.fall, 1e-15))
        viol["drain voltage"] = np.broadcast_to(bad(vds <= sw.max_drain_voltage), shape)
    if ctx.contrast is not None:
        visible = schlieren_model.visible_contrast(ctx.contrast, retention)
        viol["visible contrast"] = np.broadcast_to(bad(visible >= ctx.min_contrast), shape)
    metrics = {"light": np.broadcast_to(light, shape), "margin": margin,
               "junction": junction, "retention": np.broadcast_to(retention, shape),
               "peak": np.broadcast_to(peak, shape),
               "n_frame": np.broadcast_to(n, shape)}
    return metrics, viol


def evaluate_grid(rig, plan, grid: Grid, limits: Limits, flat=None):
    """Evaluate candidates of ``grid`` (all, or the flat indices ``flat``) in one go.

    Returns (metrics, violations): dicts of arrays over the candidates, in flat order of
    ``grid.shape``. For tests and small grids; :func:`tune` streams in chunks.
    """
    ctx = _context(rig, plan, limits)
    tt = _timing_table(ctx, grid.widths, grid.everys)
    stuck = _stuck_table(ctx, grid.resistors, grid.voltages)
    if flat is None:
        flat = np.arange(grid.size)
    return _evaluate_flat(ctx, tt, stuck, grid, limits, flat)


def _evaluate_flat(ctx, tt, stuck, grid: Grid, limits: Limits, flat):
    flat = np.asarray(flat, dtype=np.int64)
    iw, ir, ie, iv = np.unravel_index(flat, grid.shape)
    metrics, viol = _evaluate_block(ctx, tt, stuck, grid, iw, ir, iv, limits.min_retention,
                                    limits.min_margin, ie=ie)
    return ({k: np.asarray(a)[:, 0] for k, a in metrics.items()},
            {k: np.asarray(a)[:, 0] for k, a in viol.items()})


# --- the grid -------------------------------------------------------------------------------


def width_limits(rig, plan) -> tuple[float, float]:
    """(shortest, longest) gate pulse of the search: the switching limit and one period. [s]

    The switching limit is the current's rise plus fall time (below it the current never
    reaches its full value), and at least two timer ticks.
    """
    tick = 1.0 / rig.controller.clock
    lo = max(plan.flash.rise_s + plan.flash.fall_s, 2.0 * tick)
    return lo, 1.0 / rig.wave.frequency


def default_grid(rig, plan, *, widths: int = 160, series: str = "E24",
                 resistor_range: tuple[float, float] = (0.1, 100.0), max_every: int = 8,
                 supply_range: tuple[float, float] | None = None,
                 supply_steps: int = 13) -> Grid:
    """The search grid of a rig.

    Widths: ``widths`` log-spaced points from the switching limit to one wave period, rounded
    to whole timer ticks (duplicates dropped, the period itself excluded). Resistors: the
    E-series values in ``resistor_range``. ``every``: 1..``max_every``, no larger than the
    flash rate allows against the camera's frame rate. Supply: the rig's voltage, or
    ``supply_steps`` values spanning ``supply_range``.
    """
    lo, period = width_limits(rig, plan)
    clock = rig.controller.clock
    if lo >= period:
        raise RigError("strobe.pulse_width", None,
                       "the switching limit (rise + fall) is not shorter than one wave period: "
                       "nothing to search")
    ticks = np.unique(np.round(np.geomspace(lo, period, widths) * clock).astype(np.int64))
    ticks = ticks[(ticks >= math.ceil(lo * clock - 1e-9)) & (ticks < period * clock - 1e-9)]
    w = ticks / clock
    r = logic_model.series_values(series, *resistor_range)
    if r.size == 0:
        raise RigError("", None, f"no {series} value between {resistor_range[0]:g} and "
                                 f"{resistor_range[1]:g} ohm")
    top = max_every
    if rig.camera is not None:
        top = min(top, max(1, int(math.floor(rig.wave.frequency / rig.camera.frame_rate))))
    e = np.arange(1, max(1, top) + 1)
    if supply_range is None:
        v = np.array([rig.supply.voltage])
    else:
        v = np.linspace(supply_range[0], supply_range[1], max(1, supply_steps))
    return Grid(widths=w, resistors=r, everys=e, voltages=v, series=series)


# --- the search -----------------------------------------------------------------------------


def _design(grid, flat, metrics, viol, k, limited_by=None) -> Design:
    w, r, e, v = grid.at(flat)
    return Design(
        pulse_width_s=w, series_resistor_ohm=r, every=e, supply_voltage_v=v,
        light_per_frame=float(metrics["light"][k]), limited_by=limited_by,
        retention=float(metrics["retention"][k]), thermal_margin_k=float(metrics["margin"][k]),
        junction_peak_c=float(metrics["junction"][k]) - 273.15,
        peak_current_a=float(metrics["peak"][k]), flashes_per_frame=int(metrics["n_frame"][k]),
        violates=[name for name, a in viol.items() if bool(a[k])], _flat=int(flat),
    )


def _neighbours(grid: Grid, flat: int) -> list[int]:
    """Grid neighbours that give more light: wider, smaller R, smaller every, higher V."""
    idx = list(np.unravel_index(int(flat), grid.shape))
    out = []
    for axis, step in ((0, 1), (1, -1), (2, -1), (3, 1)):
        j = idx.copy()
        j[axis] += step
        if 0 <= j[axis] < grid.shape[axis]:
            out.append(int(np.ravel_multi_index(j, grid.shape)))
    return out


_AXIS_NAMES = ("pulse width", "series resistor", "every", "supply voltage")


def _limited_by(ev, grid, flat, light) -> str:
    """The constraint a brighter grid neighbour violates most often (else the grid edge)."""
    nb = _neighbours(grid, flat)
    if nb:
        m, v = ev(nb)
        counts: dict[str, int] = {}
        for k in range(len(nb)):
            if m["light"][k] <= light:
                continue
            for name in CONSTRAINTS:
                if name in v and v[name][k]:
                    counts[name] = counts.get(name, 0) + 1
        if counts:
            order = list(CONSTRAINTS)
            return max(counts, key=lambda c: (counts[c], -order.index(c)))
    idx = np.unravel_index(int(flat), grid.shape)
    ends = [_AXIS_NAMES[a] for a, (i, s) in enumerate(zip(idx, (1, -1, -1, 1), strict=True))
            if not 0 <= i + s < grid.shape[a]]
    return "search range (" + ", ".join(ends) + ")" if ends else "search range"


def _frontier(cell_light, cell_flat, cell_ret) -> list[tuple[int, float]]:
    """Pareto front of (retention, light) over (width, every) cells: both maximised."""
    ok = np.isfinite(cell_light) & (cell_light > 0)
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return []
    order = idx[np.lexsort((-cell_light[idx], -cell_ret[idx]))]
    front, best = [], -np.inf
    for c in order:  # cells, not candidates: at most widths x everys
        if cell_light[c] > best:
            front.append(int(cell_flat[c]))
            best = cell_light[c]
    return front


def tune(rig, limits: Limits | None = None, grid: Grid | None = None, *,
         chunk: int = DEFAULT_CHUNK, runner_ups: int = 5, verify: int = 20,
         progress=None, base=None) -> TuneResult:
    """Search the grid for the brightest feasible design; verify it through ``solve``.

    Parameters
    ----------
    rig : strobeplan.rig.Rig
        The validated rig.
    limits : Limits, optional
        Targets; default ``strobe.min_retention`` and a 10 K margin.
    grid : Grid, optional
        Decision variables; default :func:`default_grid`.
    chunk : int
        Candidates per evaluated chunk (bounds memory).
    runner_ups : int
        How many next-best designs to report.
    verify : int
        How many top designs to try, in order, through ``solve`` + checks: the first whose
        verdict is not "fail" becomes the best (the others are listed as rejected). 0 skips
        the verification (the search's own best is returned, ``plan`` stays None).
    progress : callable, optional
        ``progress(done, total)`` after each chunk (the CLI's progress bar).
    base : Plan, optional
        ``solve(rig)``, when the caller has it already.
    """
    from .solve import solve

    t0 = time.perf_counter()
    if base is None:
        base = solve(rig)
    if limits is None:
        limits = Limits(min_retention=rig.strobe.min_retention)
    if grid is None:
        grid = default_grid(rig, base)
    ctx = _context(rig, base, limits)
    tt = _timing_table(ctx, grid.widths, grid.everys)
    stuck = _stuck_table(ctx, grid.resistors, grid.voltages)
    nw, nr, ne, nv = grid.shape
    sub = nw * nr * nv  # the (width, resistor, voltage) sub-grid; every is broadcast
    per = max(1, chunk // ne)
    keep = max(runner_ups + 1, verify)
    top_flat = np.empty(0, dtype=np.int64)
    top_light = np.empty(0)
    top_margin = np.empty(0)
    cell_light = np.full(nw * ne, -np.inf)
    cell_flat = np.full(nw * ne, -1, dtype=np.int64)
    names = None
    excluded: dict[str, int] = {}
    only: dict[str, int] = {}
    reached: dict[str, float] = {}
    feasible = 0
    ie_row = np.arange(ne)[None, :]
    for start in range(0, sub, per):
        s = np.arange(start, min(sub, start + per))
        iw, ir, iv = np.unravel_index(s, (nw, nr, nv))
        metrics, viol = _evaluate_block(ctx, tt, stuck, grid, iw, ir, iv,
                                        limits.min_retention, limits.min_margin)
        if names is None:
            names = [n for n in CONSTRAINTS if n in viol]
            excluded = dict.fromkeys(names, 0)
            only = dict.fromkeys(names, 0)
        stack = np.stack([np.asarray(viol[n]) for n in names])
        n_bad = stack.sum(axis=0)
        for k, name in enumerate(names):
            excluded[name] += int(stack[k].sum())
            only[name] += int((stack[k] & (n_bad == 1)).sum())
        for key, val in (("retention", metrics["retention"]), ("margin", metrics["margin"])):
            reached[key] = max(reached.get(key, -np.inf), float(np.nanmax(val)))
        light = np.asarray(metrics["light"])
        margin = np.asarray(metrics["margin"])
        flat = np.ravel_multi_index((iw[:, None], ir[:, None], ie_row, iv[:, None]), grid.shape)
        ok = n_bad == 0
        feasible += int(ok.sum())
        if ok.any():
            fl, li, ma = flat[ok], light[ok], margin[ok]
            if fl.size > keep:
                part = np.argpartition(-li, keep - 1)[:keep]
                fl, li, ma = fl[part], li[part], ma[part]
            top_flat = np.concatenate([top_flat, fl])
            top_light = np.concatenate([top_light, li])
            top_margin = np.concatenate([top_margin, ma])
            order = np.lexsort((-top_margin, -top_light))[:keep]
            top_flat, top_light, top_margin = top_flat[order], top_light[order], top_margin[order]
        # Frontier of light against retention over the safe candidates (every constraint
        # except retention and visibility, which the frontier trades against).
        trade = [k for k, n in enumerate(names) if n not in ("retention", "visible contrast")]
        safe = ~stack[trade].any(axis=0)
        if safe.any():
            cells = (iw[:, None] * ne + ie_row)[safe]
            li = light[safe]
            np.maximum.at(cell_light, cells, li)
            hit = li >= cell_light[cells]
            cell_flat[cells[hit]] = flat[safe][hit]
        if progress is not None:
            progress(min(sub, start + per) * ne, grid.size)

    def ev(flat):
        return _evaluate_flat(ctx, tt, stuck, grid, limits, flat)

    reached["retention"] = float(np.nanmax(tt.retention)) if tt.retention.size else np.nan
    result_top: list[Design] = []
    if top_flat.size:
        m, v = ev(top_flat)
        result_top = [_design(grid, top_flat[k], m, v, k) for k in range(top_flat.size)]
    best = None
    rejected = []
    best_plan = None
    if verify <= 0 and result_top:
        best = result_top[0]
    for d in result_top[:verify]:
        cand = candidate_rig(rig, d, _retention_override(rig, limits))
        plan = solve(cand)
        if plan.verdict != "fail":
            best, best_plan = d, plan
            break
        rejected.append({"pulse_width_s": d.pulse_width_s,
                         "series_resistor_ohm": d.series_resistor_ohm, "every": d.every,
                         "supply_voltage_v": d.supply_voltage_v,
                         "codes": sorted({f.code for f in plan.findings
                                          if f.severity in ("hazard", "fault")})})
    if best is not None:
        best.limited_by = _limited_by(ev, grid, best._flat, best.light_per_frame)
    others = [d for d in result_top if d is not best][:runner_ups]
    cell_ret = tt.retention.ravel()
    front_flat = _frontier(cell_light, cell_flat, cell_ret)
    frontier = []
    if front_flat:
        m, v = ev(np.array(front_flat))
        frontier = [_design(grid, front_flat[k], m, v, k) for k in range(len(front_flat))]
    explanation = None
    if best is None:
        explanation = _explain(excluded, only, reached, limits, grid, rejected, feasible)
    return TuneResult(best=best, runner_ups=others, frontier=frontier, candidates=grid.size,
                      feasible=feasible, seconds=time.perf_counter() - t0, excluded=excluded,
                      only_excluded=only, best_reached=reached, explanation=explanation,
                      grid=grid, limits=limits, rejected_by_check=rejected, plan=best_plan)


def _retention_override(rig, limits: Limits) -> float | None:
    """The search's retention target when it differs from the rig's, else None."""
    if math.isclose(limits.min_retention, rig.strobe.min_retention, rel_tol=1e-12):
        return None
    return limits.min_retention


def _explain(excluded, only, reached, limits, grid, rejected, feasible) -> str:
    if feasible and rejected:
        codes = sorted({c for r in rejected for c in r["codes"]})
        return (f"{feasible} candidates meet the search's constraints, but the "
                f"{len(rejected)} brightest still fail `check` on {', '.join(codes)}: fix "
                "those findings first (the search does not vary what causes them)")
    if not excluded:
        return "the grid is empty"
    order = list(CONSTRAINTS)
    worst = max(excluded, key=lambda c: (excluded[c], -order.index(c)))
    total = grid.size
    every_one = [c for c in order if excluded.get(c, 0) == total]
    if len(every_one) > 1:
        parts = [f"nothing feasible among {total} candidates: "
                 + ", ".join(f"'{c}'" for c in every_one) + " each exclude every candidate"]
    else:
        parts = [f"nothing feasible among {total} candidates: '{worst}' excludes the most "
                 f"({excluded[worst]}, {100.0 * excluded[worst] / total:.3g} %)"]
    if "retention" in (every_one or [worst]) and math.isfinite(reached.get("retention", np.nan)):
        parts.append(f"the best retention on the grid is {reached['retention']:.5f} against "
                     f"the target {limits.min_retention:.4g}")
    if "junction temperature" in (every_one or [worst]) and \
            math.isfinite(reached.get("margin", np.nan)):
        parts.append(f"the largest thermal margin on the grid is {reached['margin']:.4g} K "
                     f"against the {limits.min_margin:.4g} K asked")
    for c in every_one or [worst]:
        parts.append(f"change ({c}): {CONSTRAINTS[c]}")
    blockers = [c for c, n in only.items() if n > 0]
    if blockers:
        parts.append("constraints that alone exclude some candidates: " + ", ".join(
            f"{c} ({only[c]})" for c in sorted(blockers, key=lambda c: -only[c])))
    return "; ".join(parts)


# --- the scalar path (solve) ----------------------------------------------------------------


def candidate_rig(rig, design: Design, min_retention: float | None = None):
    """The rig with a design's values (a model copy, then the loader's cross-check).

    ``min_retention`` (the search's target, when it differs from the rig's) is written to
    ``strobe.min_retention`` so that ``check`` judges the rig against the same target.
    """
    from .rig import cross_check

    out = _with(rig, width=design.pulse_width_s, every=design.every,
                resistor=design.series_resistor_ohm, voltage=design.supply_voltage_v,
                min_retention=min_retention)
    cross_check(out)
    return out


def _quantity(value: float, kind: str) -> str:
    """A unit string that parses back to ``value`` exactly (repr precision)."""
    unit = {"time": "s", "resistance": "ohm", "voltage": "V"}[kind]
    return f"{value!r} {unit}"


def violations_from_plan(plan, limits: Limits) -> dict[str, bool]:
    """The search's constraints judged on a solved plan (the scalar path through ``solve``).

    Same names as :data:`CONSTRAINTS`; True means violated. Reads only plan sections and
    rig ratings, so the tests can compare it with the vectorised evaluation.
    """
    rig = plan.rig
    led, sup, sw, cam = rig.led, rig.supply, rig.switch, rig.camera
    t, ex, pl, su, so = plan.timing, plan.exposure, plan.led, plan.supply, plan.stuck_on
    n = t.flashes_per_frame
    out = {
        "camera window": cam is not None and (not n or n < 1 or
                                              cam.frame_rate > rig.wave.frequency
                                              / rig.strobe.every),
        "retention": not ex.retention >= limits.min_retention,
        "junction temperature": not pl.thermal_margin_k >= limits.min_margin,
    }
    rated = min(pl.rated_pulse_current_a if pl.rated_pulse_current_a is not None else math.inf,
                led.max_pulse_current if led.max_pulse_current is not None else math.inf)
    out["LED pulse rating"] = not pl.peak_current_a <= rated
    out["LED average current"] = not pl.average_current_a <= led.max_dc_current
    out["supply power"] = not su.average_power_w <= sup.max_power
    out["supply current"] = not su.average_current_a <= sup.max_current
    out["recharge time"] = not su.recharge_time_s <= su.idle_time_s
    out["stuck-on gate"] = so.time_to_limit_s is not None and \
        not so.time_to_limit_s >= STUCK_ON_MIN_TIME
    out["series resistor power"] = not so.resistor_power_w <= sup.series_resistor_power
    if sw is not None:
        out["switch pulse current"] = not pl.peak_current_a <= sw.max_pulse_current
        vds = plan.switch.vds_peak_v if plan.switch is not None else None
        out["drain voltage"] = not (vds if vds is not None else sup.voltage) <= \
            sw.max_drain_voltage
    o = plan.optics
    if o is not None and o.visible_contrast is not None:
        minimum = limits.min_contrast if limits.min_contrast is not None else o.min_contrast
        out["visible contrast"] = not o.visible_contrast >= minimum
    return out


def light_from_plan(plan) -> float:
    """Light per frame of a solved plan, from its sections (see the module docstring). [A s]"""
    n = plan.timing.flashes_per_frame if plan.rig.camera is not None else 1
    return float(plan.led.mean_current_a * plan.exposure.optical_area_s * (n or 0))


# --- text output ---------------------------------------------------------------------------


def _design_row(d: Design) -> list[str]:
    from .units import render

    return [render(d.pulse_width_s, "time"), render(d.series_resistor_ohm, "resistance"),
            str(d.every), render(d.supply_voltage_v, "voltage"), f"{d.light_per_frame:.4g}",
            f"{d.retention:.4f}", f"{d.thermal_margin_k:.1f}", render(d.peak_current_a, "current"),
            str(d.flashes_per_frame)]


_COLUMNS = ["pulse width", "resistor", "every", "supply", "light/frame [A s]", "retention",
            "margin [K]", "peak current", "flashes/frame"]


def _table(rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in [_COLUMNS, *rows]) for i in range(len(_COLUMNS))]
    return ["  " + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True))
            for r in [_COLUMNS, *rows]]


def result_text(result: TuneResult, frontier_rows: int = 12) -> str:
    """The search result for people: best design, runner-ups, frontier, exclusions."""
    from .units import render

    lim = result.limits
    lines = [f"[tune] {result.candidates} candidates in {result.seconds:.2f} s, "
             f"{result.feasible} feasible (retention >= {lim.min_retention:.4g}, thermal "
             f"margin >= {lim.min_margin:.3g} K)"]
    b = result.best
    if b is None:
        lines.append("no feasible design")
        if result.explanation:
            lines.append("  " + result.explanation)
    else:
        lines += ["best (light per frame, ties to the larger margin):",
                  f"  strobe.pulse_width     {render(b.pulse_width_s, 'time')}",
                  f"  supply.series_resistor {render(b.series_resistor_ohm, 'resistance')}",
                  f"  strobe.every           {b.every}",
                  f"  supply.voltage         {render(b.supply_voltage_v, 'voltage')}",
                  f"  light per frame        {b.light_per_frame:.4g} A s",
                  f"  limited by             {b.limited_by}",
                  f"  retention {b.retention:.4f}, junction peak {b.junction_peak_c:.1f} degC "
                  f"(margin {b.thermal_margin_k:.1f} K), peak current "
                  f"{render(b.peak_current_a, 'current')}, {b.flashes_per_frame} flashes/frame"]
        if result.plan is not None:
            lines.append(f"  check verdict of the tuned rig: {result.plan.verdict}")
        lines += ["", "best and runner-ups:", *_table([_design_row(d) for d in
                                                      [b, *result.runner_ups]])]
    if result.rejected_by_check:
        lines += ["", "rejected by check (the search's model passed them):"]
        for r in result.rejected_by_check:
            lines.append(f"  {render(r['pulse_width_s'], 'time')}, "
                         f"{render(r['series_resistor_ohm'], 'resistance')}, every "
                         f"{r['every']}: {', '.join(r['codes'])}")
    if result.frontier:
        front = result.frontier
        step = max(1, math.ceil(len(front) / frontier_rows))
        shown = front[::step]
        if shown[-1] is not front[-1]:
            shown.append(front[-1])
        lines += ["", f"frontier, light against retention ({len(front)} points over the "
                      "designs that meet every other constraint):",
                  *_table([_design_row(d) for d in shown])]
    lines += ["", "candidates excluded by each constraint (alone):"]
    for name, n in sorted(result.excluded.items(), key=lambda kv: -kv[1]):
        lines.append(f"  {name:<22} {n:>10} ({result.only_excluded.get(name, 0)})")
    return "\n".join(lines) + "\n"


# --- writing the tuned rig ------------------------------------------------------------------

_HEADER = re.compile(r"^\s*\[\s*([A-Za-z0-9_.\-]+)\s*\]\s*(#.*)?$")
_KEY = re.compile(r"^(\s*)([A-Za-z0-9_\-]+)(\s*=\s*)(.*)$")


def _split_comment(rest: str) -> tuple[str, str]:
    """Value and trailing comment of a simple TOML value (quoted strings, numbers)."""
    in_str = None
    for i, ch in enumerate(rest):
        if in_str:
            if ch == in_str:
                in_str = None
        elif ch in "\"'":
            in_str = ch
        elif ch == "#":
            j = i
            while j > 0 and rest[j - 1] in " \t":
                j -= 1
            return rest[:j], rest[j:]
    return rest.rstrip(), rest[len(rest.rstrip()):]


def _render_value(value: float, kind: str) -> str:
    """A short, exact-enough unit string: 4-6 significant digits with an SI prefix."""
    from . import units

    for digits in (4, 5, 6, 8, 10, 12, 15, 17):
        text = units.render(value, kind, digits=digits).replace("\u03a9", "ohm")
        if math.isclose(units.parse(text, kind), value, rel_tol=1e-12, abs_tol=0.0):
            return text
    return _quantity(value, kind)


def tuned_rig_text(text: str, design: Design, min_retention: float | None = None) -> str:
    """The user's TOML with only the tuned values replaced (comments and layout kept).

    ``strobe.pulse_width``, ``strobe.every``, ``supply.series_resistor`` and
    ``supply.voltage`` are rewritten in place when they change (trailing comments kept); a
    key that is absent (``every`` defaults to 1) is added at the end of its table.
    ``min_retention`` (given when the search's target differs from the rig's) is written to
    ``strobe.min_retention``.
    The result is re-loaded and compared with the design; a file whose tables are not plain
    ``[strobe]``/``[supply]`` headers raises RigError.
    """
    from .rig import loads_rig

    values = {
        ("strobe", "pulse_width"): f'"{_render_value(design.pulse_width_s, "time")}"',
        ("strobe", "every"): str(int(design.every)),
        ("supply", "series_resistor"): f'"{_render_value(design.series_resistor_ohm, "resistance")}"',  # noqa: E501
        ("supply", "voltage"): f'"{_render_value(design.supply_voltage_v, "voltage")}"',
    }
    if min_retention is not None:
        values[("strobe", "min_retention")] = f'"{min_retention * 100:.6g} %"'
    # Keys whose value does not change keep the user's own line.
    before = loads_rig(text)
    same = {("strobe", "pulse_width"): before.strobe.pulse_width == design.pulse_width_s,
            ("strobe", "every"): before.strobe.every == design.every,
            ("supply", "series_resistor"): math.isclose(
                before.supply.series_resistor, design.series_resistor_ohm, rel_tol=1e-12),
            ("supply", "voltage"): math.isclose(before.supply.voltage, design.supply_voltage_v,
                                                rel_tol=1e-12)}
    values = {k: v for k, v in values.items() if not same.get(k, False)}
    newline = "\r\n" if "\r\n" in text else "\n"
    lines = text.splitlines()
    table = ""
    done = set()
    last_key_line: dict[str, int] = {}
    seen_tables = set()
    out = []
    for line in lines:
        h = _HEADER.match(line)
        if h and not line.lstrip().startswith("[["):
            table = h.group(1).strip()
            seen_tables.add(table)
            out.append(line)
            last_key_line[table] = len(out) - 1
            continue
        m = _KEY.match(line)
        if m and (table, m.group(2)) in values:
            key = (table, m.group(2))
            _old, comment = _split_comment(m.group(4))
            out.append(f"{m.group(1)}{m.group(2)}{m.group(3)}{values[key]}{comment}")
            done.add(key)
            last_key_line[table] = len(out) - 1
            continue
        if m and table:
            last_key_line[table] = len(out) - 1
        out.append(line)
    for section in ("strobe", "supply"):
        if section not in seen_tables:
            raise RigError(section, None, "cannot write the tuned rig: expected a plain "
                                          f"[{section}] table in the rig file")
    # Keys that were absent: insert after the last key line of their table (from the end so
    # earlier positions stay valid).
    missing = [k for k in values if k not in done]
    for key in sorted(missing, key=lambda k: -last_key_line[k[0]]):
        out.insert(last_key_line[key[0]] + 1, f"{key[1]} = {values[key]}")
    new = newline.join(out) + (newline if text.endswith(("\n", "\r\n")) else "")
    rig = loads_rig(new)
    got = (rig.strobe.pulse_width, rig.strobe.every, rig.supply.series_resistor,
           rig.supply.voltage)
    want = (design.pulse_width_s, design.every, design.series_resistor_ohm,
            design.supply_voltage_v)
    if not all(math.isclose(a, b, rel_tol=1e-9) for a, b in zip(got, want, strict=True)):
        raise RigError("", None, "cannot write the tuned rig: the edited file does not read "
                                 "back the tuned values")
    return new
