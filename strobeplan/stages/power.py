"""Power stage: LED overdrive and junction temperature, MOSFET switching, supply, stuck-on.

Runs after the timing core (it needs the flash spacing, the flashes per frame and the frame
period). Sections (plan JSON): ``led``, ``switch``, ``supply``, ``stuck_on``.

Models (strobeplan.physics.led / thermal / switching / supply):

* The LED's forward voltage is fitted to its 1-3 datasheet points; the flash operating point
  integrates the storage capacitor's discharge over one pulse exactly (ESR, series resistor,
  on-resistance, the boost recharging at ``supply.max_current``), for as long as the current
  flows (``flash.current_width_s``: the gate time plus the switch's turn-off minus turn-on
  delay). Gate edges are neglected
  in the operating point (the flat top sets the peak; the edges are a few % of the pulse).
* Heat per pulse = (1 - efficiency) x LED electrical energy, spread over the gate time.
  Pattern: a burst of ``flashes_per_frame`` flashes at the flash spacing every frame, or a
  continuous train (``[strobe] continuous = true``, or no camera). Exact periodic peak of the
  Foster network from ``led.ambient``.
* Pulse rating: ``led.pulse_ratings`` interpolated log-log (conservative between duties);
  the duty is the in-burst duty (the pulses' own spacing), the stricter of the two.
* Stuck-on: the fault starts with the storage capacitor charged. It dumps into the LED (the
  exact discharge of the flash operating point, with the boost feeding its limit), then the
  boost holds the lower of its current limit and what its voltage drives through the string.
  The junction follows the Foster network driven by that heat from the mean junction
  temperature of normal operation (:func:`strobeplan.physics.supply.stuck_on_transient`):
  time to junction_max, the peak and when it happens; the series resistor's peak power and
  the dump's energy in it. In a design search's plans (``plan.rules_only``) the time to
  junction_max is resolved only as far as its comparison with ``REACTION_TIME`` needs (a
  time inside the same grid interval, on the same side of it) and the peak and its time are
  not computed (NaN): no rule reads them.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..physics import led as led_model
from ..physics import supply as supply_model
from ..physics import switching as sw_model
from ..physics import thermal as thermal_model
from ..plan import Section, q, scalar
from ..quickdc import dataclass
from ..timing import continuous_train


@dataclass
class LedSection(Section):
    """Design §4 ``led``: the flash operating point and the junction temperature."""

    peak_current_a: float = q("current")
    end_current_a: float = q("current")
    mean_current_a: float = q("current")
    pulse_energy_j: float = q("energy")
    pulse_charge_c: float = q("charge")
    heat_per_pulse_j: float = q("energy")
    average_current_a: float = q("current")
    average_power_w: float = q("power")
    light_per_frame_a_s: float = q("A s")
    junction_peak_k: float = q("temperature", json="junction_peak_c")
    junction_mean_k: float = q("temperature", json="junction_mean_c")
    junction_max_k: float = q("temperature", json="junction_max_c")
    thermal_margin_k: float = q("temperature_difference")
    min_margin_k: float = q("temperature_difference")
    single_pulse_rise_k: float = q("temperature_difference")
    droop_v: float = q("voltage")
    rated_pulse_current_a: float | None = q("current")
    table_pulse_current_a: float | None = q("current")
    max_pulse_current_a: float | None = q("current")
    rating_source: str = q()
    rating_inside_table: bool | None = q()
    rating_duty: float = q("ratio")
    pattern: str = q()
    flash_spacing_s: float = q("time")
    frame_period_s: float | None = q("time")
    flashes_per_burst: int = q()
    fit_n_vt_v: float = q("voltage")
    fit_saturation_current_a: float = q("current")
    fit_series_resistance_ohm: float = q("resistance")
    fit_assumed: str = q()
    datasheet_max_current_a: float = q("current")
    forward_voltage_peak_v: float = q("voltage")


@dataclass
class SwitchSection(Section):
    """Design §4 ``switch``: gate-charge switching of the LED current."""

    rise_time_s: float = q("time")
    fall_time_s: float = q("time")
    edges_source: str = q()
    turn_on_delay_s: float = q("time")
    turn_off_delay_s: float = q("time")
    gate_current_a: float = q("current")
    vds_peak_v: float | None = q("voltage")
    gate_drive_margin_v: float = q("voltage")
    peak_current_a: float = q("current")
    switching_energy_j: float = q("energy")
    conduction_energy_j: float = q("energy")
    average_power_w: float = q("power")
    gate_drive_power_w: float = q("power")
    switching_model: str = q()


@dataclass
class SupplySection(Section):
    """Design §4 ``supply``: what the boost and the storage capacitor must deliver."""

    average_power_w: float = q("power")
    average_current_a: float = q("current")
    energy_per_flash_j: float = q("energy")
    recharge_time_s: float = q("time")
    idle_time_s: float = q("time")
    burst_droop_v: float = q("voltage")
    droop_before_last_v: float = q("voltage")
    last_flash_current_a: float = q("current")
    brightness_change: float = q("ratio")
    stored_energy_j: float = q("energy")
    flash_rate_average_hz: float = q("frequency")


@dataclass
class StuckOnSection(Section):
    """``stuck_on``: the gate held on indefinitely, from a charged storage capacitor."""

    time_to_limit_s: float | None = q("time")
    peak_junction_k: float = q("temperature", json="peak_junction_c")
    peak_time_s: float = q("time")
    start_current_a: float = q("current")
    dc_current_a: float = q("current")
    limited_by: str = q()
    led_power_w: float = q("power")
    heat_w: float = q("power")
    resistor_power_w: float = q("power")
    resistor_peak_power_w: float = q("power")
    resistor_pulse_energy_j: float = q("energy")
    switch_power_w: float = q("power")
    start_k: float = q("temperature", json="start_c")
    capacitor_energy_j: float = q("energy")


@dataclass(frozen=True)
class Pattern:
    """The flash pattern the LED sees (fields broadcast over the design's arrays).

    A burst of ``n`` flashes at ``spacing`` every ``frame``; a continuous train is the burst
    of one flash every spacing (``n`` = 1, ``frame`` = spacing), which is what the Foster
    burst peak reduces to exactly.
    """

    burst: Any  # bool (array): a burst per camera frame, else a continuous train
    spacing: Any  # start-to-start spacing of flashes [s]
    n: Any  # flashes per burst (1 for continuous)
    frame: Any  # burst period [s] (the spacing for a continuous train)
    rate: Any  # average flash rate [Hz]


def flash_pattern(rig, timing) -> Pattern:
    """Burst of flashes_per_frame every frame, or a continuous train (``strobe.continuous``,
    no camera, or no flash in the exposure)."""
    spacing = np.asarray(timing.flash_period_ticks) * timing.tick_s
    if continuous_train(rig) or timing.frame_rate_hz is None:
        n = np.zeros_like(spacing)
        frame_len = spacing
    else:
        n = np.asarray(timing.flashes_per_frame, dtype=float)
        frame_len = 1.0 / np.asarray(timing.frame_rate_hz, dtype=float)
    burst = n >= 1
    n_b = np.where(burst, n, 1.0)
    frame = np.where(burst, frame_len, spacing)
    return Pattern(burst=burst, spacing=spacing, n=n_b, frame=frame, rate=n_b / frame)


def diode(rig) -> led_model.DiodeFit:
    pts = rig.led.forward_voltage
    return led_model.fit_forward_voltage([p.current for p in pts], [p.voltage for p in pts],
                                         series_resistance=rig.led.series_resistance,
                                         temperature=rig.led.ambient)


def gate_edges(rig):
    """(turn-on delay, rise, fall, source) of the LED current from the gate-charge model.

    Measured edges (``gate_driver.rise_time`` / ``fall_time``) override the estimate; without
    a switch and a driver, ``led.rise_time`` or ideal edges. Delays exclude the driver's
    propagation delay. [s]
    """
    gd, sw = rig.gate_driver, rig.switch
    if gd is not None and sw is not None:
        t = sw_model.switching_times(gd.supply, sw.threshold_voltage, sw.plateau_voltage,
                                     sw.gate_charge, sw.gate_source_charge,
                                     sw.gate_drain_charge, sw.rated_gate_voltage,
                                     gd.output_resistance, gd.gate_resistor)
        d_on, rise, d_off, fall = (float(x) for x in t)
        source = "gate-charge estimate"
    else:
        d_on = d_off = 0.0
        led_edge = rig.led.rise_time if (rig.led and rig.led.rise_time is not None) else None
        rise = fall = led_edge if led_edge is not None else 0.0
        source = "led.rise_time" if led_edge is not None else "ideal (no edge data)"
    if gd is not None and (gd.rise_time or gd.fall_time):
        rise = gd.rise_time or rise
        fall = gd.fall_time or fall
        source = "measured (gate_driver.rise_time/fall_time)"
    return d_on, d_off, rise, fall, source


# Time grid of the stuck-on transient (points per decade; its error is stated in
# physics.supply.stuck_on_transient: about 0.3 K high on the peak at 32).
STUCK_ON_POINTS_PER_DECADE = 32

# The two datasheet pulse limits disagree when they differ by more than this fraction.
RATING_DISAGREEMENT = 0.20

# Nobody notices and switches off a stuck gate faster (common practice): the stuck-on rules
# compare the time to the junction limit with it, and a design search's plans resolve that
# time only as far as this comparison needs.
REACTION_TIME = 10.0  # [s]


def pulse_limit(led, width, duty):
    """The LED's allowed pulse current: the lower of ``led.max_pulse_current`` and the
    rating interpolated from ``led.pulse_ratings`` at the flash's width and in-burst duty.

    Returns (allowed [A] or None, table value [A] or None, inside the table (bool or None),
    source text).
    """
    table = inside = None
    if led.pulse_ratings:
        table, inside = led_model.rated_pulse_current(
            width, duty, [p.width for p in led.pulse_ratings],
            [p.duty for p in led.pulse_ratings], [p.current for p in led.pulse_ratings])
        table, inside = scalar(np.asarray(table, dtype=float)), scalar(np.asarray(inside))
    flat = led.max_pulse_current
    if table is None and flat is None:
        return None, None, None, "none (thermal model only)"
    if table is None:
        return flat, None, None, "led.max_pulse_current"
    if flat is None:
        return table, table, inside, "led.pulse_ratings (log-log)"
    allowed = scalar(np.minimum(table, flat))
    source = "lower of led.max_pulse_current and led.pulse_ratings (log-log)"
    return allowed, table, inside, source


def _finite_or_none(x):
    """A scalar figure that may be infinite ("never") as None; arrays keep NaN for it."""
    x = np.where(np.isfinite(x), x, np.nan)
    return None if x.ndim == 0 and np.isnan(x) else scalar(x)


def compute(rig, design, plan) -> dict:
    """The power stage: ``led``, ``switch``, ``supply`` and ``stuck_on`` sections (a dict
    slot -> section; empty without [led] and [supply])."""
    if rig.led is None or rig.supply is None or plan.timing is None:
        return {}
    led, sup, sw = rig.led, rig.supply, rig.switch
    fit = diode(rig)
    pat = flash_pattern(rig, plan.timing)
    # The current flows for the gate time plus the switch's turn-off minus turn-on delay.
    width = np.asarray(plan.flash.current_width_s, dtype=float)
    v_sup = np.asarray(design.supply_voltage, dtype=float)
    r_ser = np.asarray(design.series_resistor, dtype=float)
    ron = sw.on_resistance if sw is not None else 0.0
    op = led_model.pulse_operating_point(v_sup, sup.storage_capacitance, sup.esr, r_ser, ron,
                                         sup.max_current, width, fit.n_vt,
                                         fit.saturation_current, fit.series_resistance)
    i_pk = np.asarray(op.peak_current)
    heat = (1.0 - led.efficiency) * np.asarray(op.led_energy)
    r = [t.resistance for t in led.thermal]
    tau = [t.time_constant for t in led.thermal]
    p_heat = heat / width
    rise = thermal_model.burst_peak(p_heat, width, pat.spacing, pat.n, pat.frame, r, tau)
    mean = thermal_model.mean_rise(p_heat, width * pat.rate, r)
    t_peak = led.ambient + rise
    duty_burst = width / pat.spacing
    rated, table, inside, source = pulse_limit(led, width, duty_burst)
    n_frame = plan.timing.flashes_per_frame if rig.camera is not None else 1
    area = plan.exposure.optical_area_s
    v_pk = led_model.forward_voltage(i_pk, fit.n_vt, fit.saturation_current,
                                     fit.series_resistance)
    out = {}
    out["led"] = LedSection(
        peak_current_a=scalar(i_pk), end_current_a=scalar(op.end_current),
        mean_current_a=scalar(op.mean_current), pulse_energy_j=scalar(op.led_energy),
        pulse_charge_c=scalar(op.charge), heat_per_pulse_j=scalar(heat),
        average_current_a=scalar(op.charge * pat.rate),
        average_power_w=scalar(op.led_energy * pat.rate),
        light_per_frame_a_s=scalar(np.asarray(op.mean_current) * area
                                   * np.asarray(n_frame if n_frame is not None else 0)),
        junction_peak_k=scalar(t_peak), junction_mean_k=scalar(led.ambient + mean),
        junction_max_k=led.junction_max, thermal_margin_k=scalar(led.junction_max - t_peak),
        min_margin_k=led.min_margin,
        single_pulse_rise_k=scalar(p_heat * thermal_model.zth(width, r, tau)),
        droop_v=scalar(op.droop), rated_pulse_current_a=rated,
        table_pulse_current_a=table, max_pulse_current_a=led.max_pulse_current,
        rating_source=source, rating_inside_table=inside, rating_duty=scalar(duty_burst),
        pattern=scalar(np.where(pat.burst, "burst", "continuous")),
        flash_spacing_s=scalar(pat.spacing),
        frame_period_s=scalar(np.where(pat.burst, pat.frame, np.nan)),
        flashes_per_burst=scalar(pat.n.astype(np.int64)),
        fit_n_vt_v=fit.n_vt, fit_saturation_current_a=fit.saturation_current,
        fit_series_resistance_ohm=fit.series_resistance, fit_assumed=fit.assumed,
        datasheet_max_current_a=max(p.current for p in led.forward_voltage),
        forward_voltage_peak_v=scalar(v_pk),
    )

    d_on, d_off, t_rise, t_fall, edge_src = gate_edges(rig)
    conduction = np.asarray(op.i2t) * ron
    if sw is not None and rig.gate_driver is not None:
        gd = rig.gate_driver
        ig = float(sw_model.gate_current_on(gd.supply, sw.plateau_voltage,
                                            gd.output_resistance, gd.gate_resistor))
        margin = float(sw_model.gate_drive_margin(gd.supply, sw.rated_gate_voltage,
                                                  sw.plateau_voltage))
        e_sw = (sw_model.edge_energy(v_sup, i_pk, t_rise)
                + sw_model.edge_energy(v_sup, op.end_current, t_fall))
        vds = (scalar(sw_model.turn_off_overshoot(v_sup, sw.loop_inductance, op.end_current,
                                                  t_fall))
               if sw.loop_inductance is not None else None)
        out["switch"] = SwitchSection(
            rise_time_s=t_rise, fall_time_s=t_fall, edges_source=edge_src,
            turn_on_delay_s=d_on, turn_off_delay_s=d_off, gate_current_a=ig,
            vds_peak_v=vds, gate_drive_margin_v=margin, peak_current_a=scalar(i_pk),
            switching_energy_j=scalar(e_sw), conduction_energy_j=scalar(conduction),
            average_power_w=scalar((e_sw + conduction) * pat.rate),
            gate_drive_power_w=scalar(sw_model.gate_drive_power(sw.gate_charge, gd.supply,
                                                                pat.rate)),
            switching_model="resistive/LED load, V*I*t/6 per edge",
        )

    # Energy drawn per flash: LED + series resistor + switch + ESR (ESR taken at the full
    # string current: conservative).
    e_flash = np.asarray(op.led_energy) + np.asarray(op.i2t) * (r_ser + ron + sup.esr)
    sag = supply_model.burst_sag(v_sup, sup.storage_capacitance, sup.esr, r_ser, ron,
                                 sup.max_current, width, pat.spacing, pat.n, fit.n_vt,
                                 fit.saturation_current, fit.series_resistance, first=op)
    idle = pat.frame - (pat.n - 1) * pat.spacing - width
    stored = supply_model.stored_energy(sup.storage_capacitance, v_sup)
    out["supply"] = SupplySection(
        average_power_w=scalar(supply_model.average_power(e_flash, pat.rate)),
        average_current_a=scalar(supply_model.average_current(op.charge, pat.rate)),
        energy_per_flash_j=scalar(e_flash),
        recharge_time_s=scalar(supply_model.recharge_time(sup.storage_capacitance,
                                                          sag.at_end, sup.max_current)),
        idle_time_s=scalar(idle), burst_droop_v=scalar(sag.at_end),
        droop_before_last_v=scalar(sag.before_last),
        last_flash_current_a=scalar(sag.last_current),
        brightness_change=scalar(supply_model.brightness_change(i_pk, sag.last_current)),
        stored_energy_j=scalar(stored), flash_rate_average_hz=scalar(pat.rate),
    )

    # Stuck-on gate: the charged capacitor dumps into the LED, then the boost holds the
    # string at its current limit (or what its voltage drives), from the mean junction
    # temperature of normal operation.
    st = supply_model.stuck_on_state(v_sup, sup.max_current, r_ser, ron, fit.n_vt,
                                     fit.saturation_current, fit.series_resistance)
    heat_dc = (1.0 - led.efficiency) * np.asarray(st.led_power)
    t_start = led.ambient + mean
    dump = supply_model.stuck_on_transient(
        v_sup, sup.storage_capacitance, sup.esr, r_ser, ron, sup.max_current, fit.n_vt,
        fit.saturation_current, fit.series_resistance, led.efficiency, r, tau, led.ambient,
        t_start, led.junction_max, points_per_decade=STUCK_ON_POINTS_PER_DECADE,
        verdict_time=REACTION_TIME if plan.rules_only else None)
    out["stuck_on"] = StuckOnSection(
        time_to_limit_s=_finite_or_none(np.asarray(dump.time_to_limit, dtype=float)),
        peak_junction_k=scalar(dump.peak_temperature),
        peak_time_s=scalar(dump.peak_time),
        start_current_a=scalar(dump.start_current),
        dc_current_a=scalar(st.current),
        limited_by=scalar(np.where(st.boost_limited, "boost current limit",
                                   "string resistance")),
        led_power_w=scalar(st.led_power), heat_w=scalar(heat_dc),
        resistor_power_w=scalar(st.resistor_power),
        resistor_peak_power_w=scalar(dump.resistor_peak_power),
        resistor_pulse_energy_j=scalar(dump.resistor_pulse_energy),
        switch_power_w=scalar(st.switch_power),
        start_k=scalar(t_start), capacitor_energy_j=scalar(stored),
    )
    return out
