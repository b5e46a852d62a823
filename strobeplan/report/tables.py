"""Schedule exports: CSV with a header row, JSON, or bare timer integers.

Each format is written as a stream of text chunks (``iter_schedule_*``), a block of rows at
a time, so a schedule of any length takes the memory of one block; ``schedule_*`` join the
chunks into one string. The JSON stream is one document, byte for byte what
``json.dumps(..., indent=2)`` gives for the whole schedule.
"""

from __future__ import annotations

import json
import math

_FLOATS = frozenset({"target_phase_deg", "achieved_phase_deg", "phase_error_deg",
                     "edge_time_s", "smear"})


def _json_number(v) -> str:
    """A row value as json.dumps writes it after plan.jsonable (NaN and inf as null)."""
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return int.__repr__(v)
    v = float(v)
    return float.__repr__(v) if math.isfinite(v) else "null"


def _csv_cell(v) -> str:
    if v is None:
        return ""
    return f"{v:.6g}" if isinstance(v, float) else str(v)


def _block_rows(cols: dict, columns, fields, join: str, plain) -> str:
    """Rows of one block through one %-template: ``fields[c]`` is (text before, the
    %-conversion of its plain values, text after) for column c; a column holding other
    values (None, NaN, infinities) goes through ``plain(value)`` and %s instead. Rows are
    joined by ``join``."""
    specs, values = [], []
    for c in columns:
        col = cols[c]
        if c in _FLOATS:
            ok = all(map(math.isfinite, col)) if plain is _json_number else True
        else:
            ok = None not in col
        before, spec, after = fields[c]
        if ok:
            specs.append(before + spec + after)
            values.append(col)
        else:
            specs.append(before + "%s" + after)
            values.append([plain(v) for v in col])
    template = "".join(specs)
    return join.join(map(template.__mod__, zip(*values, strict=True)))


def iter_schedule_csv(sched):
    """The CSV (header row, then one row per frame) as chunks of text."""
    columns = sched.COLUMNS
    yield ",".join(columns) + "\n"
    fields = {c: ("," if i else "", "%.6g" if c in _FLOATS else "%d", "")
              for i, c in enumerate(columns)}
    for cols in sched.rows.blocks():
        yield _block_rows(cols, columns, fields, "\n", _csv_cell) + "\n"


def iter_schedule_json(sched):
    """The JSON document as chunks of text (rows streamed a block at a time)."""
    head = {
        "format": "strobeplan.schedule", "version": 1, "mode": sched.mode,
        "clock_hz": sched.clock_hz, "drive_period_ticks": sched.drive_period_ticks,
        "flash_period_ticks": sched.flash_period_ticks,
        "frame_period_ticks": sched.frame_period_ticks,
        "rows": [],
    }
    text = json.dumps(head, indent=2, allow_nan=False)
    if not len(sched.rows):
        yield text + "\n"
        return
    assert text.endswith('"rows": []\n}')
    yield text[:-len("[]\n}")] + "[\n"
    columns = sched.COLUMNS
    last = len(columns) - 1
    fields = {c: (("    {\n" if i == 0 else "") + f"      {json.dumps(c)}: ",
                  "%r" if c in _FLOATS else "%d", ",\n" if i < last else "\n    }")
              for i, c in enumerate(columns)}
    sep = ""
    for cols in sched.rows.blocks():
        yield sep + _block_rows(cols, columns, fields, ",\n", _json_number)
        sep = ",\n"
    yield "\n  ]\n}\n"


def iter_schedule_ticks(sched):
    """Integers only: one line per frame, 'camera_trigger_ticks edge_ticks flashes'."""
    yield "\n".join([f"# drive_period_ticks {sched.drive_period_ticks}",
                     f"# flash_period_ticks {sched.flash_period_ticks}",
                     f"# frame_period_ticks {sched.frame_period_ticks or ''}".rstrip(),
                     "# camera_trigger_ticks edge_ticks flashes"]) + "\n"
    for cols in sched.rows.blocks():
        yield "".join(f"{t} {e} {'' if n is None else n}".rstrip() + "\n"
                      for t, e, n in zip(cols["camera_trigger_ticks"], cols["edge_ticks"],
                                         cols["flashes"], strict=True))


def schedule_csv(sched) -> str:
    return "".join(iter_schedule_csv(sched))


def schedule_json(sched) -> str:
    return "".join(iter_schedule_json(sched))


def schedule_ticks(sched) -> str:
    """Integers only: one line per frame, 'camera_trigger_ticks edge_ticks flashes'."""
    return "".join(iter_schedule_ticks(sched))
