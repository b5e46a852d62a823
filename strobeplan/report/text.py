"""Text output for people: aligned tables with SI prefixes, findings last with their hints."""

from __future__ import annotations

import json
import math

from ..safetext import clean
from ..units import render

# Field-name suffix -> (unit kind for render, or a fixed unit text; how much of the suffix
# to drop from the label: None drops all of it).
_SUFFIX_KINDS = [
    ("_deg_per_s", None, "deg/s", None), ("_per_kelvin_deg", None, "deg/K", 4),
    ("_ppm", None, "ppm", None), ("_db_m", None, "dB/m", None),
    ("_kg_m3", None, "kg/m3", None), ("_m_s", None, "m/s", None), ("_ticks", None, "ticks", None),
    ("charge_c", "charge", None, 2),  # a charge in coulomb, not a temperature in degC
    ("_s", "time", None, None), ("_hz", "frequency", None, None), ("_v", "voltage", None, None),
    ("_a", "current", None, None), ("_w", "power", None, None), ("_j", "energy", None, None),
    ("_ohm", "resistance", None, None), ("_m", "length", None, None),
    ("_k", "temperature_difference", None, None), ("_db", None, "dB", None),
    ("_deg", None, "deg", None), ("_rad", None, "rad", None), ("_pa", "pressure", None, None),
    ("_f", "capacitance", None, None), ("_c", None, "\u00b0C", None),
]
# Dimensionless fields read better as percentages.
_PERCENT = ("duty_in_burst", "duty_average", "relative_humidity", "brightness_change",
            "tolerance", "rating_duty", "min_retention")


def _label(name: str, suffix: str, keep: int | None) -> str:
    cut = len(suffix) if keep is None else keep
    return name[: len(name) - cut].replace("_", " ")


CAUTION = ("Caution: strobeplan is a planning aid, not a safety certification. Overdriven LEDs "
           "can be bright enough to injure eyes; storage capacitors hold dangerous charge; "
           "airborne ultrasound can harm hearing; resistors, LEDs and MOSFETs get hot. Follow "
           "the datasheets, local codes and licensed practice.")


def label_and_value(name: str, value) -> tuple[str, str]:
    """Readable label and rendered value for a section field."""
    if isinstance(value, bool) or value is None or isinstance(value, str):
        shown = "n/a" if value is None else (str(value) or "-")
        for suffix, _kind, _unit, keep in _SUFFIX_KINDS:
            if value is None and name.endswith(suffix):
                return _label(name, suffix, keep), shown
        return name.replace("_", " "), shown
    if isinstance(value, (list, tuple)):
        return name.replace("_", " "), ", ".join(_number(v) for v in value)
    if name in _PERCENT:
        return name.replace("_", " "), render(float(value), "ratio")
    for suffix, kind, unit, keep in _SUFFIX_KINDS:
        if name.endswith(suffix):
            label = _label(name, suffix, keep)
            if kind is not None:
                return label, render(float(value), kind)
            return label, f"{_number(value)} {unit}"
    return name.replace("_", " "), _number(value)


def _number(v) -> str:
    if v is None:
        return "n/a"
    if isinstance(v, int) and not isinstance(v, bool):
        return str(v)
    try:
        x = float(v)
    except (TypeError, ValueError):
        return str(v)
    if not math.isfinite(x):
        return "n/a"
    return f"{x + 0.0:.4g}" if x != 0 else "0"


def plan_text(plan) -> str:
    """The whole plan as aligned text."""
    lines = [f"strobeplan: {clean(plan.rig.name)}", f"verdict: {plan.verdict.upper()}", ""]
    for name, section in plan.sections():
        data = section.to_json()
        lines.append(f"[{name}]")
        rows = [tuple(clean(x) for x in label_and_value(k, v))
                for k, v in vars(section).items()
                if not k.startswith("_") and not isinstance(v, (dict,)) and k in data]
        width = max((len(r[0]) for r in rows), default=0)
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        lines.append("")
    lines.append(findings_text(plan))
    cautions = caution_lines(plan)
    if cautions:
        lines += ["", *cautions]
    return "\n".join(lines).rstrip() + "\n"


# One line per concern, shown by `check` when a finding concerns it (issue 8).
_CONCERNS = (
    ("eyes", lambda f: f.severity == "hazard" and f.subject == "led",
     "caution (eyes): this LED is driven beyond its ratings; its flashes can injure eyes - "
     "never look into the source or its image, enclose the beam (IEC 62471)."),
    ("stored charge", lambda f: f.severity == "hazard" and f.subject in ("supply", "stuck_on",
                                                                         "switch"),
     "caution (stored charge): the storage capacitor stays charged after power-off; fit a "
     "bleeder, discharge and measure before touching the power stage."),
    ("ultrasound", lambda f: f.code == "safety.ultrasound_exposure",
     "caution (ultrasound): inaudible airborne ultrasound at this level can harm hearing; "
     "shield the emitter and follow local exposure rules."),
    ("hot parts", lambda f: f.severity == "hazard" and f.subject == "stuck_on",
     "caution (hot parts): a stuck gate overheats the LED and the series resistor within "
     "seconds; fuse the supply and limit the gate's on-time in hardware."),
)


def caution_lines(plan) -> list[str]:
    """The one-line cautions that the plan's findings call for, then the general one."""
    out = [text for _name, hit, text in _CONCERNS if any(hit(f) for f in plan.findings)]
    if any(f.severity == "hazard" for f in plan.findings):
        out.append(CAUTION)
    return out


def findings_text(plan) -> str:
    if not plan.findings:
        return "findings: none"
    out = [f"findings ({len(plan.findings)}):"]
    for f in plan.findings:
        out.append(f"  {f.severity.upper():<8} {f.code}: {clean(f.message)}")
        if f.hint:
            out.append(f"           fix: {clean(f.hint)}")
    return "\n".join(out)


def plan_json(plan) -> str:
    """The plan JSON of design §4 (no NaN or Infinity: undefined figures are null)."""
    return json.dumps(plan.to_json(), indent=2, allow_nan=False) + "\n"
