"""Benchmark of `strobeplan tune` (targets below): candidates per second on one core
(target >= 1e6/s), speed-up over a scalar loop over the same candidates (target >= 100x),
and peak memory of a 1e7-candidate search (target < 500 MB).

Run: python bench/bench_tune.py [--quick]. Prints figures; asserts nothing.

* "search" is the whole vectorised search (timing table, chunked evaluation, top designs,
  frontier), without the final verification through solve, which is timed separately.
* The grid is separable: the pulse operating point depends on (width, resistor, voltage) and
  is broadcast over `every`; the rate with a single `every` value shows the search without
  that reuse.
* "scalar loop" evaluates the very same model one candidate at a time (the same functions,
  called with one-element arrays), on a random sample of the grid; "solve path" runs the
  ordinary solve (every stage and check) per candidate.
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
from strobeplan.rig import load_rig  # noqa: E402
from strobeplan.solve import solve  # noqa: E402


def grid_for(rig, base, widths, series, every, supply_steps):
    return tuner.default_grid(rig, base, widths=widths, series=series,
                              resistor_range=(0.1, 100.0), max_every=every,
                              supply_range=(12.0, 36.0) if supply_steps > 1 else None,
                              supply_steps=supply_steps)


def timed_search(rig, base, grid, limits):
    t0 = time.perf_counter()
    result = tuner.tune(rig, limits, grid, base=base, verify=0)
    return result, time.perf_counter() - t0


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="1e6 instead of 1e7 candidates")
    args = ap.parse_args(argv)
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})
    rig = load_rig(ROOT / "configs" / "levitator-40k.toml")
    base = solve(rig)
    limits = tuner.Limits(min_retention=rig.strobe.min_retention)
    print(f"rig: {rig.name}; one core (affinity {sorted(os.sched_getaffinity(0))})")

    # Warm-up (imports, first calls).
    tuner.tune(rig, limits, grid_for(rig, base, 20, "E24", 2, 1), base=base, verify=0)

    widths, series, every, steps = (400, "E96", 8, 2) if args.quick else (1000, "E192", 8, 4)
    big = grid_for(rig, base, widths, series, every, steps)
    tracemalloc.start()
    result, seconds = timed_search(rig, base, big, limits)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB -> MB (Linux)
    # The same search again without tracemalloc's overhead, for the rate.
    result, seconds = timed_search(rig, base, big, limits)
    rate = big.size / seconds
    print(f"grid {big.shape} (widths, resistors, every, supply) = {big.size:.3g} candidates")
    print(f"  search: {seconds:.2f} s -> {rate:.3g} candidates/s (target >= 1e6/s)")
    print(f"  peak traced memory {peak / 2**20:.0f} MB, max RSS {rss:.0f} MB "
          "(target < 500 MB)")
    b = result.best
    print(f"  best: {b.pulse_width_s * 1e6:.4g} us, {b.series_resistor_ohm:g} ohm, every "
          f"{b.every}, {b.supply_voltage_v:.4g} V, light {b.light_per_frame:.4g} A s, "
          f"limited by {b.limited_by}; {result.feasible} feasible")

    ctx = tuner._context(rig, base, limits)
    t0 = time.perf_counter()
    tuner._timing_table(ctx, big.widths, big.everys)
    t_table = time.perf_counter() - t0
    pairs = big.widths.size * big.everys.size
    print(f"  of which the timing table: {pairs} (width, every) pairs in {t_table:.2f} s")

    one = tuner.Grid(big.widths, big.resistors, big.everys[:1], big.voltages, big.series)
    _, s1 = timed_search(rig, base, one, limits)
    print(f"grid with every = 1 only ({one.size:.3g} candidates, no broadcast over every): "
          f"{one.size / s1:.3g} candidates/s")

    # Scalar loop over the same candidates: the same model, one candidate per call.
    tt = tuner._timing_table(ctx, big.widths, big.everys)
    stuck = tuner._stuck_table(ctx, big.resistors, big.voltages)
    rng = np.random.default_rng(1)
    sample = rng.integers(0, big.size, 2000)
    t0 = time.perf_counter()
    for k in sample:
        tuner._evaluate_flat(ctx, tt, stuck, big, limits, [k])
    scalar = sample.size / (time.perf_counter() - t0)
    t0 = time.perf_counter()
    tuner._evaluate_flat(ctx, tt, stuck, big, limits, sample)
    vec_same = sample.size / (time.perf_counter() - t0)
    print(f"scalar loop (same model, one candidate per call, {sample.size} candidates): "
          f"{scalar:.3g} candidates/s")
    print(f"  speed-up of the search over the scalar loop: {rate / scalar:.0f}x "
          f"(target >= 100x); without the broadcast over every {one.size / s1 / scalar:.0f}x; "
          f"the {sample.size} sampled candidates as one array: {vec_same:.3g}/s")
    n_solve = 40
    t0 = time.perf_counter()
    for k in sample[:n_solve]:
        w, r, e, v = big.at(k)
        solve(tuner.candidate_rig(rig, tuner.Design(w, r, e, v, 0, None, 0, 0, 0, 0, 0)))
    solve_rate = n_solve / (time.perf_counter() - t0)
    print(f"solve path (every stage and check per candidate): {solve_rate:.3g} candidates/s "
          f"-> the search is {rate / solve_rate:.3g}x faster")

    t0 = time.perf_counter()
    full = tuner.tune(rig, limits, grid_for(rig, base, 160, "E24", 8, 1), base=base)
    print(f"default CLI grid ({full.candidates} candidates) with verification through solve: "
          f"{time.perf_counter() - t0:.2f} s")


if __name__ == "__main__":
    main()
