"""Benchmark of ``strobeplan preview``.

Target: a 512 x 512 view, 64 samples along the light, 2 emitters with first-order
reflections (one plane reflector: 4 pistons), 36 frames with noise: <= 10 s and <= 1 GiB on
one core. Prints the time of the field (per lattice row and per field evaluation: one
piston at one point), the time per frame, the peak resident memory, and two floors measured
in the same run: the monopole sum (bench_field.py's floor) at the lattice's points, and
the least a frame must do (one table look-up and one Poisson draw per pixel). Asserts
nothing.

    python bench/bench_preview.py [--frames 36] [--pixels 512] [--samples 64]
"""

from __future__ import annotations

import argparse
import os
import resource
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")  # one core (BLAS threads off)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from strobeplan.rig import rig_from_dict  # noqa: E402
from strobeplan.solve import solve  # noqa: E402


def bench_rig(pixels: int, samples: int, frames: int):
    """The levitator's optics and camera, two emitters side by side and one reflector."""
    import tomllib
    from pathlib import Path

    raw = tomllib.loads((Path(__file__).resolve().parents[1] / "configs"
                         / "levitator-40k.toml").read_text())
    em = raw.pop("emitter")
    em.pop("spl_at_view", None)
    em.pop("synthesis", None)
    raw["emitter"] = [dict(em, position=["-12 mm", "0 mm", "0 mm"]),
                      dict(em, position=["12 mm", "0 mm", "0 mm"], phase="30 deg")]
    raw["reflector"] = [{"position": ["0 mm", "0 mm", "64.3 mm"], "normal": [0, 0, -1],
                         "reflection": 0.98}]
    pixel = 5.86e-6 / (50e-3 / (1.5 - 50e-3))  # the levitator's object pixel [m]
    side = f"{pixels * pixel * 1e3:.6f} mm"
    raw["view"] = {"centre": ["0 mm", "0 mm", "32 mm"], "width": side, "height": side,
                   "depth": "60 mm", "samples": samples, "light_axis": [0, 1, 0]}
    raw["sweep"] = {"steps": frames, "span": "360 deg"}
    return rig_from_dict(raw)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--frames", type=int, default=36)
    ap.add_argument("--pixels", type=int, default=512)
    ap.add_argument("--samples", type=int, default=64)
    args = ap.parse_args()
    from strobeplan.preview import render_preview

    rig = bench_rig(args.pixels, args.samples, args.frames)
    plan = solve(rig)
    stamps = []
    t0 = time.perf_counter()
    pv = render_preview(rig, plan, seed=1,
                        progress=lambda i, n: stamps.append((i, n, time.perf_counter())))
    total = time.perf_counter() - t0
    s = pv.summary
    rows_v = stamps[0][1] - s["frames"]
    t_field = stamps[rows_v - 1][2] - t0
    t_frames = stamps[-1][2] - stamps[rows_v - 1][2]
    evals = s["field_evaluations"]
    peak_rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(f"view {s['width_px']} x {s['height_px']} px, {s['samples_along_light']} samples "
          f"along the light, {s['sources']} pistons, {s['frames']} frames; lattice "
          f"{s['lattice_points']} points at lambda/{s['lattice_fraction_of_wavelength']} "
          f"({s['lattice_spacing_m'] * 1e3:.3f} mm)")
    print(f"total {total:.2f} s (target <= 10 s); field {t_field:.2f} s "
          f"({t_field / evals * 1e9:.0f} ns per field evaluation, {evals:.3g} evaluations); "
          f"frames {t_frames:.2f} s ({t_frames / s['frames'] * 1e3:.1f} ms per frame)")
    print(f"peak resident memory {peak_rss / 2**20:.0f} MiB (target <= 1024 MiB)")

    # Floors in the same run.
    from strobeplan.physics import field

    pts = np.random.default_rng(0).uniform(-0.03, 0.03, (s["lattice_points"], 3))
    pts[:, 2] += 0.032
    k = 2 * np.pi / s["sound_wavelength_m"]
    t1 = time.perf_counter()
    for c in ([-0.012, 0, 0], [0.012, 0, 0], [-0.012, 0, 0.1286], [0.012, 0, 0.1286]):
        for i in range(0, len(pts), 8192):
            r = np.linalg.norm(pts[i:i + 8192] - np.asarray(c), axis=1)
            ph = ((k * r) % (2 * np.pi)).astype(np.float32)
            _ = (np.cos(ph) - 1j * np.sin(ph)) / r
    floor_field = time.perf_counter() - t1
    del field
    rng = np.random.default_rng(0)
    img = rng.uniform(-1, 1, (s["height_px"], s["width_px"]))
    tab = np.linspace(-1, 1, 8193)
    t1 = time.perf_counter()
    for _ in range(s["frames"]):
        rng.poisson(np.interp(img, tab, tab + 1.0) * 2e4)
    floor_frames = time.perf_counter() - t1
    print(f"floors: monopole sum at the lattice points {floor_field:.2f} s (field ratio "
          f"{t_field / floor_field:.1f}); look-up + Poisson per pixel {floor_frames:.2f} s "
          f"(frames ratio {t_frames / floor_frames:.1f})")


if __name__ == "__main__":
    main()
