"""Benchmark of the power-stage physics (target below).

Target: operating point and burst peak for 1e5 candidate rigs, vectorised, in <= 0.5 s.
Also runs ngspice on a sample of the same circuits and prints the speed ratio per circuit
and the largest disagreement. Prints figures; asserts nothing.

    python bench/bench_power.py [--n 100000] [--spice 20]
"""

from __future__ import annotations

import argparse
import re
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

import numpy as np

from strobeplan.physics import led, thermal

R = np.array([0.5, 2.0, 6.0, 4.0])  # Foster network of our own [K/W]
TAU = np.array([20e-6, 300e-6, 20e-3, 2.0])  # [s]


def candidates(n, rng):
    """Random but plausible flash rigs (our own ranges)."""
    fits = [led.fit_forward_voltage(*zip(*p, strict=True)) for p in (
        [(0.35, 2.10), (0.7, 2.25), (1.5, 2.55)],
        [(0.35, 2.95), (1.0, 3.25), (3.0, 3.8)],
        [(0.5, 3.0), (1.5, 3.4), (4.0, 4.1)],
    )]
    k = rng.integers(0, len(fits), n)
    return dict(
        supply_voltage=rng.uniform(12, 60, n),
        capacitance=10 ** rng.uniform(-6, -3, n),
        esr=rng.uniform(0.01, 0.2, n),
        series_resistor=rng.uniform(0.3, 5.0, n),
        on_resistance=rng.uniform(0.003, 0.05, n),
        recharge_current=rng.uniform(0.0, 2.0, n),
        width=10 ** rng.uniform(-7, np.log10(20e-6), n),
        n_vt=np.array([f.n_vt for f in fits])[k],
        saturation_current=np.array([f.saturation_current for f in fits])[k],
        led_series_resistance=np.array([f.series_resistance for f in fits])[k],
    )


def netlist(p, on_at=100e-9):
    n = p["n_vt"] / float(led.thermal_voltage(298.15))
    tp = p["width"]
    stop = on_at + tp
    return f"""* bench flash
.options TEMP=25 TNOM=25
.model DLED D(IS={p['saturation_current']:.12e} N={n:.12e} RS={p['led_series_resistance']:.12e})
.model SWG SW(VT=2.5 VH=0.1 RON={p['on_resistance']:.12e} ROFF=1e9)
C1 cap 0 {p['capacitance']:.12e} IC={p['supply_voltage']:.12e}
RESR cap out {p['esr']:.12e}
IB 0 out PULSE(0 {p['recharge_current']:.12e} {on_at:.6e} 1p 1p {2 * tp:.6e} 1)
RSER out anode {p['series_resistor']:.12e}
D1 anode cathode DLED
VSENSE cathode drain 0
S1 drain 0 gate 0 SWG
VG gate 0 PULSE(0 5 {on_at:.6e} 1p 1p {2 * tp:.6e} 1)
.tran {tp / 4000:.6e} {stop * 1.01:.6e} 0 {tp / 4000:.6e} UIC
.meas tran ipk MAX I(VSENSE) FROM={on_at:.6e} TO={stop:.6e}
.meas tran qp INTEG I(VSENSE) FROM={on_at:.6e} TO={stop:.6e}
.meas tran vend FIND V(cap) AT={stop:.6e}
.end
"""


def run_spice(p, workdir):
    cir = Path(workdir) / "b.cir"
    cir.write_text(netlist(p))
    out = subprocess.run(["ngspice", "-n", "-b", str(cir)], capture_output=True, text=True,
                         cwd=workdir, timeout=60).stdout
    tail = out.split("Measurements for", 1)[-1]
    vals = {m.group(1).lower(): float(m.group(2))
            for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", tail, re.MULTILINE)}
    return vals


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=100_000)
    ap.add_argument("--spice", type=int, default=20)
    args = ap.parse_args()
    rng = np.random.default_rng(4)
    c = candidates(args.n, rng)
    spacing = c["width"] * rng.uniform(2, 50, args.n)
    flashes = rng.integers(1, 40, args.n)
    frame = np.maximum(flashes * spacing * 1.5, 1 / 120)

    led.pulse_operating_point(**{k: v[:100] for k, v in c.items()})  # warm-up
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        op = led.pulse_operating_point(**c)
        heat = 0.7 * op.led_energy / c["width"]
        peak = thermal.burst_peak(heat, c["width"], spacing, flashes, frame, R, TAU)
        times.append(time.perf_counter() - t0)
    best, med = min(times), float(np.median(times))
    print(f"operating point + burst peak, {args.n} candidates: best {best * 1e3:.1f} ms, "
          f"median {med * 1e3:.1f} ms (target <= 500 ms)")
    print(f"  finite results: {np.isfinite(op.charge).mean():.4f} (charge), "
          f"{np.isfinite(peak).mean():.4f} (peak rise)")
    per_candidate = med / args.n

    if shutil.which("ngspice") is None:
        print("ngspice not found: skipping the comparison")
        return
    worst = {"ipk": 0.0, "qp": 0.0, "vend": 0.0}
    spice_times = []
    with tempfile.TemporaryDirectory() as d:
        for j in range(args.spice):
            p = {k: float(v[j]) for k, v in c.items()}
            t0 = time.perf_counter()
            ng = run_spice(p, d)
            spice_times.append(time.perf_counter() - t0)
            ours = {"ipk": op.peak_current[j], "qp": op.charge[j], "vend": op.end_voltage[j]}
            for k in worst:
                if k in ng:
                    worst[k] = max(worst[k], abs(ours[k] / ng[k] - 1.0))
                else:
                    worst[k] = float("nan")
    t_spice = float(np.median(spice_times))
    print(f"ngspice: {args.spice} circuits, median {t_spice * 1e3:.1f} ms per circuit "
          f"(process start included)")
    print(f"speed ratio per circuit: {t_spice / per_candidate:.3g}x "
          f"(vectorised {per_candidate * 1e9:.0f} ns per candidate)")
    print("largest relative disagreement: "
          + ", ".join(f"{k} {v:.2e}" for k, v in worst.items()))


if __name__ == "__main__":
    main()
