"""The typed result of :func:`strobeplan.solve`: a Plan of sections and findings.

A section is a dataclass. Each field declares its unit as metadata (:func:`q`): the text
output renders it with SI prefixes, the JSON Schema and the docs state it, and nothing
guesses a unit from a name. The JSON keys keep their unit suffix (``_s``, ``_hz``, ``_v``,
``_c`` for degrees Celsius ...; the plan JSON contract). Temperatures are kelvin inside
(attributes ending ``_k``) and appear in JSON under their ``_c`` key, converted to degrees
Celsius (``q("temperature", json="junction_peak_c")``).
"""

from __future__ import annotations

import math
from dataclasses import MISSING, fields, is_dataclass
from dataclasses import field as _field
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from .design import Design
    from .stages.air import AirSection
    from .stages.banding import BandingSection
    from .stages.exposure import ExposureSection
    from .stages.field import FieldSection
    from .stages.flash import FlashSection
    from .stages.image import EyeSection, ImageSection
    from .stages.link import GateLinkSection, TriggerLinkSection
    from .stages.optics import OpticsSection
    from .stages.power import LedSection, StuckOnSection, SupplySection, SwitchSection
    from .stages.timer import TimerSection
    from .stages.timing import DriveSection, TimingSection

from .physics.air import ZERO_CELSIUS  # [K] 0 degC, written once (physics/air.py)
from .quickdc import dataclass

# Units a field can declare: a units.py kind (rendered with SI prefixes) or a fixed text.
UNIT_KINDS = {
    "time": "s", "frequency": "Hz", "voltage": "V", "current": "A", "power": "W",
    "energy": "J", "charge": "C", "resistance": "ohm", "length": "m", "capacitance": "F",
    "pressure": "Pa", "temperature": "degC", "temperature_difference": "K", "ratio": "%",
}


def q(unit: str | None = None, *, json: str | None = None, default: Any = MISSING,
      default_factory: Any = MISSING):
    """A section field with its unit: a units.py kind ("time", "current", "temperature",
    "ratio" ...), a fixed unit text ("deg", "dB", "ppm", "ticks", "1"), or None for text and
    flags. ``json`` renames the key in JSON (temperatures: kelvin inside, degC in JSON)."""
    meta = {"unit": unit}
    if json is not None:
        meta["json"] = json
    kw = {}
    if default is not MISSING:
        kw["default"] = default
    if default_factory is not MISSING:
        kw["default_factory"] = default_factory
    return _field(metadata=meta, **kw)


def scalar(x):
    """A 0-d numpy value as a plain Python int/float/bool; arrays and others unchanged.

    Stages run on scalars (``check``) and arrays (``tune``): they compute with numpy and pass
    each figure through this, so a scalar design gives plain numbers in its sections.
    """
    if isinstance(x, np.ndarray) and x.ndim == 0:
        return x.item()
    if isinstance(x, np.generic):
        return x.item()
    return x


def unit_of(f) -> str | None:
    """The unit a dataclass field declares (None: text, flags or dimensionless counts)."""
    return f.metadata.get("unit")


def json_name(f) -> str:
    """The JSON key of a dataclass field."""
    return f.metadata.get("json", f.name)


def _json_value(f, value):
    if f.metadata.get("unit") == "temperature" and value is not None:
        return jsonable(_shift(value, -ZERO_CELSIUS))
    return jsonable(value)


def _shift(value, offset):
    try:
        return value + offset
    except TypeError:
        return value

SEVERITIES = ("hazard", "fault", "warning", "note")
SEVERITY_RANK = {s: i for i, s in enumerate(SEVERITIES)}

# Order of the sections in outputs; every stage stores its section under one of these.
SECTION_ORDER = ("timing", "drive", "field", "timer", "air", "flash", "exposure", "banding",
                 "optics", "image", "eye", "led", "switch", "supply", "stuck_on",
                 "trigger_link", "gate_link")


def jsonable(value: Any) -> Any:
    """Plain JSON value: NaN and infinities become None, numpy scalars become Python."""
    if isinstance(value, Section) or (is_dataclass(value) and not isinstance(value, type)):
        return {json_name(f): _json_value(f, getattr(value, f.name)) for f in fields(value)
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
class PictureRule:
    """A finding drawn from a picture (preview's frames or captured ones): ``check`` cannot
    reach it, so it is registered beside the command that raises it and listed in
    docs/findings.md."""

    code: str
    severity: str
    title: str
    fix: str


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
    """Everything strobeplan computed for one rig and one design.

    Each slot holds the section its stage returned (None when the rig lacks its inputs;
    ``skipped`` says which were skipped and why). With an array design (``tune``) every
    design-dependent figure is an array of the design's broadcast shape.
    """

    rig: Any
    design: Design | None = None
    air: AirSection | None = None
    field: FieldSection | None = None
    flash: FlashSection | None = None
    trigger_link: TriggerLinkSection | None = None
    gate_link: GateLinkSection | None = None
    drive: DriveSection | None = None
    timing: TimingSection | None = None
    exposure: ExposureSection | None = None
    optics: OpticsSection | None = None
    led: LedSection | None = None
    switch: SwitchSection | None = None
    supply: SupplySection | None = None
    stuck_on: StuckOnSection | None = None
    image: ImageSection | None = None
    eye: EyeSection | None = None
    timer: TimerSection | None = None
    banding: BandingSection | None = None
    findings: list[Finding] = _field(default_factory=list)
    skipped: dict[str, str] = _field(default_factory=dict)
    # A plan of the design search (its grid chunks and the rows it evaluates after them):
    # it feeds only the rules' masks and the search's figures (tune.Evaluation and the
    # candidates built from it). A stage may then resolve a figure that only a rule's
    # threshold reads just as far as that threshold needs, or skip a figure nothing there
    # reads (the verdicts and the candidates' figures are unchanged:
    # tests/test_tune_equals_check.py); every other plan has every figure exact.
    rules_only: bool = False

    @property
    def lock(self):
        """The integers the schedule needs (timing.Lock), for a scalar design."""
        return self.timing._lock if self.timing is not None else None

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
        if self.skipped:
            out["skipped"] = dict(self.skipped)
        for name, section in self.sections():
            out[name] = section.to_json()
        return out
