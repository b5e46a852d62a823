"""The typed result of :func:`strobeplan.solve`: a Plan of sections and findings.

A section is a dataclass whose field names carry their SI unit as a suffix (``_s``,
``_hz``, ``_v`` ...; design §4), so the JSON and the text output need no per-section code.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, is_dataclass
from dataclasses import field as _field
from typing import Any

SEVERITIES = ("hazard", "fault", "warning", "note")
SEVERITY_RANK = {s: i for i, s in enumerate(SEVERITIES)}

# Order of the sections in outputs; every stage stores its section under one of these.
SECTION_ORDER = ("timing", "drive", "field", "air", "flash", "exposure", "optics", "led", "switch",
                 "supply", "stuck_on", "trigger_link", "gate_link")


def jsonable(value: Any) -> Any:
    """Plain JSON value: NaN and infinities become None, numpy scalars become Python."""
    if isinstance(value, Section) or (is_dataclass(value) and not isinstance(value, type)):
        return {f.name: jsonable(getattr(value, f.name)) for f in fields(value)
                if not f.name.startswith("_")}
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):
        return jsonable(value.tolist())
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    try:
        as_float = float(value)
    except (TypeError, ValueError):
        return str(value)
    return as_float if math.isfinite(as_float) else None


# slot name -> the section classes that can fill it (for the published JSON Schema)
SECTION_TYPES: dict[str, list[type]] = {}


def _slot_of(name: str) -> str:
    base = name[: -len("Section")] if name.endswith("Section") else name
    return "".join(("_" + c.lower()) if c.isupper() else c for c in base).lstrip("_")


@dataclass
class Section:
    """Base of all plan sections. Fields starting with ``_`` stay out of the outputs.

    A subclass fills the plan slot named after it (``StuckOnSection`` -> ``stuck_on``), or
    its parent's slot when it extends a section, or ``slot=`` given as a class keyword.
    """

    def __init_subclass__(cls, slot: str | None = None, **kwargs):
        super().__init_subclass__(**kwargs)
        parent = next((getattr(b, "_slot", None) for b in cls.__mro__[1:]
                       if getattr(b, "_slot", None)), None)
        cls._slot = slot or parent or _slot_of(cls.__name__)
        SECTION_TYPES.setdefault(cls._slot, []).append(cls)

    def to_json(self) -> dict:
        return jsonable(self)


@dataclass(frozen=True)
class Finding:
    """One flagged condition: code (stable, dotted), severity, reason and fix."""

    code: str
    severity: str
    subject: str
    message: str
    value: float | None = None
    limit: float | None = None
    unit: str | None = None
    hint: str | None = None

    def to_json(self) -> dict:
        return jsonable(self)


@dataclass
class Plan:
    """Everything strobeplan computed for one rig."""

    rig: Any
    timing: Any = None
    drive: Any = None
    field: Any = None
    air: Any = None
    flash: Any = None
    exposure: Any = None
    optics: Any = None
    led: Any = None
    switch: Any = None
    supply: Any = None
    stuck_on: Any = None
    trigger_link: Any = None
    gate_link: Any = None
    findings: list[Finding] = _field(default_factory=list)
    lock: Any = _field(default=None, repr=False)  # timing.Lock: integers for the schedule

    @property
    def verdict(self) -> str:
        severities = {f.severity for f in self.findings}
        if severities & {"hazard", "fault"}:
            return "fail"
        if "warning" in severities:
            return "warn"
        return "pass"

    def sections(self):
        """(name, section) for every computed section, in output order."""
        for name in SECTION_ORDER:
            section = getattr(self, name)
            if section is not None:
                yield name, section

    def to_json(self) -> dict:
        out: dict[str, Any] = {
            "format": "strobeplan.plan",
            "version": 1,
            "rig": self.rig.name,
            "verdict": self.verdict,
            "findings": [f.to_json() for f in self.findings],
        }
        for name, section in self.sections():
            out[name] = section.to_json()
        return out
