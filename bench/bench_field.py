"""Benchmark of the sound-field model.

Target: complex pressure at 1e6 points from 2 emitters with first-order reflections (one
plane reflector: 4 pistons) in <= 2 s on one core, memory bounded by the chunk size. The
floor is the least any piston-sum must do in numpy: one distance and one e^{-jkr}/r per
point and source (a monopole sum, float32 cosine and sine), measured in the same run.
Prints figures; asserts nothing.

    python bench/bench_field.py [--n 1000000] [--chunk 8192]
"""

from __future__ import annotations

import argparse
import os
import time
import tracemalloc

os.environ.setdefault("OMP_NUM_THREADS", "1")  # one core (BLAS threads off)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from strobeplan.physics import air, field  # noqa: E402


def monopole_floor(points, sources, k, chunk):
    out = np.zeros(points.shape[0], dtype=complex)
    for s in sources:
        for i in range(0, points.shape[0], chunk):
            r = np.linalg.norm(points[i:i + chunk] - s.centre, axis=1)
            ph = (k * r) % (2 * np.pi)
            ph32 = ph.astype(np.float32)
            out[i:i + chunk] += (np.cos(ph32) - 1j * np.sin(ph32)) / r
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=1_000_000)
    ap.add_argument("--chunk", type=int, default=8192)
    args = ap.parse_args()
    f, c = 40e3, 343.2
    kap = field.wavenumber(f, c, air.absorption(f, 293.15, 0.5, 101325.0))
    rng = np.random.default_rng(1)
    pts = rng.uniform([-0.04, -0.03, 0.001], [0.04, 0.03, 0.06], (args.n, 3))
    emitters = [field.Piston(np.array([-0.01, 0, 0.0]), np.array([0, 0, 1.0]), 5e-3, 1.0),
                field.Piston(np.array([0.01, 0, 0.0]), np.array([0, 0, 1.0]), 5e-3,
                             np.exp(0.5j))]
    wall = [field.Plane(np.array([0, 0, 0.0615]), np.array([0, 0, -1.0]), 0.95)]
    sources = emitters + field.next_images(emitters, wall)
    field.field_pressure(pts[:1000], sources, kap)  # warm up
    t0 = time.perf_counter()
    p = field.field_pressure(pts, sources, kap, 413.0, chunk=args.chunk)
    t_field = time.perf_counter() - t0
    t0 = time.perf_counter()
    monopole_floor(pts, sources, kap.real, args.chunk)
    t_floor = time.perf_counter() - t0
    tracemalloc.start()
    field.field_pressure(pts[:200_000], sources, kap, 413.0, chunk=args.chunk)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    nodes = field.rim_nodes(5e-3, kap) + 1
    print(f"points {args.n:.0e}, pistons {len(sources)} (2 emitters + first-order images), "
          f"rim nodes {nodes}, chunk {args.chunk}")
    print(f"field: {t_field:.2f} s (target <= 2 s)  "
          f"[{t_field / (args.n * len(sources) * nodes) * 1e9:.1f} ns per point, source "
          f"and node]")
    print(f"numpy floor (monopole sum): {t_floor:.2f} s; ratio {t_field / t_floor:.1f}")
    print(f"peak traced memory for 2e5 points: {peak / 1e6:.1f} MB "
          f"(output {200_000 * 16 / 1e6:.1f} MB; the rest scales with the chunk)")
    print(f"max |p| {np.abs(p).max():.3g} Pa per m/s of surface velocity")


if __name__ == "__main__":
    main()
