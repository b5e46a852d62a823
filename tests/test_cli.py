"""CLI contract (README.md, `strobeplan schema`): JSON keys, exit codes, one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from tests.conftest import EXAMPLES, example, run_cli

TIMING_KEYS = {
    "tick_s", "drive_frequency_hz", "drive_frequency_error_ppm", "drive_period_ticks",
    "carrier_frequency_hz", "flash_period_ticks", "chain_delay_s", "flash_edge_ticks",
    "phase_achieved_deg", "phase_error_deg", "phase_resolution_deg", "flashes_per_frame",
    "duty_in_burst", "duty_average", "phase_per_kelvin_deg",
}
FINDING_KEYS = {"code", "severity", "subject", "message", "value", "limit", "unit", "hint"}


def test_check_json_contract():
    r = run_cli("check", example("levitator-40k"), "--json")
    data = json.loads(r.output)  # stdout holds JSON and nothing else
    assert data["format"] == "strobeplan.plan" and data["version"] == 1
    assert data["verdict"] in ("pass", "warn", "fail")
    assert TIMING_KEYS <= set(data["timing"])
    assert {"speed_of_sound_m_s"} <= set(data["air"])
    for f in data["findings"]:
        assert FINDING_KEYS <= set(f)
        assert f["severity"] in ("hazard", "fault", "warning", "note")
    assert r.exit_code == (1 if data["verdict"] == "fail" else 0)


@pytest.mark.parametrize("name", EXAMPLES)
def test_verdict_and_exit_code_agree(name):
    r = run_cli("check", example(name), "--json")
    verdict = json.loads(r.output)["verdict"]
    assert r.exit_code == (1 if verdict == "fail" else 0)


def test_text_output_lists_sections():
    r = run_cli("check", example("levitator-40k"))
    assert "[timing]" in r.output and "verdict:" in r.output


BASE = """
[wave]
frequency = "40 kHz"
[controller]
clock = "100 MHz"
[strobe]
pulse_width = "1 us"
"""


@pytest.mark.parametrize(
    "text, path, value",
    [
        (BASE.replace('"1 us"', '"1 kHz"'), "strobe.pulse_width", "1 kHz"),       # wrong unit
        (BASE + "evry = 2\n", "strobe.evry", "did you mean 'every'"),             # unknown key
        (BASE.replace('"1 us"', '"nan us"'), "strobe.pulse_width", "nan us"),     # NaN
        (BASE.replace('"100 MHz"', '"-100 MHz"'), "controller.clock", "-100 MHz"),  # negative
        (BASE + "every = 0\n", "strobe.every", "0"),                              # every = 0
        (BASE.replace('"1 us"', '"30 us"'), "strobe.pulse_width", "flash period"),  # too long
        (BASE.replace('clock = "100 MHz"', ""), "controller.clock", "missing"),   # missing
        (BASE.replace('"1 us"', "1.0"), "strobe.pulse_width", "missing unit"),    # no unit
        ("[wave\nfrequency = 1", "", "line 1, column"),                           # TOML syntax
        ("", "", "empty"),                                                        # empty file
        ("\xff\xfe garbage", "", "UTF-8"),                                        # not UTF-8
    ],
)
def test_bad_input_exits_2_with_one_line(tmp_path, text, path, value):
    rig = tmp_path / "bad.toml"
    rig.write_bytes(text.encode("latin-1"))
    r = run_cli("check", rig)
    assert r.exit_code == 2
    err = r.stderr if hasattr(r, "stderr") else r.output
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert path in lines[0] and value in lines[0]


def test_stdin_rig():
    text = example("levitator-40k").read_text()
    r = run_cli("check", "-", "--json", input=text)
    assert json.loads(r.output)["rig"] == "levitator-40k"


def test_schedule_csv_and_atomic_write(tmp_path):
    out = tmp_path / "sweep.csv"
    r = run_cli("schedule", example("levitator-40k"), "-o", out)
    assert r.exit_code == 0
    lines = out.read_text().splitlines()
    assert lines[0].split(",")[:8] == ["frame", "target_phase_deg", "achieved_phase_deg",
                                       "phase_error_deg", "edge_ticks", "edge_time_s",
                                       "camera_trigger_ticks", "first_flash_ticks"]
    assert len(lines) == 1 + 36  # [sweep] steps = 36
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]
    first = out.read_bytes()
    run_cli("schedule", example("levitator-40k"), "-o", out)
    assert out.read_bytes() == first  # byte-identical on rerun


def test_schedule_json_and_ticks():
    r = run_cli("schedule", example("rangefinder-58k"), "--format", "json", "--steps", "4")
    data = json.loads(r.output)
    assert data["format"] == "strobeplan.schedule" and len(data["rows"]) == 4
    r2 = run_cli("schedule", example("rangefinder-58k"), "--ticks", "--steps", "4")
    body = [ln for ln in r2.output.splitlines() if not ln.startswith("#")]
    assert len(body) == 4 and all(tok.isdigit() for ln in body for tok in ln.split())


def test_output_errors_exit_2(tmp_path):
    r = run_cli("schedule", example("levitator-40k"), "-o", tmp_path / "missing" / "x.csv")
    assert r.exit_code == 2 and "does not exist" in r.output
    r = run_cli("schedule", example("levitator-40k"), "-o", tmp_path)
    assert r.exit_code == 2 and "directory" in r.output


def test_schedule_refuses_to_overwrite_the_rig(tmp_path):
    rig = tmp_path / "rig.toml"
    rig.write_text(example("levitator-40k").read_text())
    before = rig.read_bytes()
    r = run_cli("schedule", rig, "-o", rig)
    assert r.exit_code == 2 and rig.read_bytes() == before


@pytest.mark.parametrize("name", ["levitator-40k", "rangefinder-58k"])
def test_new_round_trips_and_passes(tmp_path, name):
    out = tmp_path / "starter.toml"
    assert run_cli("new", "--example", name, "-o", out).exit_code == 0
    assert out.read_text() == example(name).read_text()
    assert run_cli("check", out).exit_code == 0
    # never overwrites what the user wrote
    out.write_text("# mine\n")
    r = run_cli("new", "-o", out)
    assert r.exit_code == 2 and out.read_text() == "# mine\n"


def test_examples_bundled_identically():
    from importlib.resources import files

    for name in EXAMPLES:
        bundled = (files("strobeplan.examples") / f"{name}.toml").read_text(encoding="utf-8")
        assert bundled == example(name).read_text(encoding="utf-8")


def test_console_script_exit_codes_and_no_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[wave]\nfrequency = 'x'\n")
    p = subprocess.run([sys.executable, "-m", "strobeplan.cli", "check", str(bad)],
                       capture_output=True, text=True)
    assert p.returncode == 2 and "Traceback" not in p.stderr
    p = subprocess.run([sys.executable, "-m", "strobeplan.cli", "nosuchcommand"],
                       capture_output=True, text=True)
    assert p.returncode == 2


def test_check_imports_no_heavy_modules():
    # DEVELOPERS.md: the check path must not load matplotlib, scipy or pint.
    code = (
        "import sys\n"
        "from strobeplan.cli import main\n"
        "try:\n"
        f"    main(['check', {str(example('rangefinder-58k'))!r}, '--json'])\n"
        "except SystemExit:\n"
        "    pass\n"
        "bad = sorted(m for m in sys.modules if m.split('.')[0] in "
        "('matplotlib', 'scipy', 'pint'))\n"
        "sys.stderr.write(repr(bad))\n"
    )
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert p.stderr.strip().endswith("[]"), p.stderr


def test_cautions_follow_the_findings():
    # unsafe-bench trips LED, stuck-on and ultrasound findings: each concern gets its line.
    out = run_cli("check", example("unsafe-bench")).stdout
    for concern in ("eyes", "stored charge", "ultrasound", "hot parts"):
        assert f"caution ({concern})" in out
    assert "datasheets, local codes and licensed practice" in out
    # the rangefinder (no hazard, 102 dB at 1 m) prints none
    assert "caution" not in run_cli("check", example("rangefinder-58k")).stdout.lower()


def test_text_labels_and_units():
    # Units come from each field's metadata: a charge is coulomb and a junction temperature
    # (kelvin inside) reads in degC under its JSON name; duties read as percentages; no "-0".
    from dataclasses import fields

    from strobeplan.report.text import label_and_value
    from strobeplan.stages.power import LedSection
    from strobeplan.stages.timing import DriveSection, TimingSection

    def spec(cls, name):
        return next(f for f in fields(cls) if f.name == name)

    assert label_and_value(spec(LedSection, "pulse_charge_c"), 8.2e-6) == \
        ("pulse charge", "8.2 uC")
    assert label_and_value(spec(LedSection, "junction_peak_k"), 304.15) == \
        ("junction peak", "31 \u00b0C")
    assert label_and_value(spec(TimingSection, "duty_in_burst"), 0.04) == \
        ("duty in burst", "4 %")
    assert label_and_value(spec(TimingSection, "phase_per_kelvin_deg"), 4.5) == \
        ("phase per kelvin", "4.5 deg/K")
    assert label_and_value(spec(DriveSection, "detuning_db"), -0.0) == ("detuning", "0 dB")
    assert label_and_value(spec(TimingSection, "clock_drift_deg_per_s"), None) == \
        ("clock drift", "n/a")
