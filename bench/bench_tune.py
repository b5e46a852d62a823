"""Benchmark of `strobeplan tune` on one core: the grid rate against the floor of its model,
a plain-Python scalar baseline, the fixed per-search overhead of the default search, and
peak memory.

Run: python bench/bench_tune.py [--quick] [--repeat 9]. Prints figures and ratios measured
in the same run (the machine may be shared: only the ratios are meaningful); asserts
nothing.

* "grid": the engine on grid chunks (``tune.evaluate(rules_only=True)`` of 65,536-candidate
  chunks of a levitator-40k grid, spread evenly over its widths: every stage and every rule
  on arrays), candidates per second, and the share of that time spent in the burst's
  flash-by-flash capacitor sag (``physics.supply.burst_sag``).
* "numpy floor": what numpy itself needs per chunk for the part of the model no correct
  evaluation can skip, at the same array sizes: per candidate one evaluation of its circuit's
  stuck-on junction response at its own starting temperature (one multiply, one add, one
  comparison with the limit and one running maximum: 4 passes; the verdict needs at least
  the step where the peak or the crossing happens) and one exp and one log pass (the LED
  operating point's transcendentals, counted once although the burst sag repeats them per
  flash). The full stuck-on time grid (``steps`` below) is not counted: the engine scans
  only the steps that can change the peak or the first crossing
  (``physics.supply._steps_that_matter``, a rigorous envelope test; the number it kept for
  a full plan is printed; the search's chunks, which no rule reads the peak of, keep only
  the crossing's). Median of --repeat alternating runs with the engine; the ratio engine / floor
  says how far the engine is above numpy's limit.
* "scalar": the same floor operations on plain Python floats with ``math`` (one candidate
  at a time: the fair scalar baseline, not numpy on one-element arrays); the grid's speed-up
  over it understates the speed-up over a scalar engine (which must do at least this).
* "default search": ``tune`` of the levitator example with the CLI's defaults (grid,
  refinement, runner-ups, frontier, verification through check); the fixed overhead is the
  time outside the grid chunks (target <= 10 % of the search).

Targets (issue "speed"): grid >= 4e6 candidates/s on one core; fixed overhead <= 10 %.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one core

import argparse  # noqa: E402
import math  # noqa: E402
import resource  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from strobeplan import tune as tuner  # noqa: E402
from strobeplan.physics import supply as supply_model  # noqa: E402
from strobeplan.rig import load_rig  # noqa: E402
from strobeplan.solve import solve  # noqa: E402

TARGET_RATE = 4e6
TARGET_OVERHEAD = 0.10


def grid_for(rig, base, widths, series, every, supply_steps):
    return tuner.default_grid(rig, base, widths=widths, series=series,
                              resistor_range=(0.1, 100.0), max_every=every,
                              supply_range=(12.0, 36.0) if supply_steps > 1 else None,
                              supply_steps=supply_steps)


def chunk_designs(grid, count):
    """``count`` of the search's chunks, evenly spread over the grid's widths (the cost of a
    chunk grows with its widths: the wider pulses droop, and their bursts are stepped flash
    by flash; the first chunks alone would overstate the rate by 3-4 x)."""
    nw, nr, ne, nv = grid.shape
    rows = max(1, tuner.DEFAULT_CHUNK // (nr * ne * nv))
    full = nw // rows  # chunks of the full size
    pick = np.unique(np.linspace(0, max(full - 1, 0), count).round().astype(int))
    return [grid.design(slice(i * rows, min(nw, (i + 1) * rows))) for i in pick]


def model_sizes(rig, design):
    """Steps of the stuck-on time grid, the most steps the scan kept for one circuit, and
    the burst's flash iterations for a chunk."""
    kept = []
    real = supply_model._steps_that_matter

    def spy(*args):
        out = real(*args)
        kept.append(args[2].shape[0] if out is None else out.shape[1])
        return out

    supply_model._steps_that_matter = spy
    supply_model.forget_circuits()
    try:
        plan = solve(rig, design, checks=False)
    finally:
        supply_model._steps_that_matter = real
    cr = supply_model._LAST_CIRCUIT[0][1]  # the circuit the power stage just solved
    flashes = int(np.max(np.asarray(plan.timing.flashes_per_frame)))
    return cr.n_steps + 1, max(kept, default=cr.n_steps + 1), max(1, flashes)


def floor_numpy(n):
    """The floor's passes (see the module docstring) on n candidates."""
    x = np.random.default_rng(0).random(n)
    d, z = 0.5, 0.75
    rise, peak = np.empty(n), x.copy()
    hit = np.empty(n, dtype=bool)
    t0 = time.perf_counter()
    np.multiply(x, d, out=rise)
    np.add(rise, z, out=rise)
    np.greater_equal(rise, 1.5, out=hit)
    np.maximum(peak, rise, out=peak)
    np.exp(-x, out=rise)
    np.log1p(rise, out=rise)
    return time.perf_counter() - t0


def floor_scalar(n):
    """The same operations on plain floats, one candidate at a time (n candidates)."""
    xs = [0.1 + 0.8 * k / n for k in range(n)]
    d, z = 0.5, 0.75
    exp, log1p = math.exp, math.log1p
    t0 = time.perf_counter()
    for x in xs:
        r = x * d + z
        first = r >= 1.5
        peak = r if r > x else x
        log1p(exp(-x))
    del first, peak
    return time.perf_counter() - t0


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer chunks")
    ap.add_argument("--repeat", type=int, default=9)
    args = ap.parse_args(argv)
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})
    rig = load_rig(ROOT / "configs" / "levitator-40k.toml")
    base = solve(rig)
    print(f"rig: {rig.name}; one core; medians of {args.repeat} alternating runs")

    grid = grid_for(rig, base, 300, "E96", 8, 2)
    designs = chunk_designs(grid, 3 if args.quick else 6)
    known = tuner.rig_constants(rig)
    tuner.evaluate(rig, designs[0], known, rules_only=True)  # warm-up (and the circuit's response)
    steps, scanned, flashes = model_sizes(rig, designs[0])
    sizes = [math.prod(d.shape) for d in designs]
    engine, floor = [], []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        for d in designs:
            tuner.evaluate(rig, d, known, rules_only=True)
        engine.append(time.perf_counter() - t0)
        floor.append(sum(floor_numpy(n) for n in sizes))
    n_total = sum(sizes)
    t_e, t_f = statistics.median(engine), statistics.median(floor)
    rate, floor_rate = n_total / t_e, n_total / t_f
    sample = 20000
    scalar_rate = sample / floor_scalar(sample)
    print(f"grid {grid.shape} (widths, resistors, every, supply); {len(designs)} chunks of "
          f"{sizes[0]} candidates; model: {steps} stuck-on steps ({scanned} scanned per "
          f"circuit at most), {flashes} flashes per burst")
    print(f"  engine        {rate:10.3g} candidates/s (target >= {TARGET_RATE:.0e}: "
          f"{'met' if rate >= TARGET_RATE else 'NOT MET'})")
    burst = []
    real_sag = supply_model.burst_sag

    def timed_sag(*a, **k):
        t0 = time.perf_counter()
        out = real_sag(*a, **k)
        burst.append(time.perf_counter() - t0)
        return out

    supply_model.burst_sag = timed_sag
    try:
        t0 = time.perf_counter()
        for d in designs:
            tuner.evaluate(rig, d, known, rules_only=True)
        t_once = time.perf_counter() - t0
    finally:
        supply_model.burst_sag = real_sag
    share = 100 * sum(burst) / t_once
    print(f"                of which the burst's flash-by-flash sag {share:.0f} %")
    print(f"  numpy floor   {floor_rate:10.3g} candidates/s -> engine = {t_e / t_f:.1f} x floor")
    print(f"  scalar floor  {scalar_rate:10.3g} candidates/s (plain floats, math) -> the grid "
          f"is {rate / scalar_rate:.2g} x the scalar baseline")

    # The default search: time inside the grid chunks against the whole.
    inside = []
    real = tuner.evaluate

    def timed(rig_, design, known_=None, **kw):
        t0 = time.perf_counter()
        out = real(rig_, design, known_, **kw)
        if len(design.shape) == 4:
            inside.append(time.perf_counter() - t0)
        return out

    totals, overheads = [], []
    tuner.evaluate = timed
    try:
        for _ in range(max(3, args.repeat // 3)):
            inside.clear()
            t0 = time.perf_counter()
            result = tuner.tune(rig)
            total = time.perf_counter() - t0
            totals.append(total)
            overheads.append((total - sum(inside)) / total)
    finally:
        tuner.evaluate = real
    over = statistics.median(overheads)
    print(f"default search: {result.candidates} candidates in {statistics.median(totals):.2f} s;"
          f" fixed overhead {100 * over:.0f} % (target <= {100 * TARGET_OVERHEAD:.0f} %: "
          f"{'met' if over <= TARGET_OVERHEAD else 'NOT MET'})")
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(f"max RSS {rss:.0f} MB")


if __name__ == "__main__":
    main()
