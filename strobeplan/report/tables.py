"""Schedule exports: CSV with a header row, JSON, or bare timer integers.

Each format is written as a stream of text chunks (``iter_schedule_*``), a block of rows at
a time, so a schedule of any length takes the memory of one block; ``schedule_*`` join the
chunks into one string. The JSON stream is one document, byte for byte what
``json.dumps(..., indent=2)`` gives for the whole schedule.
"""

from __future__ import annotations

import json
import math

import numpy as np

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


def _texts(col, floats: bool, spec: str, plain) -> list[str]:
    """The cells of one column as text: ``spec % value`` each (floats ``"%r"`` in JSON,
    ``"%.6g"`` in CSV; integers ``"%d"``), or ``plain(value)`` each when the column holds
    a value the spec cannot write (None; in JSON a NaN or an infinity).

    Most float columns repeat few values (an edge's time, the achieved phase and the smear
    take at most one drive period's worth of values): each distinct value is formatted once
    (numpy's unique over the values' bit patterns, so -0.0 and 0.0 stay apart) and the
    texts gathered. A column of Python ints is written with ``int.__repr__`` (what ``"%d"``
    gives an int).
    """
    kinds = set(map(type, col))
    if not floats and kinds == {int}:
        return list(map(int.__repr__, col))
    if floats and kinds == {float}:
        a = np.array(col, dtype=np.float64)
        uniq, where = np.unique(a.view(np.int64), return_inverse=True)
        values = uniq.view(np.float64).tolist()
        json_ = plain is _json_number
        write = float.__repr__ if json_ else spec.__mod__  # "%r" % a float is its repr
        if json_ and not all(map(math.isfinite, values)):
            texts = [write(v) if math.isfinite(v) else plain(v) for v in values]
        elif 2 * len(values) > len(col):  # mostly distinct: no gain in gathering
            return list(map(write, col))
        else:
            texts = list(map(write, values))
        return list(map(texts.__getitem__, where.ravel().tolist()))
    if floats:
        ok = all(map(math.isfinite, col)) if plain is _json_number else True
    else:
        ok = None not in col
    return [spec % v for v in col] if ok else [plain(v) for v in col]


def _block_rows(cols: dict, columns, pieces, end: str, plain, spec_float: str) -> str:
    """Rows of one block: row i is ``pieces[0] + cell(0, i) + pieces[1] + ... +
    cell(m-1, i) + pieces[m]``, with ``end`` in place of the last row's ``pieces[m]``.

    The cells are :func:`_texts` of each column; the rows are interleaved with the fixed
    pieces by slice assignment into one list and joined once (a %-template per row cost
    twice as much: every float of every row went through repr).
    """
    n = len(cols[columns[0]])
    if not n:
        return ""
    m = len(columns)
    width = 2 * m + 1
    parts: list = [None] * (n * width)
    for j, c in enumerate(columns):
        parts[2 * j::width] = [pieces[j]] * n
        floats = c in _FLOATS
        parts[2 * j + 1::width] = _texts(cols[c], floats, spec_float if floats else "%d",
                                         plain)
    parts[2 * m::width] = [pieces[m]] * n
    parts[-1] = end
    return "".join(parts)


def iter_schedule_csv(sched):
    """The CSV (header row, then one row per frame) as chunks of text."""
    columns = sched.COLUMNS
    yield ",".join(columns) + "\n"
    pieces = [""] + [","] * (len(columns) - 1) + ["\n"]
    for cols in sched.rows.blocks():
        yield _block_rows(cols, columns, pieces, "\n", _csv_cell, "%.6g")


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
    pieces = [("    {\n" if i == 0 else ",\n") + f"      {json.dumps(c)}: "
              for i, c in enumerate(columns)] + ["\n    },\n"]
    for k, cols in enumerate(sched.rows.blocks()):
        if k:
            yield ",\n"  # its own chunk: no copy of the block to prepend it
        yield _block_rows(cols, columns, pieces, "\n    }", _json_number, "%r")
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
