"""Benchmark of `strobeplan tune`: candidates per second of the grid search on one core,
speed-up over the same engine one candidate at a time, and peak memory of a large search.

Run: python bench/bench_tune.py [--quick]. Prints figures (and the ratios against the
scalar path measured in the same run); asserts nothing.

* "search" is the whole grid search (chunked solve of array designs, every rule as a mask,
  ranking, frontier), without the refinement and the verification through check.
* "scalar" is the same engine on one candidate per call (``tune.evaluate`` with a scalar
  design, every stage and rule), on a random sample of the grid.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one core

import argparse  # noqa: E402
import resource  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from strobeplan import tune as tuner  # noqa: E402
from strobeplan.design import Design  # noqa: E402
from strobeplan.rig import load_rig  # noqa: E402
from strobeplan.solve import solve  # noqa: E402


def grid_for(rig, base, widths, series, every, supply_steps):
    return tuner.default_grid(rig, base, widths=widths, series=series,
                              resistor_range=(0.1, 100.0), max_every=every,
                              supply_range=(12.0, 36.0) if supply_steps > 1 else None,
                              supply_steps=supply_steps)


def timed_search(rig, grid):
    t0 = time.perf_counter()
    result = tuner.tune(rig, grid=grid, refine=False)
    return result, time.perf_counter() - t0


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="about 1e6 instead of 1e7 candidates")
    args = ap.parse_args(argv)
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})
    rig = load_rig(ROOT / "configs" / "levitator-40k.toml")
    base = solve(rig)
    print(f"rig: {rig.name}; one core")
    tuner.tune(rig, grid=grid_for(rig, base, 20, "E24", 2, 1), refine=False)  # warm-up

    widths, series, every, steps = (300, "E96", 8, 2) if args.quick else (1000, "E192", 8, 4)
    big = grid_for(rig, base, widths, series, every, steps)
    tracemalloc.start()
    result, seconds = timed_search(rig, big)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB -> MB (Linux)
    result, seconds = timed_search(rig, big)  # again, without tracemalloc's overhead
    rate = big.size / seconds
    print(f"grid {big.shape} (widths, resistors, every, supply) = {big.size:.3g} candidates")
    print(f"  search: {seconds:.2f} s -> {rate:.3g} candidates/s")
    print(f"  peak traced memory {peak / 2**20:.0f} MB, max RSS {rss:.0f} MB")
    b = result.best
    if b is not None:
        print(f"  best: {b.pulse_width_s * 1e6:.4g} us, {b.series_resistor_ohm:g} ohm, every "
              f"{b.every}, {b.supply_voltage_v:.4g} V, {result.objective} {b.score:.4g}; "
              f"{result.feasible} feasible")

    rng = np.random.default_rng(1)
    sample = rng.integers(0, big.size, 200)
    t0 = time.perf_counter()
    for k in sample:
        w, r, e, v = big.at(k)
        tuner.evaluate(rig, Design(pulse_width=w, series_resistor=r, every=e,
                                   supply_voltage=v))
    scalar = sample.size / (time.perf_counter() - t0)
    print(f"scalar path (the same engine, one candidate per call): {scalar:.3g} candidates/s"
          f" -> the grid search is {rate / scalar:.0f}x faster")

    t0 = time.perf_counter()
    full = tuner.tune(rig)
    print(f"default CLI grid ({full.candidates} candidates) with refinement and verification: "
          f"{time.perf_counter() - t0:.2f} s")


if __name__ == "__main__":
    main()
