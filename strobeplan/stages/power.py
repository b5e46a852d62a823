"""Power stage: LED overdrive and junction temperature, MOSFET switching, supply, stuck-on.

Runs after the timing core (it needs the flash spacing, the flashes per frame and the frame
period). Sections (plan JSON): ``led``, ``switch``, ``supply``, ``stuck_on``.

Models (strobeplan.physics.led / thermal / switching / supply):

* The LED's forward voltage is fitted to its 1-3 datasheet points; the flash operating point
  integrates the storage capacitor's discharge over one pulse exactly (ESR, series resistor,
  on-resistance, the boost recharging at ``supply.max_current``). Gate edges are neglected
  in the operating point (the flat top sets the peak; the edges are a few % of the pulse).
* Heat per pulse = (1 - efficiency) x LED electrical energy, spread over the gate time.
  Pattern: a burst of ``flashes_per_frame`` flashes at the flash spacing every frame, or a
  continuous train (``[strobe] continuous = true``, or no camera). Exact periodic peak of the
  Foster network from ``led.ambient``.
* Pulse rating: ``led.pulse_ratings`` interpolated log-log (conservative between duties);
  the duty is the in-burst duty (the pulses' own spacing), the stricter of the two.
* Stuck-on: after the capacitor has emptied, the boost holds the lower of its current limit
  and what its voltage drives through the string. The time to junction_max is the Foster
  step response from the mean junction temperature of normal operation (0 when that is
  already above the limit). The capacitor's initial dump is not added: it lasts about
  C x R_string and its energy is reported as ``capacitor_energy_j``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..physics import led as led_model
from ..physics import supply as supply_model
from ..physics import switching as sw_model
from ..physics import thermal as thermal_model
from ..plan import Section

ZERO_C = 273.15  # [K]


@dataclass
class LedSection(Section):
    """Design §4 ``led``: the flash operating point and the junction temperature."""

    peak_current_a: float
    end_current_a: float
    mean_current_a: float
    pulse_energy_j: float
    pulse_charge_c: float
    heat_per_pulse_j: float
    average_current_a: float
    average_power_w: float
    junction_peak_c: float
    junction_mean_c: float
    junction_max_c: float
    thermal_margin_k: float
    single_pulse_rise_k: float
    droop_v: float
    rated_pulse_current_a: float | None
    rating_source: str
    rating_inside_table: bool | None
    rating_duty: float
    pattern: str
    flash_spacing_s: float
    frame_period_s: float | None
    flashes_per_burst: int
    fit_n_vt_v: float
    fit_saturation_current_a: float
    fit_series_resistance_ohm: float
    fit_assumed: str
    datasheet_max_current_a: float
    forward_voltage_peak_v: float


@dataclass
class SwitchSection(Section):
    """Design §4 ``switch``: gate-charge switching of the LED current."""

    rise_time_s: float
    fall_time_s: float
    edges_source: str
    turn_on_delay_s: float
    turn_off_delay_s: float
    gate_current_a: float
    vds_peak_v: float | None
    gate_drive_margin_v: float
    peak_current_a: float
    switching_energy_j: float
    conduction_energy_j: float
    average_power_w: float
    gate_drive_power_w: float
    switching_model: str


@dataclass
class SupplySection(Section):
    """Design §4 ``supply``: what the boost and the storage capacitor must deliver."""

    average_power_w: float
    average_current_a: float
    energy_per_flash_j: float
    recharge_time_s: float
    idle_time_s: float
    burst_droop_v: float
    droop_before_last_v: float
    last_flash_current_a: float
    brightness_change: float
    stored_energy_j: float
    flash_rate_average_hz: float


@dataclass
class StuckOnSection(Section):
    """Design §4 ``stuck_on``: the gate held on indefinitely."""

    time_to_limit_s: float | None
    dc_current_a: float
    limited_by: str
    led_power_w: float
    heat_w: float
    resistor_power_w: float
    switch_power_w: float
    start_c: float
    capacitor_energy_j: float


@dataclass(frozen=True)
class Pattern:
    """The flash pattern the LED sees."""

    kind: str  # "burst" or "continuous"
    spacing: float  # start-to-start spacing of flashes [s]
    n: int  # flashes per burst (1 for continuous)
    frame: float | None  # burst period [s]
    rate: float  # average flash rate [Hz]


def flash_pattern(rig, timing) -> Pattern:
    """Burst of flashes_per_frame every frame, or a continuous train."""
    spacing = timing.flash_period_ticks * timing.tick_s
    n = timing.flashes_per_frame
    if rig.strobe.continuous or rig.camera is None or not n or timing.frame_rate_hz is None:
        return Pattern("continuous", spacing, 1, None, 1.0 / spacing)
    frame = 1.0 / timing.frame_rate_hz
    return Pattern("burst", spacing, int(n), frame, n / frame)


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


def build(rig, plan) -> None:
    if rig.led is None or rig.supply is None or plan.timing is None:
        return
    led, sup, sw = rig.led, rig.supply, rig.switch
    fit = diode(rig)
    pat = flash_pattern(rig, plan.timing)
    width = rig.strobe.pulse_width
    ron = sw.on_resistance if sw is not None else 0.0
    op = led_model.pulse_operating_point(sup.voltage, sup.storage_capacitance, sup.esr,
                                         sup.series_resistor, ron, sup.max_current, width,
                                         fit.n_vt, fit.saturation_current,
                                         fit.series_resistance)
    i_pk = op.peak_current
    heat = (1.0 - led.efficiency) * op.led_energy
    r = [t.resistance for t in led.thermal]
    tau = [t.time_constant for t in led.thermal]
    p_heat = heat / width
    if pat.kind == "burst":
        rise = float(thermal_model.burst_peak(p_heat, width, pat.spacing, pat.n, pat.frame,
                                              r, tau))
    else:
        rise = float(thermal_model.pulse_train_peak(p_heat, width, pat.spacing, r, tau))
    duty_avg = width * pat.rate
    mean = float(thermal_model.mean_rise(p_heat, duty_avg, r))
    t_peak = led.ambient + rise
    duty_burst = width / pat.spacing

    if led.pulse_ratings:
        rated, inside = led_model.rated_pulse_current(
            width, duty_burst, [p.width for p in led.pulse_ratings],
            [p.duty for p in led.pulse_ratings], [p.current for p in led.pulse_ratings])
        rated, inside, source = float(rated), bool(inside), "led.pulse_ratings (log-log)"
    elif led.max_pulse_current is not None:
        rated, inside, source = led.max_pulse_current, None, "led.max_pulse_current"
    else:
        rated, inside, source = None, None, "none (thermal model only)"

    v_pk = float(led_model.forward_voltage(i_pk, fit.n_vt, fit.saturation_current,
                                           fit.series_resistance))
    plan.led = LedSection(
        peak_current_a=i_pk, end_current_a=op.end_current, mean_current_a=op.mean_current,
        pulse_energy_j=op.led_energy, pulse_charge_c=op.charge, heat_per_pulse_j=heat,
        average_current_a=op.charge * pat.rate, average_power_w=op.led_energy * pat.rate,
        junction_peak_c=t_peak - ZERO_C, junction_mean_c=led.ambient + mean - ZERO_C,
        junction_max_c=led.junction_max - ZERO_C, thermal_margin_k=led.junction_max - t_peak,
        single_pulse_rise_k=float(p_heat * thermal_model.zth(width, r, tau)),
        droop_v=op.droop, rated_pulse_current_a=rated, rating_source=source,
        rating_inside_table=inside, rating_duty=duty_burst, pattern=pat.kind,
        flash_spacing_s=pat.spacing, frame_period_s=pat.frame, flashes_per_burst=pat.n,
        fit_n_vt_v=fit.n_vt, fit_saturation_current_a=fit.saturation_current,
        fit_series_resistance_ohm=fit.series_resistance, fit_assumed=fit.assumed,
        datasheet_max_current_a=max(p.current for p in led.forward_voltage),
        forward_voltage_peak_v=v_pk,
    )

    # Switch
    d_on, d_off, t_rise, t_fall, edge_src = gate_edges(rig)
    conduction = op.i2t * ron
    if sw is not None and rig.gate_driver is not None:
        gd = rig.gate_driver
        ig = float(sw_model.gate_current_on(gd.supply, sw.plateau_voltage,
                                            gd.output_resistance, gd.gate_resistor))
        margin = float(sw_model.gate_drive_margin(gd.supply, sw.rated_gate_voltage,
                                                  sw.plateau_voltage))
        e_sw = float(sw_model.edge_energy(sup.voltage, i_pk, t_rise)
                     + sw_model.edge_energy(sup.voltage, op.end_current, t_fall))
        vds = (float(sw_model.turn_off_overshoot(sup.voltage, sw.loop_inductance,
                                                 op.end_current, t_fall))
               if sw.loop_inductance is not None else None)
        plan.switch = SwitchSection(
            rise_time_s=t_rise, fall_time_s=t_fall, edges_source=edge_src,
            turn_on_delay_s=d_on, turn_off_delay_s=d_off, gate_current_a=ig,
            vds_peak_v=vds, gate_drive_margin_v=margin, peak_current_a=i_pk,
            switching_energy_j=e_sw, conduction_energy_j=conduction,
            average_power_w=(e_sw + conduction) * pat.rate,
            gate_drive_power_w=float(sw_model.gate_drive_power(sw.gate_charge, gd.supply,
                                                               pat.rate)),
            switching_model="resistive/LED load, V*I*t/6 per edge",
        )

    # Supply
    # energy drawn per flash: LED + series resistor + switch + ESR (ESR taken at the full
    # string current: conservative)
    e_flash = op.led_energy + op.i2t * (sup.series_resistor + ron + sup.esr)
    sag = supply_model.burst_sag(sup.voltage, sup.storage_capacitance, sup.esr,
                                 sup.series_resistor, ron, sup.max_current, width, pat.spacing,
                                 pat.n, fit.n_vt, fit.saturation_current,
                                 fit.series_resistance)
    burst_len = (pat.n - 1) * pat.spacing + width
    idle = (pat.frame - burst_len) if pat.frame is not None else pat.spacing - width
    plan.supply = SupplySection(
        average_power_w=float(supply_model.average_power(e_flash, pat.rate)),
        average_current_a=float(supply_model.average_current(op.charge, pat.rate)),
        energy_per_flash_j=e_flash,
        recharge_time_s=float(supply_model.recharge_time(sup.storage_capacitance,
                                                         sag.at_end, sup.max_current)),
        idle_time_s=idle, burst_droop_v=sag.at_end, droop_before_last_v=sag.before_last,
        last_flash_current_a=sag.last_current,
        brightness_change=float(supply_model.brightness_change(i_pk, sag.last_current)),
        stored_energy_j=float(supply_model.stored_energy(sup.storage_capacitance,
                                                         sup.voltage)),
        flash_rate_average_hz=pat.rate,
    )

    # Stuck-on gate
    s = supply_model.stuck_on_state(sup.voltage, sup.max_current, sup.series_resistor, ron,
                                    fit.n_vt, fit.saturation_current, fit.series_resistance)
    heat_dc = (1.0 - led.efficiency) * float(s.led_power)
    t_start = led.ambient + mean
    t_lim = float(thermal_model.step_time_to_rise(heat_dc, led.junction_max - t_start, r, tau))
    plan.stuck_on = StuckOnSection(
        time_to_limit_s=t_lim if math.isfinite(t_lim) else None,
        dc_current_a=float(s.current),
        limited_by="boost current limit" if bool(s.boost_limited) else "string resistance",
        led_power_w=float(s.led_power), heat_w=heat_dc,
        resistor_power_w=float(s.resistor_power), switch_power_w=float(s.switch_power),
        start_c=t_start - ZERO_C,
        capacitor_energy_j=plan.supply.stored_energy_j,
    )
