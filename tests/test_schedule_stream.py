"""The schedule is computed in blocks and streamed: any length, no truncation, the same
rows as the frame-by-frame computation, and the writers' output unchanged."""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from dataclasses import asdict

import pytest

from strobeplan import timing
from strobeplan.plan import jsonable
from strobeplan.report.tables import schedule_csv, schedule_json, schedule_ticks
from strobeplan.rig import rig_from_dict
from strobeplan.solve import build_schedule, solve
from strobeplan.workload import MAX_SCHEDULE_ROWS, WorkloadError
from tests.conftest import ROOT, example, patched, run_cli

RIGS = {
    "sweep": ("levitator-40k", {}),
    "slow-motion": ("rangefinder-58k", {"sweep": {"slow_motion": "2 Hz"}, "strobe.every": 1}),
    "no-camera-lead": ("rangefinder-58k", {"camera.trigger": "none"}),
    "frozen": ("unsafe-bench", {}),
    "continuous": ("rangefinder-58k", {"strobe.continuous": True}),
}


def _plan(name):
    base, patch = RIGS[name]
    return solve(rig_from_dict(patched(base, patch)))


def _frame_by_frame(rig, plan, lock, steps, frames):
    """The rows one frame at a time with the scalar helpers: the computation before the
    schedule was blocked (kept here as the oracle)."""
    t = plan.timing
    clock, nd = lock.clock, lock.period_ticks
    frame_ticks = lock.frame_ticks or lock.flash_ticks
    base = rig.strobe.phase

    def frame_row(k, target, edge_in_frame, spacing):
        start = k * frame_ticks
        if lock.lead is not None:
            trig, n, first = timing.align_camera(
                edge_in_frame, spacing, clock, lock.light_delay - lock.slack,
                lock.light_length + lock.slack, lock.lead, lock.window)
        else:
            trig, n, first = 0, None, edge_in_frame
        edge_abs = start + first
        slow = t.mode == "slow_motion"
        achieved = timing.phase_of_edge((edge_abs if slow else edge_in_frame) % nd,
                                        lock.frequency, clock, lock.chain_delay,
                                        lock.flash_delay)
        edge = (edge_abs % nd) if slow else edge_in_frame % nd
        seen = n if n is not None else 1
        achieved, smear = timing.phasor_mean(achieved, lock.step, seen)
        if callable(target):
            target = target(edge_abs + 0.5 * max(seen - 1, 0) * spacing)
        return timing.ScheduleRow(
            k, math.degrees(target), math.degrees(achieved),
            math.degrees(timing.wrap_error(achieved - target)), edge, edge / clock,
            start + trig, edge_abs if (n is None or n) else None, n, smear)

    rows = []
    if t.mode == "slow_motion":
        edge0 = t.flash_edge_ticks
        for k in frames:
            start = k * frame_ticks
            j = max(0, math.ceil((start - edge0) / lock.flash_ticks))
            first_abs = edge0 + j * lock.flash_ticks

            def target(edge_abs, _f=t.apparent_frequency_hz):
                return timing.wrap_phase(base + timing.TWO_PI * _f * (edge_abs - edge0) / clock)

            rows.append(frame_row(k, target, first_abs - start, lock.flash_ticks))
    else:
        if steps is not None:
            span = rig.sweep.span if (rig.sweep and rig.sweep.span) else timing.TWO_PI
            step = span / steps
        elif t.mode == "sweep":
            step = math.radians(t.sweep_step_deg)
        else:
            step = 0.0
        for k in frames:
            target = timing.wrap_phase(base + k * step)
            edge = timing.edge_ticks_for_phase(target, lock.frequency, clock, nd,
                                               lock.chain_delay, lock.flash_delay)
            rows.append(frame_row(k, target, edge, lock.flash_ticks))
    return rows


@pytest.mark.parametrize("name", sorted(RIGS))
@pytest.mark.parametrize("steps", [None, 7, 5000])
def test_rows_equal_the_frame_by_frame_computation(name, steps):
    plan = _plan(name)
    sched = build_schedule(plan, steps=steps)
    n = len(sched.rows)
    # the first rows, rows around block edges and the last ones
    frames = sorted({*range(min(n, 40)), *(k for b in (4095, 4096, 4097) if (k := b) < n),
                     *range(max(0, n - 3), n)})
    expected = _frame_by_frame(plan.rig, plan, plan.lock, steps, frames)
    assert [sched.rows[k] for k in frames] == expected
    assert list(sched.rows)[:40] == expected[:40]
    assert sched.rows[-1] == sched.rows[n - 1] and sched.rows[1:3] == expected[1:3]


def test_a_million_steps_are_a_million_rows_over_the_whole_span():
    # The rows used to stop at 100,000 (a tenth of the sweep, with the step of a million).
    plan = _plan("sweep")
    steps = 1_000_000
    sched = build_schedule(plan, steps=steps)
    assert len(sched.rows) == steps
    last = sched.rows[steps - 1]
    assert last.frame == steps - 1
    # target of frame k = phase + k * 360 deg / steps (mod 360): the last is one step short
    # of a whole turn past the first
    first = sched.rows[0].target_phase_deg
    assert last.target_phase_deg == pytest.approx((first + 360.0 * (steps - 1) / steps) % 360.0,
                                                  abs=1e-9)
    assert sum(len(cols["frame"]) for cols in sched.rows.blocks()) == steps


def test_writers_equal_the_whole_document_built_in_memory():
    # The old writers: asdict per row and one json.dumps of the whole schedule.
    for name in sorted(RIGS):
        sched = build_schedule(_plan(name), steps=9000)
        rows = list(sched.rows)
        whole = {
            "format": "strobeplan.schedule", "version": 1, "mode": sched.mode,
            "clock_hz": sched.clock_hz, "drive_period_ticks": sched.drive_period_ticks,
            "flash_period_ticks": sched.flash_period_ticks,
            "frame_period_ticks": sched.frame_period_ticks,
            "rows": [jsonable(asdict(r)) for r in rows]}
        text = schedule_json(sched)
        assert text == json.dumps(whole, indent=2, allow_nan=False) + "\n"
        assert json.loads(text)["rows"][-1]["frame"] == 8999
        csv_lines = schedule_csv(sched).splitlines()
        assert len(csv_lines) == 9001 and csv_lines[0] == ",".join(sched.COLUMNS)
        d = asdict(rows[-1])
        assert csv_lines[-1] == ",".join(
            "" if d[c] is None else (f"{d[c]:.6g}" if isinstance(d[c], float) else str(d[c]))
            for c in sched.COLUMNS)
        ticks = schedule_ticks(sched).splitlines()
        assert len(ticks) == 4 + 9000
        assert ticks[-1] == f"{rows[-1].camera_trigger_ticks} {rows[-1].edge_ticks} " \
            f"{'' if rows[-1].flashes is None else rows[-1].flashes}".rstrip()


_PEAK = """
import sys
from strobeplan.cli import main
try:
    main(sys.argv[1:])
finally:
    # VmHWM: this process's peak resident memory since its exec (ru_maxrss would carry the
    # parent's size over a fork)
    with open("/proc/self/status") as fh:
        print([line.split()[1] for line in fh if line.startswith("VmHWM")][0],
              file=sys.stderr)
"""


@pytest.mark.slow
def test_a_million_row_json_streams_in_bounded_memory(tmp_path):
    # The command in its own process: its peak resident memory (numpy, pydantic and the
    # solved plan included) stays under 100 MB while it writes the ~240 MB document.
    out = tmp_path / "s.json"
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    r = subprocess.run([sys.executable, "-c", _PEAK, "schedule", str(example("levitator-40k")),
                        "--format", "json", "--steps", "1000000", "-o", str(out)],
                       capture_output=True, text=True, env=env, timeout=300)
    assert r.returncode == 0, r.stderr
    peak_kib = int(r.stderr.split()[-1])  # kB
    assert peak_kib * 1024 < 100e6, r.stderr
    frames = 0
    with out.open() as fh:
        head = fh.read(400)
        fh.seek(0)
        for line in fh:
            if line.startswith('      "frame": '):
                frames += 1
                last = line
    assert frames == 1_000_000 and last.strip() == '"frame": 999999,'
    assert head.startswith('{\n  "format": "strobeplan.schedule"')
    with out.open("rb") as fh:
        fh.seek(-4000, os.SEEK_END)
        tail = fh.read().decode()
    assert tail.endswith("\n    }\n  ]\n}\n")
    # the last rows parse as JSON (the whole document is checked at 9,000 rows above)
    rows = json.loads("[" + tail[tail.index("    {\n"):-len("\n}\n")])
    assert rows[-1]["frame"] == 999_999 and rows[-1]["flashes"] == 40


def test_cli_streams_more_than_the_old_cap(tmp_path):
    out = tmp_path / "s.csv"
    r = run_cli("schedule", example("levitator-40k"), "--steps", "150000", "-o", out)
    assert r.exit_code == 0, r.output
    with out.open() as fh:
        assert sum(1 for _ in fh) == 150_001


def test_too_long_a_schedule_is_refused_in_one_line():
    with pytest.raises(WorkloadError, match="--steps"):
        build_schedule(_plan("sweep"), steps=MAX_SCHEDULE_ROWS + 1)
    r = run_cli("schedule", example("levitator-40k"), "--steps", str(10 ** 12))
    assert r.exit_code == 2
    assert "--steps" in r.stderr and "budget" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1 and "Traceback" not in r.stderr


# --- the writers against the plain ones on random rows -----------------------------------------

_FLOAT_COLUMNS = ("target_phase_deg", "achieved_phase_deg", "phase_error_deg", "edge_time_s",
                  "smear")


def _plain_json(sched) -> str:
    """json.dumps of the whole document (plan.jsonable: NaN and infinities become null)."""
    whole = {"format": "strobeplan.schedule", "version": 1, "mode": sched.mode,
             "clock_hz": sched.clock_hz, "drive_period_ticks": sched.drive_period_ticks,
             "flash_period_ticks": sched.flash_period_ticks,
             "frame_period_ticks": sched.frame_period_ticks,
             "rows": [jsonable(dict(zip(sched.COLUMNS, r, strict=True)))
                      for r in sched.all_rows]}
    return json.dumps(whole, indent=2, allow_nan=False) + "\n"


def _plain_csv(sched) -> str:
    """One cell at a time: '' for None, '%.6g' for a float, str() for an int."""
    lines = [",".join(sched.COLUMNS)]
    for r in sched.all_rows:
        lines.append(",".join("" if v is None else (f"{v:.6g}" if isinstance(v, float)
                                                    else str(v)) for v in r))
    return "\n".join(lines) + "\n"


class _Blocks:
    """A stand-in for ScheduleRows: the given blocks of columns."""

    def __init__(self, blocks):
        self._blocks = blocks

    def __len__(self):
        return sum(len(b["frame"]) for b in self._blocks)

    def blocks(self):
        return iter(self._blocks)


def _random_schedule(draw, sizes):
    """A schedule of random blocks: ``draw(column, size)`` gives a column's values."""
    blocks, rows = [], []
    for size in sizes:
        cols = {c: draw(c, size) for c in timing.Schedule.COLUMNS}
        blocks.append(cols)
        rows += list(zip(*(cols[c] for c in timing.Schedule.COLUMNS), strict=True))

    class Sched:
        COLUMNS = timing.Schedule.COLUMNS
        mode, clock_hz = "sweep", 1e8
        drive_period_ticks, flash_period_ticks, frame_period_ticks = 2500, 2500, None

    Sched.rows, Sched.all_rows = _Blocks(blocks), rows
    return Sched


def test_writers_equal_the_plain_writers_on_random_rows():
    """Byte for byte the plain writers on random rows: floats of every magnitude, -0.0,
    NaN, infinities, a few distinct values repeated (the writer formats each distinct value
    once), huge and negative ints, None in the flash columns, blocks of any size."""
    import numpy as np

    rng = np.random.default_rng(20261203)
    special = np.array([0.0, -0.0, math.nan, math.inf, -math.inf, 5e-324,
                        1.7976931348623157e308, 1e16, 1e-5, 123456789.0, 0.1, 1 / 3])

    for trial in range(40):
        def draw(column, size, trial=trial):
            if column in _FLOAT_COLUMNS:
                kind = (trial + _FLOAT_COLUMNS.index(column)) % 3
                if kind == 0:  # distinct, of every magnitude
                    x = rng.uniform(-1e3, 1e3, size) * 10.0 ** rng.integers(-30, 30, size)
                elif kind == 1:  # a few values repeated: the gathered path
                    x = rng.choice(rng.normal(0, 100, 7), size)
                else:  # the special values among a few others
                    x = rng.choice(np.r_[special, rng.normal(0, 1, 5)], size)
                if trial % 2 == 0:  # half the trials without NaN or infinities
                    x = np.where(np.isfinite(x), x, 0.5)
                return [float(v) for v in x]
            v = rng.integers(-2**62, 2**62, size).tolist()
            if trial % 5 == 1:
                v = [x * 2**70 for x in v]  # beyond int64
            if column in ("first_flash_ticks", "flashes") and trial % 3 == 1:
                v = [None if x % 4 == 0 else x for x in v]
            if column == "flashes" and trial % 7 == 3:
                v = [None] * size
            return v

        sizes = rng.integers(1, 200, rng.integers(1, 4)).tolist()
        sched = _random_schedule(draw, sizes)
        assert schedule_json(sched) == _plain_json(sched), trial
        assert schedule_csv(sched) == _plain_csv(sched), trial
