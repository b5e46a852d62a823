"""Benchmark of the phase-stepped demodulation behind `strobeplan analyse`.

Target: 36 frames of 1024 x 1024 x 16 bit (TIFF files on disk) demodulated in <= 3 s and
<= 1.5 GiB on one core, streaming the frames (the normal equations are accumulated frame by
frame; no stack is held). The floor is reading the same files alone (tifffile, into float64),
measured in the same run; the ratio to it is what to compare across machines. Peak memory is
the largest resident set of a fresh process that only demodulates (ru_maxrss), and the
Python-level peak (tracemalloc, numpy's buffers included). The whole analysis (wave vector,
phase at the view, Abel inversion) is timed after it. Prints figures; asserts nothing.

    python bench/bench_analyse.py [--frames 36] [--size 1024]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")  # one core (BLAS threads off)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402


def make_frames(folder: Path, n: int, size: int) -> None:
    import tifffile

    rng = np.random.default_rng(0)
    rows, cols = np.mgrid[0:size, 0:size]
    k = 2 * np.pi / 50.0  # a 50-pixel wavelength travelling up the picture
    for i in range(n):
        phi = 2 * np.pi * i / n
        img = 20000 * (1 + 0.03 * np.sin(phi + k * rows)) + rng.normal(0, 150, (size, size))
        tifffile.imwrite(folder / f"frame_{i:03d}.tif", np.clip(img, 0, 65535).astype(np.uint16))


def child(folder: str, n: int, what: str) -> None:
    """Run in a fresh process: print seconds and peak RSS [bytes]."""
    import resource
    import tracemalloc

    from strobeplan.analyse import demodulate, expand_inputs, iter_frames

    paths = expand_inputs([folder])
    phases = np.arange(n) * 2 * np.pi / n
    tracemalloc.start()
    t0 = time.perf_counter()
    if what == "read":
        total = 0.0
        for grey, *_ in iter_frames(paths):
            total += float(grey[0, 0])
    else:
        demodulate(paths, phases, (1, 2))
    dt = time.perf_counter() - t0
    peak_py = tracemalloc.get_traced_memory()[1]
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(f"{dt} {rss} {peak_py}")


def run_child(folder, n, what):
    out = subprocess.run([sys.executable, __file__, "--child", what, "--dir", folder,
                          "--frames", str(n)], capture_output=True, text=True, check=True,
                         env={**os.environ, "PYTHONPATH": os.environ.get("PYTHONPATH", "")})
    t, rss, py = out.stdout.split()
    return float(t), int(rss), int(py)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--frames", type=int, default=36)
    ap.add_argument("--size", type=int, default=1024)
    ap.add_argument("--child", default=None)
    ap.add_argument("--dir", default=None)
    args = ap.parse_args()
    if args.child:
        child(args.dir, args.frames, args.child)
        return
    with tempfile.TemporaryDirectory() as tmp:
        make_frames(Path(tmp), args.frames, args.size)
        run_child(tmp, args.frames, "read")  # warm the page cache
        t_read, rss_read, _ = run_child(tmp, args.frames, "read")
        t_dem, rss_dem, py_dem = run_child(tmp, args.frames, "demodulate")
        gib = 1024**3
        print(f"{args.frames} frames of {args.size} x {args.size} x 16 bit (TIFF on disk)")
        print(f"  read alone (floor): {t_read:.3f} s, peak RSS {rss_read / gib:.3f} GiB")
        print(f"  demodulate:         {t_dem:.3f} s (target 3 s), peak RSS "
              f"{rss_dem / gib:.3f} GiB (target 1.5 GiB), Python-level peak "
              f"{py_dem / gib:.3f} GiB")
        print(f"  ratio to the floor: {t_dem / t_read:.2f}")
        from strobeplan import load_rig, solve
        from strobeplan.analyse import analyse_frames

        root = Path(__file__).resolve().parents[1]
        rig = load_rig(root / "configs" / "levitator-40k.toml")
        plan = solve(rig)
        t0 = time.perf_counter()
        analyse_frames(rig, [tmp], list(np.degrees(np.arange(args.frames) * 2 * np.pi
                                                   / args.frames)), plan=plan)
        print(f"  whole analysis (maps, wave, view, Abel): {time.perf_counter() - t0:.3f} s")


if __name__ == "__main__":
    main()
