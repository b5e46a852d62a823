"""Text output for people: aligned tables with SI prefixes, findings last with their hints."""

from __future__ import annotations

import json
import math
from dataclasses import fields

from ..plan import json_name, unit_of
from ..safetext import clean
from ..units import render

# Units whose values units.render draws with SI prefixes (the others are fixed texts).
_RENDERED = {"time", "frequency", "voltage", "current", "power", "energy", "charge",
             "resistance", "length", "capacitance", "pressure", "temperature",
             "temperature_difference", "ratio"}
# The suffix a JSON key carries for its unit (dropped from the label people read).
_SUFFIX = {"time": "_s", "frequency": "_hz", "voltage": "_v", "current": "_a", "power": "_w",
           "energy": "_j", "charge": "_c", "resistance": "_ohm", "length": "_m",
           "capacitance": "_f", "pressure": "_pa", "temperature": "_c",
           "temperature_difference": "_k", "deg": "_deg", "dB": "_db", "ppm": "_ppm",
           "ticks": "_ticks", "m/s": "_m_s", "kg/m3": "_kg_m3", "dB/m": "_db_m",
           "deg/s": "_deg_per_s", "rad": "_rad", "A s": "_a_s", "/rad": "_per_rad",
           "W/(m2 sr)": "_w_m2_sr", "m3/kg": "_m3_kg"}


CAUTION = ("Caution: strobeplan is a planning aid, not a safety certification. Overdriven LEDs "
           "can be bright enough to injure eyes; storage capacitors hold dangerous charge; "
           "airborne ultrasound can harm hearing; resistors, LEDs and MOSFETs get hot. Follow "
           "the datasheets, local codes and licensed practice.")


def label_and_value(f, value) -> tuple[str, str]:
    """Readable label and rendered value of a section field (a dataclass field: its unit
    comes from its metadata, see :func:`strobeplan.plan.q`)."""
    name = json_name(f)
    unit = unit_of(f)
    suffix = _SUFFIX.get(unit)
    label = name[: -len(suffix)] if suffix and name.endswith(suffix) else name
    if name == "phase_per_kelvin_deg":
        label = "phase per kelvin"
    label = label.replace("_", " ")
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return label, "n/a" if value is None else (str(value) or "-")
    if isinstance(value, (list, tuple)):
        return label, ", ".join(_number(v) for v in value)
    if unit in _RENDERED:
        return label, render(float(value), unit)
    if unit and unit != "1":
        return label, f"{_number(value)} {unit}"
    return label, _number(value)


def section_rows(section) -> list[tuple[str, str]]:
    """(label, value) of every output field of a section, in order."""
    return [label_and_value(f, getattr(section, f.name)) for f in fields(section)
            if not f.name.startswith("_") and not isinstance(getattr(section, f.name), dict)]


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
        lines.append(f"[{name}]")
        rows = [tuple(clean(x) for x in row) for row in section_rows(section)]
        width = max((len(r[0]) for r in rows), default=0)
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        lines.append("")
    if plan.skipped:
        lines.append("[skipped]")
        width = max(len(name) for name in plan.skipped)
        lines += [f"  {name:<{width}}  {why}" for name, why in plan.skipped.items()]
        lines.append("")
    lines.append(findings_text(plan))
    cautions = caution_lines(plan)
    if cautions:
        lines += ["", *cautions]
    return "\n".join(lines).rstrip() + "\n"


# One line per concern, shown by `check` when a finding concerns it (README.md, "Safety").
_CONCERNS = (
    ("eyes", lambda f: f.severity == "hazard" and f.subject in ("led", "eye"),
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
    """The plan JSON (the contract `strobeplan schema` publishes; undefined figures are null)."""
    return json.dumps(plan.to_json(), indent=2, allow_nan=False) + "\n"
