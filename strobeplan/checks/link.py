"""Trigger-link rules: the camera-trigger divider and the controller -> gate-driver input."""

from __future__ import annotations

import math

import numpy as np

from ..units import render
from .registry import Hit, rule


def _v(x):
    return render(x, "voltage")


def _link(plan):
    t = plan.trigger_link
    return t if t is not None and t.top_ohm is not None else None


def _pair(t) -> str:
    return f"{render(t.top_ohm, 'resistance')} over {render(t.bottom_ohm, 'resistance')}"


def _alternative_hint(t) -> str | None:
    if t.alternatives:
        return f"use {t.alternatives[0]} (from `strobeplan divider`)"
    if t.recommendation:
        return t.recommendation
    return None


@rule("trigger_link.over_input_max", "hazard",
      trigger="the divider's highest worst-case level (source at its highest supply, resistors "
              "at their tolerance limits) exceeds the input maximum, VDD + 0.3 V at the "
              "destination's lowest supply (unless camera.trigger_input.tolerant)",
      fix="lower the ratio bottom/(top + bottom) (raise trigger_link.top or lower "
          "trigger_link.bottom), use tighter resistors, or remove top/bottom to get a proposal",
      example=("unsafe-bench", {}))
def over_input_max(plan):
    t = _link(plan)
    if t is None or not (t.margin_max_v < 0):
        return None
    return Hit(lambda: f"{_pair(t)} from {t.source_family} can reach {_v(t.v_high_max_v)} at the "
               f"{t.destination_family} input (nominal {_v(t.v_nominal_v)}), above its "
               f"maximum {_v(t.input_max_v)}: the input's protection conducts",
               value=t.v_high_max_v, limit=t.input_max_v, unit="V", hint=_alternative_hint(t))


@rule("trigger_link.below_vih", "fault",
      trigger="the divider's lowest worst-case high level (source at its lowest supply and "
              "guaranteed VOH at the divider's current, resistors at their limits, input "
              "leakage) is below VIH at the destination's highest supply",
      fix="raise the ratio bottom/(top + bottom), use tighter resistors, or remove top/bottom "
          "to get a proposal",
      example=("unsafe-bench", {"trigger_link.top": "2 kohm", "trigger_link.bottom": "1 kohm"}))
def below_vih(plan):
    t = _link(plan)
    if t is None or t.v_high_min_v is None or not math.isfinite(t.v_high_min_v) \
            or t.margin_high_v >= 0:
        return None
    return Hit(lambda: f"{_pair(t)} from {t.source_family} guarantees only {_v(t.v_high_min_v)} at "
               f"the {t.destination_family} input, below VIH {_v(t.vih_v)}: the camera may "
               f"miss triggers", value=t.v_high_min_v, limit=t.vih_v, unit="V",
               hint=_alternative_hint(t))


@rule("trigger_link.low_above_vil", "fault",
      trigger="the divider's highest worst-case low level (source VOL max through the highest "
              "ratio, plus input current through the Thevenin resistance) is above VIL at the "
              "destination's lowest supply",
      fix="lower the divider's resistance (the input current drops less), or use a buffer",
      example=("levitator-40k", {"controller.output": "cmos5",
                                 "gate_driver.input": "cmos5",
                                 "camera.trigger_input": {"family": "ttl5"},
                                 "trigger_link.top": "10 kohm",
                                 "trigger_link.bottom": "10 kohm"}))
def low_above_vil(plan):
    t = _link(plan)
    if t is None or not (t.margin_low_v < 0):
        return None
    return Hit(lambda: f"the low level at the {t.destination_family} input can be "
                       f"{_v(t.v_low_max_v)}, "
               f"above VIL {_v(t.vil_v)}: false triggers", value=t.v_low_max_v, limit=t.vil_v,
               unit="V", hint=_alternative_hint(t))


@rule("trigger_link.source_overloaded", "hazard",
      trigger="the divider draws more than the source family's rated output current (the "
              "largest current its VOH is guaranteed at)",
      fix="raise trigger_link.top and trigger_link.bottom together (same ratio, more ohms)",
      example=("unsafe-bench", {"trigger_link.top": "100 ohm", "trigger_link.bottom": "120 ohm"}))
def source_overloaded(plan):
    t = _link(plan)
    if t is None or not (t.current_a > t.rated_current_a * (1 + 1e-12)):
        return None
    return Hit(lambda: f"{_pair(t)} draws up to {render(t.current_a, 'current')} from the "
               f"{t.source_family} output, above its rated {render(t.rated_current_a, 'current')}"
               f": no output level is guaranteed and the pin may be overstressed",
               value=t.current_a, limit=t.rated_current_a, unit="A", hint=_alternative_hint(t))


@rule("trigger_link.edge_too_slow", "warning",
      trigger="the worst-case 10-90 % edge at the trigger input (ln 9 x Thevenin resistance x "
              "input capacitance) exceeds 1 % of the longer of strobe.pulse_width and "
              "camera.trigger_latency",
      fix="lower both divider resistors (same ratio), within the source's rated current, or "
          "use a logic-level translator",
      example=("rangefinder-58k", {}))
def edge_too_slow(plan):
    t = _link(plan)
    if t is None or t.edge_limit_s is None:
        return None
    return Hit(lambda: f"the trigger edge takes up to {render(t.edge_time_max_s, 'time')} (10-90 "
                       f"%, "
               f"{render(t.capacitance_f, 'capacitance')} input), more than 1 % of the "
               f"timing it serves ({render(t.edge_limit_s, 'time')})",
               value=t.edge_time_max_s, limit=t.edge_limit_s, unit="s",
               when=t.edge_time_max_s > np.asarray(t.edge_limit_s))


@rule("trigger_link.no_feasible_pair", "fault",
      trigger="no pair of the chosen E-series (10 ohm to 1 Mohm) meets every worst-case "
              "condition between controller.output and camera.trigger_input",
      fix="use a logic-level translator (a buffer powered from the camera's supply), tighter "
          "resistors (trigger_link.tolerance), or a tolerant input",
      example=("levitator-40k", {"controller.output": "lvcmos18",
                                 "gate_driver.input": "lvcmos18",
                                 "camera.trigger_input": {"family": "lvcmos33"}}))
def no_feasible_pair(plan):
    t = plan.trigger_link
    if t is None or t.mode != "infeasible":
        return None
    return Hit(lambda: f"no {t.series} divider from {t.source_family} to {t.destination_family} "
                       f"is safe "
               f"and reliable in the worst case: {t.reason}", hint=t.recommendation)


@rule("gate_link.below_vih", "fault",
      trigger="the controller's guaranteed high level (lowest supply) is below the gate "
              "driver's input VIH (at the family's highest supply)",
      fix="choose a gate driver whose input family matches controller.output, or add a "
          "logic-level translator",
      example=("levitator-40k", {"controller.output": "lvcmos12",
                                 "camera.trigger_input": {"family": "lvcmos12"}}))
def gate_below_vih(plan):
    g = plan.gate_link
    if g is None or g.margin_high_v >= 0:
        return None
    return Hit(lambda: f"the {g.source_family} output guarantees {_v(g.v_high_min_v)}, below the "
               f"{g.destination_family} gate-driver input's VIH {_v(g.vih_v)}: flashes may be "
               f"missed", value=g.v_high_min_v, limit=g.vih_v, unit="V")


@rule("gate_link.over_input_max", "hazard",
      trigger="the controller's highest output level exceeds the gate driver's input maximum "
              "(its supply + 0.3 V, common practice)",
      fix="power the gate driver from a supply at least the controller's, or add a translator",
      example=("levitator-40k", {"controller.output": "cmos5",
                                 "gate_driver.supply": "4 V",
                                 "camera.trigger_input": {"family": "lvcmos33"}}))
def gate_over_input_max(plan):
    g = plan.gate_link
    if g is None or g.margin_max_v >= 0:
        return None
    return Hit(lambda: f"the {g.source_family} output can reach {_v(g.v_high_max_v)}, above the "
                       f"gate "
               f"driver's input maximum {_v(g.input_max_v)}", value=g.v_high_max_v,
               limit=g.input_max_v, unit="V")
