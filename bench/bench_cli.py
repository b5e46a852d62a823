"""Cold-start timings of the CLI (targets: 150 ms and 400 ms), medians of repeated fresh processes.

Targets: `strobeplan --help` <= 150 ms; `strobeplan check configs/levitator-40k.toml --json`
<= 400 ms median cold; printed next to the bare `import numpy, pydantic, click` time.
Run: python bench/bench_cli.py [--repeat N]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def median_ms(cmd: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append((time.perf_counter() - t0) * 1e3)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=15)
    args = ap.parse_args()
    py = sys.executable
    # A regular `pip install` byte-compiles the package; an editable install under
    # PYTHONDONTWRITEBYTECODE=1 (set on these machines) would recompile every module on
    # every start (~80 ms). Compile once, as an installed package would be.
    subprocess.run([py, "-m", "compileall", "-q", str(ROOT / "strobeplan")], check=True)
    print("(strobeplan byte-compiled first, as `pip install` does)")
    rows = [
        ("python -c 'import numpy, pydantic, click'",
         [py, "-c", "import numpy, pydantic, click"], None),
        ("strobeplan --help", [py, "-m", "strobeplan.cli", "--help"], 150.0),
        ("strobeplan check levitator --json",
         [py, "-m", "strobeplan.cli", "check", "configs/levitator-40k.toml", "--json"], 400.0),
    ]
    for label, cmd, target in rows:
        ms = median_ms(cmd, args.repeat)
        verdict = "" if target is None else (" ok" if ms <= target else " OVER TARGET")
        tgt = "" if target is None else f" (target {target:.0f} ms)"
        print(f"{label:<45} {ms:7.1f} ms median of {args.repeat}{tgt}{verdict}")


if __name__ == "__main__":
    main()
