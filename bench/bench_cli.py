"""Cold-start timings of the CLI as users run it, each as a ratio to its floor.

The package is installed the way users get it (``pip install --no-deps --target TMP .``:
a regular, non-editable, byte-compiled install) and run from there with PYTHONPATH=TMP
(the editable install is left alone). Every command and its floor run alternately in fresh
processes; each figure is the median of --repeat runs (>= 9), and the verdict is its ratio
to the floor measured in the same run, so the load of a shared machine cancels out (the
ratio of CPU times, user + system of the command and any process it starts, is printed
beside it: on a loaded machine the steadier of the two):

* F    = ``python -c "import numpy, pydantic, click"``
* Fmpl = F + ``import matplotlib.figure`` + one backend (agg for PNG, svg for SVG)

Targets: ``check levitator --json`` <= 1.4 F; ``schedule --steps 100000 --format json``
<= 4 F (and <= 100 MB peak memory: VmHWM); ``report`` <= 2.5 Fmpl; every ``plot --kind``
<= 1.6 Fmpl (on a machine whose matplotlib font cache is built; the first plot on a new
machine builds it once, 0.5-1 s).

Run: python bench/bench_cli.py [--repeat 9] [--only check,schedule,report,plot]
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
RIG = str(ROOT / "configs" / "levitator-40k.toml")
KINDS = ("timing", "pulse", "thermal", "tradeoff", "divider", "sweep", "image")

FLOOR = "import numpy, pydantic, click"
FLOOR_MPL = {"png": FLOOR + "; import matplotlib.figure, matplotlib.backends.backend_agg",
             "svg": FLOOR + "; import matplotlib.figure, matplotlib.backends.backend_svg"}

PEAK = """
import sys
from strobeplan.cli import main
try:
    main(sys.argv[1:])
finally:
    with open("/proc/self/status") as fh:
        print([l.split()[1] for l in fh if l.startswith("VmHWM")][0], file=sys.stderr)
"""


def install(target: Path) -> None:
    """A regular install of this checkout into ``target`` (byte-compiled by pip)."""
    subprocess.run([sys.executable, "-m", "pip", "install", "--quiet", "--no-deps",
                    "--target", str(target), str(ROOT)],
                   check=True, stdout=subprocess.DEVNULL,
                   env={**os.environ, "PIP_ROOT_USER_ACTION": "ignore"})
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(target / "strobeplan")],
                   check=True)


def run(cmd: list[str], env: dict) -> tuple[float, float]:
    """(wall seconds, CPU seconds: user + system of the process and its children)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                   cwd=tempfile.gettempdir())
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def compare(label: str, cmd: list[str], floor: list[str], env: dict, repeat: int,
            target: float, floor_name: str) -> float:
    """Median seconds of ``cmd`` and of ``floor``, run alternately; prints the ratio of the
    wall times (the target's) and, for a loaded machine, of the CPU times."""
    run(cmd, env)  # warm the page cache (and matplotlib's font cache) once
    a, b = [], []
    for _ in range(repeat):
        b.append(run(floor, env))
        a.append(run(cmd, env))
    ma, mb = (statistics.median(w for w, _c in x) for x in (a, b))
    ca, cb = (statistics.median(c for _w, c in x) for x in (a, b))
    ratio = ma / mb
    ok = "met" if ratio <= target else "NOT MET"
    print(f"{label:<42} {ma * 1e3:7.0f} ms / {floor_name} {mb * 1e3:5.0f} ms = "
          f"{ratio:5.2f} x {floor_name} (target <= {target:g}: {ok}); CPU time "
          f"{ca / cb:5.2f} x", flush=True)
    return ratio


def main(argv=None) -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=9)
    ap.add_argument("--only", default="check,schedule,report,plot")
    args = ap.parse_args(argv)
    only = set(args.only.split(","))
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        site = Path(tmp) / "site"
        install(site)
        env = {**os.environ, "PYTHONPATH": str(site), "MPLBACKEND": "agg"}
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        print(f"installed (non-editable, byte-compiled) into {site}; medians of "
              f"{args.repeat} alternating runs", flush=True)
        floor = [py, "-c", FLOOR]
        sp = [py, "-m", "strobeplan.cli"]
        if "check" in only:
            compare("check levitator --json", sp + ["check", RIG, "--json"], floor, env,
                    args.repeat, 1.4, "F")
            compare("--help", sp + ["--help"], floor, env, args.repeat, 1.0, "F")
        if "schedule" in only:
            out = str(Path(tmp) / "s.json")
            compare("schedule --steps 100000 --format json",
                    sp + ["schedule", RIG, "--steps", "100000", "--format", "json", "-o", out],
                    floor, env, args.repeat, 4.0, "F")
            r = subprocess.run([py, "-c", PEAK, "schedule", RIG, "--steps", "1000000",
                                "--format", "json", "-o", out], env=env, capture_output=True,
                               text=True)
            peak = int(r.stderr.split()[-1]) / 1024.0
            print(f"{'schedule --steps 1000000 --format json':<42} peak {peak:5.0f} MB "
                  f"(target <= 100 MB: {'met' if peak <= 100 else 'NOT MET'}); "
                  f"{os.path.getsize(out) / 1e6:.0f} MB written", flush=True)
        if "report" in only:
            out = str(Path(tmp) / "r.html")
            compare("report levitator", sp + ["report", RIG, "-o", out],
                    [py, "-c", FLOOR_MPL["svg"]], env, args.repeat, 2.5, "Fmpl")
        if "plot" in only:
            for kind in KINDS:
                out = str(Path(tmp) / f"{kind}.png")
                compare(f"plot --kind {kind}", sp + ["plot", RIG, "--kind", kind, "-o", out],
                        [py, "-c", FLOOR_MPL["png"]], env, args.repeat, 1.6, "Fmpl")


if __name__ == "__main__":
    main()
