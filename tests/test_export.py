"""`strobeplan export`: the exported constants, compiled by the system C compiler into a
host program that simulates the counters cycle by cycle, reproduce `strobeplan schedule`
exactly (every flash edge, gate end and camera trigger of the first frames).

Oracles: the C compiler (the header must build with -std=c99 -Wall -Wextra -Werror) and the
schedule's own rows, produced by a different code path (strobeplan/timing.py) from the one
that fills the header (strobeplan/export.py); the simulation reads nothing but the header.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from strobeplan.rig import rig_from_dict
from tests.conftest import EXAMPLES, example, run_cli
from tests.test_fuzz import _rig_file, mutated_rig, wild_magnitudes

SIM = Path(__file__).parent / "sim" / "timers_sim.c"
CFLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-O2"]


def _cc() -> str:
    cc = shutil.which("cc")
    assert cc, "a C compiler (cc) is needed: apt-get install gcc (.ci/run installs it)"
    return cc


def simulate(rig_path: Path, workdir: Path, frames: int) -> dict:
    """Export the rig's header, compile the simulator against it, run it for ``frames``."""
    header = workdir / "strobeplan_timers.h"
    r = run_cli("export", rig_path, "--format", "c", "-o", header)
    assert r.exit_code == 0, r.output
    shutil.copy(SIM, workdir / "timers_sim.c")
    exe = workdir / "timers_sim"
    subprocess.run([_cc(), *CFLAGS, "-o", str(exe), str(workdir / "timers_sim.c")],
                   check=True, capture_output=True, text=True, cwd=workdir)
    out = subprocess.run([str(exe), str(frames)], check=True, capture_output=True,
                         text=True, timeout=60).stdout
    events: dict = {"trigger": {}, "edge": {}, "gate_end": {}, "drive": None}
    for line in out.splitlines():
        kind, a, b = line.split()
        if kind == "drive":
            events["drive"] = (int(a), int(b))
        else:
            events[kind].setdefault(int(a), []).append(int(b))
    return events


def expected(rig_path: Path, frames: int) -> tuple[dict, dict]:
    """Events the schedule's rows imply for the first ``frames`` frames (the rows repeat:
    frozen mode has one row)."""
    rig = rig_from_dict(tomllib.loads(Path(rig_path).read_text()))
    # slow motion: the schedule has one row per frame only when asked for that many
    slow = ("--steps", frames) if rig.sweep and rig.sweep.slow_motion else ()
    sched = json.loads(run_cli("schedule", rig_path, "--format", "json", *slow).stdout)
    clock = rig.controller.clock
    width = max(1, round(rig.strobe.pulse_width * clock))  # gate-on in whole ticks
    rows, pf = sched["rows"], sched["flash_period_ticks"]
    ff = sched["frame_period_ticks"] or pf
    want: dict = {"trigger": {}, "edge": {}, "gate_end": {}}
    for k in range(frames):
        row = rows[k % len(rows)]
        shift = (k // len(rows)) * len(rows) * ff
        want["trigger"][k] = [row["camera_trigger_ticks"] + shift]
        first = row["first_flash_ticks"]
        edges = [] if first is None else [first + shift + j * pf
                                          for j in range(row["flashes"] or 0)]
        want["edge"][k] = edges
        want["gate_end"][k] = [e + width for e in edges]
    return want, sched


def check_against_schedule(rig_path: Path, workdir: Path, frames: int) -> None:
    want, sched = expected(rig_path, frames)
    got = simulate(rig_path, workdir, frames)
    rig = rig_from_dict(tomllib.loads(Path(rig_path).read_text()))
    triggered = rig.camera is not None and rig.camera.trigger == "input"
    continuous = rig.strobe.continuous or not triggered
    for k in range(frames):
        if triggered:
            assert got["trigger"].get(k, []) == want["trigger"][k], f"frame {k} trigger"
        else:
            assert not got["trigger"]
        if continuous:  # every slot flashes: the schedule's flashes are among them
            assert set(want["edge"][k]) <= set(got["edge"].get(k, [])), f"frame {k} edges"
            edges = got["edge"].get(k, [])
            gaps = {b - a for a, b in zip(edges, edges[1:], strict=False)}
            assert gaps <= {sched["flash_period_ticks"]}
        else:
            assert got["edge"].get(k, []) == want["edge"][k], f"frame {k} flash edges"
            assert got["gate_end"].get(k, []) == want["gate_end"][k], f"frame {k} gate ends"
    # the drive counter: cycles start every drive period, from tick 0
    cycles, last = got["drive"]
    assert last == (cycles - 1) * sched["drive_period_ticks"]


@pytest.mark.parametrize("name", EXAMPLES)
def test_bundled_examples_reproduce_schedule(name, tmp_path):
    check_against_schedule(example(name), tmp_path, frames=3)


def test_slow_motion_and_continuous_reproduce_schedule(tmp_path):
    from tests.conftest import patched

    for i, patch in enumerate([
            {"sweep": {"slow_motion": "2 Hz"}, "strobe.every": 1},
            {"strobe.continuous": True},
            {"camera.trigger": "none"},
            {"controller.timer": {"profile": "counter16"}}]):  # chained frame counter
        rig = tmp_path / f"rig{i}.toml"
        rig.write_text(_toml(patched("rangefinder-58k", patch)))
        d = tmp_path / str(i)
        d.mkdir()
        check_against_schedule(rig, d, frames=3)


def _toml(d: dict, prefix: str = "") -> str:
    """A tiny TOML writer for the nested dicts of a rig (tables, inline lists of tables)."""
    def val(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, (int, float)):
            return repr(v)
        if isinstance(v, str):
            return json.dumps(v)
        if isinstance(v, list):
            return "[" + ", ".join(val(x) for x in v) + "]"
        if isinstance(v, dict):
            return "{" + ", ".join(f"{k} = {val(x)}" for k, x in v.items()) + "}"
        raise TypeError(v)

    plain = {k: v for k, v in d.items() if not isinstance(v, dict)}
    tables = {k: v for k, v in d.items() if isinstance(v, dict)}
    out = [f"{k} = {val(v)}" for k, v in plain.items()]
    for k, v in tables.items():
        name = f"{prefix}{k}"
        out += ["", f"[{name}]", _toml(v, name + ".")]
    return "\n".join(out)


def test_header_constants_equal_json(tmp_path):
    """The C header and the JSON carry the same numbers."""
    rig = example("levitator-40k")
    c_text = run_cli("export", rig, "--format", "c").stdout
    data = json.loads(run_cli("export", rig, "--format", "json").stdout)
    arrays = dict(re.findall(r"static const sp_count_t (\w+)\[[^\]]*\] = \{([^}]*)\};",
                             c_text, flags=re.S))

    def nums(body):
        return [int(x) for x in re.findall(r"^\s*(\d+)U?L*,", body, flags=re.M)]

    for key, name in (("flash_compare", "SP_FLASH_COMPARE"),
                      ("trigger_compare", "SP_TRIGGER_COMPARE"),
                      ("enable_compare", "SP_ENABLE_COMPARE"),
                      ("repetition", "SP_REPETITION")):
        assert nums(arrays[name]) == [f[key]["counts"] for f in data["frames"]]
    assert nums(arrays["SP_DRIVE_COMPARE"]) == [
        v["counts"] for v in data["counters"]["drive"]["compare"]]
    defines = dict(re.findall(r"#define (SP_\w+) (\d+)", c_text))
    for cname, c in data["counters"].items():
        assert int(defines[f"SP_{cname.upper()}_PERIOD"]) == c["period"]["counts"]
        assert int(defines[f"SP_{cname.upper()}_PRESCALER"]) == c["prescaler"]
    # the levitator's 100 MHz clock: 800 kHz carrier = 125 ticks, 20 per 40 kHz cycle
    # (the rig's figures), 1 us gate = 100 ticks
    assert data["counters"]["drive"]["period"]["counts"] == 125
    assert data["counters"]["drive"]["repetition"]["counts"] == 20
    assert data["counters"]["flash"]["gate_width"]["counts"] == 100


def test_header_uses_only_the_model_words():
    text = run_cli("export", example("levitator-40k"), "--format", "c").stdout
    names = set(re.findall(r"\b(SP_\w+)", text))
    words = {"PRESCALER", "PERIOD", "COMPARE", "REPETITION", "CHAINED", "GATE", "WIDTH",
             "CLOCK", "HZ", "COUNTER", "BITS", "FRAMES", "FLASH", "CONTINUOUS", "FRAME",
             "TRIGGER", "DRIVE", "ENABLE", "SP"}
    for n in names:
        assert set(n.split("_")) <= words, n
    # no vendor register vocabulary (common names of timer registers)
    for reg in ("ARR", "CCR", "PSC", "OCR", "TCNT", "ICR", "RCR"):
        assert not re.search(rf"\b\w*{reg}\w*\b", text.replace("CARRIER", "")), reg


def test_export_never_writes_the_rig_file(tmp_path):
    rig = tmp_path / "rig.toml"
    rig.write_text(example("levitator-40k").read_text())
    before = rig.read_bytes()
    r = run_cli("export", rig, "--format", "c", "-o", rig)
    assert r.exit_code == 2 and "rig file" in r.output
    assert rig.read_bytes() == before
    r = run_cli("export", rig, "--format", "json", "-o", tmp_path / "no" / "x.json")
    assert r.exit_code == 2 and "Traceback" not in r.output


# --- generated rigs -----------------------------------------------------------------------

@st.composite
def small_rigs(draw):
    """Rigs whose frames are at most ~100k ticks, so the simulation stays fast."""
    clock = draw(st.sampled_from([1e6, 2e6, 4e6, 8e6, 10e6, 12e6]))
    f = draw(st.floats(20e3, min(200e3, clock / 8)))
    every = draw(st.integers(1, 3))
    flash_rate = f / every
    frame_rate = draw(st.floats(max(clock / 100e3, 10.0), flash_rate / 4))
    # the exposure window (latency, readout, exposure) ends within the frame, with a flash
    # period to spare: the plan's frames then never overlap
    room = 1.0 / frame_rate - every / f
    exposure = draw(st.floats(0.05, 0.45)) * room
    latency = draw(st.floats(0.0, 0.2)) * room
    width = draw(st.floats(0.02, 0.3)) * every / f
    rig = {
        "wave": {"frequency": f"{f:.6g} Hz"},
        "controller": {"clock": f"{clock:.6g} Hz", "timer": {"profile": draw(st.sampled_from(
            ["counter16", "counter16-prescale16", "counter24", "counter32"]))}},
        "strobe": {"pulse_width": f"{width:.6g} s", "every": every,
                   "phase": f"{draw(st.floats(0, 359)):.4g} deg",
                   "continuous": draw(st.booleans())},
        "camera": {"exposure": f"{exposure:.6g} s", "frame_rate": f"{frame_rate:.6g} Hz",
                   "trigger_latency": f"{latency:.4g} s"},
    }
    if draw(st.booleans()):
        rig["camera"]["shutter"] = "rolling"
        rig["camera"]["readout"] = f"{draw(st.floats(0, 0.3)) * room:.6g} s"
    mode = draw(st.sampled_from(["frozen", "sweep", "slow"]))
    if mode == "sweep":
        rig["sweep"] = {"steps": draw(st.integers(1, 8)), "span": "360 deg"}
    elif mode == "slow":
        rig["sweep"] = {"slow_motion": f"{draw(st.floats(0.5, 20.0)):.4g} Hz"}
    if draw(st.booleans()) and clock >= 2 * 8 * f:
        rig["emitter"] = {"resonance": f"{f:.6g} Hz", "quality_factor": 20,
                          "distance_to_view": "50 mm",
                          "synthesis": {"samples_per_cycle": draw(st.integers(4, 8))}}
    return rig


@settings(max_examples=15, deadline=None, phases=(Phase.explicit, Phase.reuse, Phase.generate),
          suppress_health_check=[
    HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(raw=small_rigs())
def test_generated_rigs_reproduce_schedule(raw, tmp_path_factory):
    from strobeplan.errors import RigError

    try:
        rig_from_dict(raw)
    except RigError:
        return  # an invalid combination: the loader says why; nothing to export
    d = tmp_path_factory.mktemp("gen")
    path = d / "rig.toml"
    path.write_text(_toml(raw))
    data = json.loads(run_cli("export", path, "--format", "json").stdout)
    assert data["exact"]  # these profiles fit directly or by chaining: no rounding
    check_against_schedule(path, d, frames=2)


# --- robustness ---------------------------------------------------------------------------

@settings(max_examples=25, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(data=st.data(), fmt=st.sampled_from(["c", "json"]))
def test_mutated_and_wild_rigs_export_or_say_why(data, fmt, tmp_path_factory):
    raw = data.draw(st.one_of(mutated_rig(), wild_magnitudes()))
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    d, rig, _text = made
    r = run_cli("export", rig, "--format", fmt, "-o", d / f"out.{fmt}")
    assert r.exit_code in (0, 2), r.output
    assert "Traceback" not in r.output
    if r.exit_code == 0:
        text = (d / f"out.{fmt}").read_text()
        if fmt == "json":
            out = json.loads(text)
            assert out["format"] == "strobeplan.export" and out["frames"]
        else:
            assert text.count("{") == text.count("}") and "#endif" in text


def test_prescaled_frame_counter_moves_the_trigger_by_less_than_one_count(tmp_path):
    """A 16-bit counter without chaining holds the 533,232-tick frame only with a prescaler
    of 9 (533,232 / 65,536 = 8.1; 9 x 59,248 = 533,232): the frame stays exact, the trigger
    compare rounds down to a multiple of 9 ticks (never later), and the flashes, on the
    unprescaled flash counter, stay exact."""
    from tests.conftest import patched

    rig = tmp_path / "rig.toml"
    rig.write_text(_toml(patched("rangefinder-58k", {"controller.timer": {
        "profile": "counter16-prescale16", "chainable": False}})))
    data = json.loads(run_cli("export", rig, "--format", "json").stdout)
    assert data["counters"]["frame"]["prescaler"] == 9 and not data["exact"]
    want, _sched = expected(rig, 2)
    got = simulate(rig, tmp_path, 2)
    for k in range(2):
        (t_want,), (t_got,) = want["trigger"][k], got["trigger"][k]
        assert 0 <= t_want - t_got < 9 and t_got % 9 == 0
        assert got["edge"][k] == want["edge"][k]
        assert got["gate_end"][k] == want["gate_end"][k]
