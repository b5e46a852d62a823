"""The published JSON Schema of the plan (``strobeplan schema``), generated from the models.

Each plan section is a dataclass; pydantic's TypeAdapter turns it into a JSON Schema. Every
number may also be null (an undefined figure is null, never NaN). Sections are closed
(``additionalProperties: false``) so that the schema and the code cannot drift apart.

References
----------
1. JSON Schema Draft 2020-12, https://json-schema.org/draft/2020-12 (core and validation).
"""

from __future__ import annotations

import importlib
import pkgutil

from .plan import SECTION_ORDER, SECTION_TYPES, SEVERITIES, Finding

SCHEMA_ID = "https://strobeplan.invalid/schema/plan-v1.json"


def _load_sections() -> None:
    from . import stages, timing  # noqa: F401 - importing registers the section classes

    for info in pkgutil.iter_modules(stages.__path__):
        importlib.import_module(f"{stages.__name__}.{info.name}")


def _nullable(node):
    if isinstance(node, dict):
        out = {k: _nullable(v) for k, v in node.items()}
        t = out.get("type")
        if t in ("number", "integer"):
            out["type"] = [t, "null"]
        return out
    if isinstance(node, list):
        return [_nullable(v) for v in node]
    return node


def _closed(schema: dict) -> dict:
    props = {k: v for k, v in schema.get("properties", {}).items() if not k.startswith("_")}
    required = [k for k in schema.get("required", []) if not k.startswith("_")]
    out = {"type": "object", "properties": props, "required": required,
           "additionalProperties": False}
    if "title" in schema:
        out["title"] = schema["title"]
    return out


def _with_units(cls, schema: dict) -> dict:
    """Rename properties to their JSON keys and state each field's unit (from the field's
    metadata, :func:`strobeplan.plan.q`) in its description."""
    from dataclasses import fields, is_dataclass

    from .plan import UNIT_KINDS, json_name, unit_of

    if not is_dataclass(cls):
        return schema
    props, required = {}, []
    for f in fields(cls):
        if f.name not in schema["properties"]:
            continue
        node = dict(schema["properties"][f.name])
        unit = unit_of(f)
        if unit is not None:
            node["description"] = f"unit: {UNIT_KINDS.get(unit, unit)}"
        props[json_name(f)] = node
        if f.name in schema["required"]:
            required.append(json_name(f))
    return {**schema, "properties": props, "required": required}


def _class_schema(cls, defs: dict) -> dict:
    """Closed schema of one dataclass; nested definitions are hoisted into ``defs``
    (references are "#/$defs/Name", resolved from the root)."""
    from pydantic import TypeAdapter

    raw = _nullable(TypeAdapter(cls).json_schema(mode="serialization"))
    for name, sub in raw.pop("$defs", {}).items():
        defs[name] = _closed(sub)
    return _with_units(cls, _closed(raw))


def plan_schema() -> dict:
    """JSON Schema (draft 2020-12) of ``strobeplan check --json``."""
    _load_sections()
    sections: dict = {}
    defs: dict = {}
    for slot in SECTION_ORDER:
        classes = SECTION_TYPES.get(slot, [])
        if not classes:
            continue
        alts = [_class_schema(c, defs) for c in classes]
        sections[slot] = alts[0] if len(alts) == 1 else {"anyOf": alts}
    finding = _class_schema(Finding, defs)
    finding["properties"]["severity"] = {"enum": list(SEVERITIES)}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": "strobeplan plan",
        "type": "object",
        "properties": {
            "format": {"const": "strobeplan.plan"},
            "version": {"const": 1},
            "rig": {"type": "string"},
            "verdict": {"enum": ["pass", "warn", "fail"]},
            "findings": {"type": "array", "items": finding},
            "skipped": {"type": "object", "additionalProperties": {"type": "string"},
                        "description": "sections the rig lacks inputs for, and what they need"},
            **sections,
        },
        "required": ["format", "version", "verdict", "findings"],
        "additionalProperties": False,
        "$defs": defs,
    }
