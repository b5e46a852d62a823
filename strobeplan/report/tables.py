"""Schedule exports: CSV with a header row, JSON, or bare timer integers."""

from __future__ import annotations

import csv
import io
import json
from dataclasses import asdict

from ..plan import jsonable


def schedule_csv(sched) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(sched.COLUMNS)
    for row in sched.rows:
        d = asdict(row)
        w.writerow(["" if d[c] is None else (f"{d[c]:.6g}" if isinstance(d[c], float) else d[c])
                    for c in sched.COLUMNS])
    return buf.getvalue()


def schedule_json(sched) -> str:
    out = {
        "format": "strobeplan.schedule", "version": 1, "mode": sched.mode,
        "clock_hz": sched.clock_hz, "drive_period_ticks": sched.drive_period_ticks,
        "flash_period_ticks": sched.flash_period_ticks,
        "frame_period_ticks": sched.frame_period_ticks,
        "rows": [jsonable(asdict(r)) for r in sched.rows],
    }
    return json.dumps(out, indent=2, allow_nan=False) + "\n"


def schedule_ticks(sched) -> str:
    """Integers only: one line per frame, 'camera_trigger_ticks edge_ticks flashes'."""
    lines = [f"# drive_period_ticks {sched.drive_period_ticks}",
             f"# flash_period_ticks {sched.flash_period_ticks}",
             f"# frame_period_ticks {sched.frame_period_ticks or ''}".rstrip(),
             "# camera_trigger_ticks edge_ticks flashes"]
    for r in sched.rows:
        lines.append(f"{r.camera_trigger_ticks} {r.edge_ticks} "
                     f"{'' if r.flashes is None else r.flashes}".rstrip())
    return "\n".join(lines) + "\n"
