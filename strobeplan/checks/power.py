"""Power-stage rules: LED overdrive and temperature, switch, supply, stuck-on gate."""

from __future__ import annotations

import numpy as np

from ..physics.arrays import expanded
from ..stages.power import RATING_DISAGREEMENT, REACTION_TIME
from ..units import render
from .registry import Hit, rule

EXTRAPOLATION_RATIO = 2.0  # fit used beyond 2x the highest datasheet point (project choice)
EDGE_FRACTION = 0.10  # edges over 10 % of the pulse width (project choice)
BRIGHTNESS_CHANGE_MAX = 0.05  # 5 % flash-to-flash change is visible (common practice)

STUCK_ON_FIX = ("limit the gate's on-time in hardware, independent of the firmware (e.g. an "
                "RC-coupled gate or a monostable that ends every pulse), and fuse the LED "
                "string; a larger series resistor or a lower boost current limit also lowers "
                "the stuck-on current")


def _c(kelvin):
    return render(kelvin, "temperature")


@rule("led.pulse_over_rating", "hazard",
      trigger="the flash's peak LED current exceeds the allowed pulse current "
              "(led.pulse_ratings interpolated log-log at the pulse width and in-burst duty, "
              "else led.max_pulse_current)",
      fix="raise supply.series_resistor or lower supply.voltage until led.peak_current_a is "
          "below led.rated_pulse_current_a, or shorten the pulse / lower the duty",
      example=("unsafe-bench", {}))
def pulse_over_rating(plan):
    s = plan.led
    if s is None or s.rated_pulse_current_a is None:
        return None
    return Hit(lambda: f"peak LED current {render(s.peak_current_a, 'current')} exceeds the "
               f"{render(s.rated_pulse_current_a, 'current')} allowed by {s.rating_source} at "
               f"{render(plan.design.pulse_width, 'time')} and {s.rating_duty:.2%} duty",
               value=s.peak_current_a, limit=s.rated_pulse_current_a, unit="A",
               when=~np.less_equal(*expanded(s.peak_current_a, s.rated_pulse_current_a)))


@rule("led.ratings_disagree", "note",
      trigger=f"led.max_pulse_current and the led.pulse_ratings value at the flash's width and "
              f"duty differ by more than {RATING_DISAGREEMENT:.0%}: the lower one is used",
      fix="check both datasheet figures (a flat maximum usually belongs to one width and duty "
          "of the pulse table)",
      example=("levitator-40k", {"led.max_pulse_current": "3 A"}))
def ratings_disagree(plan):
    s = plan.led
    if s is None or s.table_pulse_current_a is None or s.max_pulse_current_a is None:
        return None
    table, flat = np.asarray(s.table_pulse_current_a), s.max_pulse_current_a
    spread = np.abs(table - flat) / np.minimum(table, flat)
    return Hit(lambda: f"led.max_pulse_current {render(flat, 'current')} and the pulse table's "
               f"{render(s.table_pulse_current_a, 'current')} at "
               f"{render(plan.design.pulse_width, 'time')} differ by {spread:.0%}; the lower "
               "is the limit", value=s.table_pulse_current_a, limit=flat, unit="A",
               when=spread > RATING_DISAGREEMENT)


@rule("led.rating_outside_table", "warning",
      trigger="the planned pulse width is longer than the led.pulse_ratings table covers, or "
              "its in-burst duty is above the table's highest duty: the rating is extrapolated",
      fix="add the datasheet's rating for this width and duty to led.pulse_ratings, or move "
          "the pulse inside the table",
      example=("unsafe-bench", {}))
def rating_outside_table(plan):
    s = plan.led
    if s is None or s.rating_inside_table is None:
        return None
    return Hit(lambda: f"{render(plan.design.pulse_width, 'time')} at {s.rating_duty:.2%} "
               f"in-burst duty lies outside led.pulse_ratings; the allowed current "
               f"{render(s.table_pulse_current_a, 'current')} is extrapolated",
               value=s.rating_duty, unit="1", when=~np.asarray(s.rating_inside_table))


@rule("led.no_pulse_rating", "warning",
      trigger="no led.pulse_ratings table: the overdrive is checked by the thermal model only",
      fix="copy the datasheet's peak-current-versus-pulse-width curve into led.pulse_ratings",
      example=("rangefinder-58k", {}))
def no_pulse_rating(plan):
    s = plan.led
    if s is None or plan.rig.led.pulse_ratings:
        return None
    return Hit(lambda: f"no pulse-rating table: the {render(s.peak_current_a, 'current')} "
                       f"overdrive is "
               f"checked against the junction temperature only")


@rule("led.fit_extrapolated", "warning",
      trigger=f"the peak current is more than {EXTRAPOLATION_RATIO:g}x the highest "
              "led.forward_voltage datasheet point: the diode fit is extrapolated",
      fix="add a forward-voltage point at a pulsed current near the operating point (from the "
          "datasheet's pulsed I-V curve or a bench measurement)",
      example=("levitator-40k", {}))
def fit_extrapolated(plan):
    s = plan.led
    if s is None:
        return None
    return Hit(lambda: f"peak current {render(s.peak_current_a, 'current')} is "
               f"{s.peak_current_a / s.datasheet_max_current_a:.1f}x the highest datasheet "
               f"point ({render(s.datasheet_max_current_a, 'current')}); the forward voltage, "
               "hence the current, is an estimate", value=s.peak_current_a,
               limit=EXTRAPOLATION_RATIO * s.datasheet_max_current_a, unit="A",
               when=~(np.asarray(s.peak_current_a)
                      <= EXTRAPOLATION_RATIO * s.datasheet_max_current_a))


@rule("led.fit_assumed", "note",
      trigger="fewer than three led.forward_voltage points: part of the diode model is assumed "
              "(apparent ideality 2 and/or the series resistance)",
      fix="give three datasheet points spanning the operating range, or led.series_resistance",
      example=("unsafe-bench", {}))
def fit_assumed(plan):
    s = plan.led
    if s is None or not s.fit_assumed or s.fit_assumed == "series resistance given":
        return None
    return Hit(lambda: f"LED model: {s.fit_assumed}")


@rule("led.junction_over_limit", "hazard",
      trigger="the peak junction temperature of the periodic flash pattern exceeds "
              "led.junction_max",
      fix="lower the peak current (supply.series_resistor, supply.voltage), shorten the pulse, "
          "flash fewer times per frame, or improve the heat sinking (led.thermal)",
      example=("unsafe-bench", {"supply.series_resistor": "0.5 ohm"}))
def junction_over_limit(plan):
    s = plan.led
    if s is None:
        return None
    lim = s.junction_max_k
    return Hit(lambda: f"junction peaks at {_c(s.junction_peak_k)}, above the {_c(lim)} limit",
               value=s.junction_peak_k, limit=lim, unit="K",
               when=~(np.asarray(s.thermal_margin_k) >= 0))


@rule("led.thermal_margin_low", "warning",
      trigger="the peak junction temperature is within led.min_margin (default 10 K, common "
              "practice) of led.junction_max",
      fix="lower the peak current or the flash count, or improve the heat sinking",
      example=("unsafe-bench", {"supply.series_resistor": "3.6 ohm"}))
def thermal_margin_low(plan):
    s = plan.led
    if s is None:
        return None
    m = np.asarray(s.thermal_margin_k)
    return Hit(lambda: f"only {s.thermal_margin_k:.1f} K below the junction limit (keep "
               f"{s.min_margin_k:g} K)", value=s.thermal_margin_k, limit=s.min_margin_k,
               unit="K", when=(m >= 0) & (m < s.min_margin_k))


@rule("led.average_over_dc_rating", "hazard",
      trigger="the average LED current over the whole flash pattern exceeds led.max_dc_current "
              "(common practice: the DC rating bounds the average)",
      fix="flash fewer times per frame, lower the frame rate or the peak current",
      example=("levitator-40k", {"strobe.continuous": True, "strobe.pulse_width": "5 us"}))
def average_over_dc_rating(plan):
    s = plan.led
    if s is None:
        return None
    lim = plan.rig.led.max_dc_current
    return Hit(lambda: f"average LED current {render(s.average_current_a, 'current')} exceeds "
                       f"the DC "
               f"rating {render(lim, 'current')}", value=s.average_current_a, limit=lim,
               unit="A", when=~(np.asarray(s.average_current_a) <= lim))


@rule("switch.gate_drive_low", "hazard",
      trigger="gate_driver.supply is below switch.rated_gate_voltage, or within 1 V of "
              "switch.plateau_voltage: the MOSFET may stay in its linear region and overheat",
      fix="use a gate-driver supply at or above the switch's rated gate voltage (and at least "
          "1 V above its plateau), or a logic-level MOSFET rated at the available drive",
      example=("unsafe-bench", {}))
def gate_drive_low(plan):
    s = plan.switch
    if s is None or s.gate_drive_margin_v >= 0:
        return None
    sw, gd = plan.rig.switch, plan.rig.gate_driver
    return Hit(lambda: f"{render(gd.supply, 'voltage')} gate drive against a "
               f"{render(sw.rated_gate_voltage, 'voltage')} rating and a "
               f"{render(sw.plateau_voltage, 'voltage')} plateau (margin "
               f"{render(s.gate_drive_margin_v, 'voltage')})", value=gd.supply,
               limit=gd.supply - s.gate_drive_margin_v, unit="V")


@rule("switch.overshoot", "hazard",
      trigger="turn-off overshoot V + L*di/dt (supply.voltage, switch.loop_inductance, the "
              "fall time) exceeds switch.max_drain_voltage",
      fix="shorten the capacitor-LED-switch loop (less inductance), slow the turn-off with a "
          "larger gate resistor, add a clamp or snubber, or use a higher-voltage switch",
      example=("levitator-40k", {"switch.loop_inductance": "100 nH"}))
def overshoot(plan):
    s = plan.switch
    if s is None or s.vds_peak_v is None:
        return None
    lim = plan.rig.switch.max_drain_voltage
    return Hit(lambda: f"drain peaks at {render(s.vds_peak_v, 'voltage')} at turn-off, above "
               f"the {render(lim, 'voltage')} rating", value=s.vds_peak_v, limit=lim, unit="V",
               when=~(np.asarray(s.vds_peak_v) <= lim))


@rule("switch.no_loop_inductance", "note",
      trigger="switch.loop_inductance not given: the turn-off overshoot is not checked",
      fix="estimate the loop inductance (about 1 nH per mm of loop) and give it",
      example=("levitator-40k", {"switch.loop_inductance": None}))
def no_loop_inductance(plan):
    if plan.switch is None or plan.rig.switch.loop_inductance is not None:
        return None
    return Hit("turn-off overshoot not checked (no switch.loop_inductance)")


@rule("switch.pulse_over_rating", "hazard",
      trigger="the flash's peak current exceeds switch.max_pulse_current",
      fix="raise supply.series_resistor or use a switch with a higher pulsed-current rating",
      example=("levitator-40k", {"switch.max_pulse_current": "5 A"}))
def switch_pulse_over_rating(plan):
    s = plan.switch
    if s is None:
        return None
    lim = plan.rig.switch.max_pulse_current
    return Hit(lambda: f"peak current {render(s.peak_current_a, 'current')} exceeds the switch's "
               f"{render(lim, 'current')} pulse rating", value=s.peak_current_a, limit=lim,
               unit="A", when=~(np.asarray(s.peak_current_a) <= lim))


@rule("switch.slow_edges", "warning",
      trigger=f"rise plus fall time of the LED current exceeds {EDGE_FRACTION:.0%} of the "
              "pulse width: the flash is not the rectangle the gate time suggests",
      fix="more gate current (higher driver supply, smaller gate resistor), a switch with less "
          "gate charge, or a longer pulse",
      example=("levitator-40k", {"gate_driver.gate_resistor": "47 ohm"}))
def slow_edges(plan):
    s = plan.switch
    if s is None:
        return None
    width = plan.design.pulse_width
    return Hit(lambda: f"edges {render(s.rise_time_s, 'time')} + {render(s.fall_time_s, 'time')} "
               f"({s.edges_source}) against a {render(width, 'time')} pulse",
               value=s.rise_time_s + s.fall_time_s, limit=EDGE_FRACTION * width, unit="s",
               when=~(s.rise_time_s + s.fall_time_s <= EDGE_FRACTION * np.asarray(width)))


@rule("switch.edges_measured", "note",
      trigger="gate_driver.rise_time / fall_time given: measured edges replace the gate-charge "
              "estimate",
      fix="nothing to fix; remove the measured edges to see the estimate",
      example=("levitator-40k", {"gate_driver.rise_time": "40 ns"}))
def edges_measured(plan):
    s = plan.switch
    if s is None or not s.edges_source.startswith("measured"):
        return None
    return Hit(lambda: f"edges from measurement: rise {render(s.rise_time_s, 'time')}, fall "
               f"{render(s.fall_time_s, 'time')}")


@rule("supply.power_over_limit", "fault",
      trigger="average power drawn by the flashes exceeds supply.max_power",
      fix="flash fewer times per frame, lower the frame rate or the pulse energy, or use a "
          "larger boost converter",
      example=("levitator-40k", {"supply.max_power": "200 mW"}))
def power_over_limit(plan):
    s = plan.supply
    if s is None:
        return None
    lim = plan.rig.supply.max_power
    return Hit(lambda: f"the flashes draw {render(s.average_power_w, 'power')} on average, "
               f"above the boost's {render(lim, 'power')}", value=s.average_power_w, limit=lim,
               unit="W", when=~(np.asarray(s.average_power_w) <= lim))


@rule("supply.current_over_limit", "fault",
      trigger="average current drawn by the flashes exceeds supply.max_current",
      fix="flash fewer times per frame, lower the frame rate or the peak current",
      example=("levitator-40k", {"supply.max_current": "10 mA"}))
def current_over_limit(plan):
    s = plan.supply
    if s is None:
        return None
    lim = plan.rig.supply.max_current
    return Hit(lambda: f"the flashes draw {render(s.average_current_a, 'current')} on average, "
                       f"above "
               f"the boost's {render(lim, 'current')} limit", value=s.average_current_a,
               limit=lim, unit="A", when=~(np.asarray(s.average_current_a) <= lim))


@rule("supply.recharge_slow", "warning",
      trigger="the boost cannot refill the storage capacitor at its current limit before the "
              "next burst (recharge time longer than the idle time)",
      fix="a larger supply.max_current, a larger storage capacitor (less droop per burst) or "
          "fewer flashes per frame",
      example=("levitator-40k", {"supply.storage_capacitance": "10 uF",
                                 "supply.max_current": "5 mA"}))
def recharge_slow(plan):
    s = plan.supply
    if s is None:
        return None
    return Hit(lambda: f"recharge takes {render(s.recharge_time_s, 'time')}, the idle time is "
               f"{render(s.idle_time_s, 'time')}", value=s.recharge_time_s,
               limit=s.idle_time_s, unit="s",
               when=~np.less_equal(*expanded(s.recharge_time_s, s.idle_time_s)))


@rule("supply.brightness_drop", "warning",
      trigger=f"the last flash of a burst is more than {BRIGHTNESS_CHANGE_MAX:.0%} dimmer than "
              "the first (the storage capacitor sags across the burst; common practice limit)",
      fix="a larger storage capacitor or a boost with a higher current limit",
      example=("levitator-40k", {"supply.storage_capacitance": "22 uF",
                                 "supply.max_current": "100 mA"}))
def brightness_drop(plan):
    s = plan.supply
    if s is None:
        return None
    return Hit(lambda: f"flash current falls {-s.brightness_change:.1%} across the burst "
               f"({render(s.burst_droop_v, 'voltage')} droop)", value=-s.brightness_change,
               limit=BRIGHTNESS_CHANGE_MAX, unit="1",
               when=~(-np.asarray(s.brightness_change) <= BRIGHTNESS_CHANGE_MAX))


@rule("supply.stored_energy", "note",
      trigger="always, with a storage capacitor: the energy it holds (C V^2 / 2)",
      fix="discharge the capacitor before touching the LED side",
      example=("levitator-40k", {}))
def stored_energy(plan):
    s = plan.supply
    if s is None:
        return None
    return Hit(lambda: f"the storage capacitor holds {render(s.stored_energy_j, 'energy')}",
               value=s.stored_energy_j, unit="J")


@rule("stuck_on.burnout_fast", "hazard",
      trigger=f"with the gate stuck on, the junction reaches led.junction_max in under "
              f"{REACTION_TIME:g} s (no person reacts in time)",
      fix=STUCK_ON_FIX,
      example=("unsafe-bench", {}))
def burnout_fast(plan):
    s = plan.stuck_on
    if s is None:
        return None
    return Hit(lambda: f"a stuck gate drives {render(s.dc_current_a, 'current')} "
                       f"({s.limited_by}) and "
               f"the LED reaches its junction limit in {render(s.time_to_limit_s, 'time')}",
               value=s.time_to_limit_s, limit=REACTION_TIME, unit="s",
               when=_reaches(s) & ~(np.asarray(s.time_to_limit_s, dtype=float) >= REACTION_TIME))


def _reaches(s):
    """True where a stuck gate brings the junction to its limit at all."""
    return np.isfinite(np.asarray(s.time_to_limit_s, dtype=float))


@rule("stuck_on.burnout_slow", "warning",
      trigger=f"with the gate stuck on, the junction reaches led.junction_max, but only after "
              f"{REACTION_TIME:g} s or more",
      fix=STUCK_ON_FIX,
      example=("levitator-40k", {"supply.max_current": "2 A",
                                 "supply.series_resistor_power": "20 W"}))
def burnout_slow(plan):
    s = plan.stuck_on
    if s is None:
        return None
    return Hit(lambda: f"a stuck gate drives {render(s.dc_current_a, 'current')} and the LED "
                       f"reaches its "
               f"junction limit after {render(s.time_to_limit_s, 'time')}",
               value=s.time_to_limit_s, limit=REACTION_TIME, unit="s",
               when=_reaches(s) & (np.asarray(s.time_to_limit_s, dtype=float) >= REACTION_TIME))


@rule("stuck_on.resistor_overload", "hazard",
      trigger="with the gate stuck on, the series resistor dissipates more than "
              "supply.series_resistor_power",
      fix=STUCK_ON_FIX,
      example=("unsafe-bench", {}))
def resistor_overload(plan):
    s = plan.stuck_on
    if s is None:
        return None
    lim = plan.rig.supply.series_resistor_power
    return Hit(lambda: f"a stuck gate puts {render(s.resistor_power_w, 'power')} into the "
               f"{render(lim, 'power')} series resistor", value=s.resistor_power_w,
               limit=lim, unit="W", when=~(np.asarray(s.resistor_power_w) <= lim))
