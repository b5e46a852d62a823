"""Byte-identical machine output: `check --json`, `tune --json` and `schedule` (JSON, CSV,
ticks) of the bundled examples and of rigs the other tests use, against files recorded in
tests/golden/.

The outputs are deterministic (the same rig and the same code give the same bytes), so a
speed-up that changes any figure, key or row fails here. When a change of behaviour is
intended, record the new outputs and review the diff:

    python -m tests.test_golden --update
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

from tests.conftest import EXAMPLES, example, patched, run_cli

GOLDEN = Path(__file__).resolve().parent / "golden"

# Rigs other tests build (tests/test_export.py, test_free_running.py, test_exposure_stage.py).
PATCHED = {
    "slow-motion": ("rangefinder-58k", {"sweep": {"slow_motion": "2 Hz"}, "strobe.every": 1}),
    "continuous": ("rangefinder-58k", {"strobe.continuous": True}),
    "free-running": ("rangefinder-58k", {
        "camera.trigger": "none", "camera.exposure": "8.333 ms", "camera.readout": "32 ms",
        "camera.trigger_input": None, "trigger_link": None}),
    "counter16": ("rangefinder-58k", {"controller.timer": {"profile": "counter16"}}),
    "ideal-edges": ("unsafe-bench", {"gate_driver.rise_time": "1 ps",
                                     "gate_driver.fall_time": "1 ps"}),
    "jitter": ("levitator-40k", {"controller.jitter_rms": "2 us"}),
}

# (output name, command arguments after the rig). The bundled examples run tune with its
# defaults; the patched rigs with a smaller grid (the same code paths, a tenth of the time).
EXAMPLE_RUNS = [
    ("check.json", ("check", "{rig}", "--json")),
    ("schedule.json", ("schedule", "{rig}", "--format", "json")),
    ("schedule.csv", ("schedule", "{rig}")),
    ("schedule-steps.json", ("schedule", "{rig}", "--format", "json", "--steps", "120")),
    ("schedule.ticks", ("schedule", "{rig}", "--ticks", "--steps", "1000")),
    ("tune.json", ("tune", "{rig}", "--json")),
]
PATCHED_RUNS = [
    ("check.json", ("check", "{rig}", "--json")),
    ("schedule.json", ("schedule", "{rig}", "--format", "json")),
    ("schedule.csv", ("schedule", "{rig}", "--steps", "500")),
    ("tune.json", ("tune", "{rig}", "--json", "--widths", "40", "--max-every", "4")),
]


def _rig_path(case: str, tmp: Path) -> Path:
    if case in PATCHED:
        from tests.test_export import _toml

        base, patch = PATCHED[case]
        path = tmp / f"{case}.toml"
        path.write_text(_toml(patched(base, patch)))
        return path
    return example(case)


def _cases():
    for case in EXAMPLES:
        for name, args in EXAMPLE_RUNS:
            yield case, name, args
    for case in PATCHED:
        for name, args in PATCHED_RUNS:
            yield case, name, args


def _output(case: str, args: tuple, tmp: Path) -> str:
    rig = _rig_path(case, tmp)
    result = run_cli(*(str(rig) if a == "{rig}" else a for a in args))
    assert result.exit_code in (0, 1), result.output
    # tune's wall time is the one figure that differs from run to run
    out = re.sub(r'^(  "seconds": )[-+.e0-9]+,$', r"\1(wall time),", result.stdout, flags=re.M)
    return f"exit {result.exit_code}\n" + out


CASES = list(_cases())


@pytest.mark.slow
@pytest.mark.parametrize("case,name,args", CASES, ids=[f"{c}.{n}" for c, n, _ in CASES])
def test_output_unchanged(case, name, args, tmp_path):
    recorded = (GOLDEN / f"{case}.{name}").read_text(encoding="utf-8")
    assert _output(case, args, tmp_path) == recorded


def _update() -> None:
    import tempfile

    GOLDEN.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        for case, name, args in CASES:
            (GOLDEN / f"{case}.{name}").write_text(_output(case, args, Path(tmp)),
                                                   encoding="utf-8")
            print(f"recorded {case}.{name}")


if __name__ == "__main__":
    if sys.argv[1:] != ["--update"]:
        sys.exit("usage: python -m tests.test_golden --update")
    _update()
