"""Line edits of a rig file: replace or add a few keys, keep the user's comments and layout.

Used by ``tune --write-rig`` (the tuned values) and by anything else that writes a corrected
copy of a rig. The edited text is re-read and compared with the intended values; a file
whose tables are not plain ``[table]`` headers is refused rather than guessed at.
"""

from __future__ import annotations

import math
import re

from .errors import RigError

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


def quantity_text(value: float, kind: str) -> str:
    """A short unit string that parses back to ``value`` (4-17 significant digits, SI
    prefix), e.g. ``"1.7 us"``."""
    from . import units

    for digits in (4, 5, 6, 8, 10, 12, 15, 17):
        text = units.render(value, kind, digits=digits).replace("\u03a9", "ohm")
        if math.isclose(units.parse(text, kind), value, rel_tol=1e-12, abs_tol=0.0):
            return text
    unit = {"time": "s", "resistance": "ohm", "voltage": "V"}.get(kind, "")
    return f"{value!r} {unit}".strip()


def edit_rig_text(text: str, values: dict[tuple[str, str], str]) -> str:
    """The TOML ``text`` with ``values`` ((table, key) -> TOML value text) written in.

    A key present in its table is rewritten in place (its trailing comment kept); an absent
    key is added after the last key line of its table. Every table named must be a plain
    ``[table]`` header in the file (RigError otherwise).
    """
    newline = "\r\n" if "\r\n" in text else "\n"
    table = ""
    done = set()
    last_key_line: dict[str, int] = {}
    seen_tables = set()
    out: list[str] = []
    for line in text.splitlines():
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
    for section in sorted({t for t, _k in values}):
        if section not in seen_tables:
            raise RigError(section, None, "cannot write the rig: expected a plain "
                                          f"[{section}] table in the rig file")
    missing = [k for k in values if k not in done]
    for key in sorted(missing, key=lambda k: -last_key_line[k[0]]):
        out.insert(last_key_line[key[0]] + 1, f"{key[1]} = {values[key]}")
    return newline.join(out) + (newline if text.endswith(("\n", "\r\n")) else "")


def tuned_rig_text(text: str, candidate, min_retention: float | None = None,
                   min_margin: float | None = None, max_blur: float | None = None) -> str:
    """The user's TOML with a tuned candidate's values (comments and layout kept).

    ``strobe.pulse_width``, ``strobe.every``, ``supply.series_resistor`` and
    ``supply.voltage`` are rewritten when they change; ``min_retention`` / ``min_margin`` /
    ``max_blur`` (given when the search's targets differ from the rig's) go to
    ``strobe.min_retention``, ``led.min_margin`` and ``camera.max_blur``.
    The result is re-read and compared with the candidate.
    """
    from .rig import loads_rig

    before = loads_rig(text)
    values = {}
    if before.strobe.pulse_width != candidate.pulse_width_s:
        values[("strobe", "pulse_width")] = f'"{quantity_text(candidate.pulse_width_s, "time")}"'
    if before.strobe.every != candidate.every:
        values[("strobe", "every")] = str(int(candidate.every))
    if not math.isclose(before.supply.series_resistor, candidate.series_resistor_ohm,
                        rel_tol=1e-12):
        values[("supply", "series_resistor")] = \
            f'"{quantity_text(candidate.series_resistor_ohm, "resistance")}"'
    if not math.isclose(before.supply.voltage, candidate.supply_voltage_v, rel_tol=1e-12):
        values[("supply", "voltage")] = f'"{quantity_text(candidate.supply_voltage_v, "voltage")}"'
    if min_retention is not None:
        values[("strobe", "min_retention")] = f'"{min_retention * 100:.6g} %"'
    if min_margin is not None:
        values[("led", "min_margin")] = f'"{min_margin:.6g} K"'
    if max_blur is not None:
        values[("camera", "max_blur")] = f"{max_blur:.6g}"
    new = edit_rig_text(text, values)
    rig = loads_rig(new)
    got = (rig.strobe.pulse_width, rig.strobe.every, rig.supply.series_resistor,
           rig.supply.voltage)
    want = (candidate.pulse_width_s, candidate.every, candidate.series_resistor_ohm,
            candidate.supply_voltage_v)
    if not all(math.isclose(a, b, rel_tol=1e-9) for a, b in zip(got, want, strict=True)):
        raise RigError("", None, "cannot write the tuned rig: the edited file does not read "
                                 "back the tuned values")
    return new
