"""What a new user hits: every rig problem in the one error line, unwritable output targets
exit 2, and the units of the `led.fit_extrapolated` finding.

Oracles: the CLI contract of README.md (bad input: one line on stderr, exit 2, no traceback)
and the finding's own definition in docs/findings.md (peak current against 2x the highest
led.forward_voltage point, a current in A).
"""

from __future__ import annotations

import json
import re

import pytest
import tomli_w
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.errors import OutputError
from strobeplan.io import write_atomic
from tests.conftest import example, patched, run_cli

MINIMAL = {"wave": {"frequency": "40 kHz"}, "controller": {"clock": "100 MHz"},
           "strobe": {"pulse_width": "1 us"}}

# Independent mistakes, one key each: (section, key) -> (bad value, text the line must show).
MISTAKES = {
    ("controller", "clock"): ("-5 MHz", "'-5 MHz'"),
    ("strobe", "every"): (0, "strobe.every = 0"),
    ("strobe", "phase"): ("5 kHz", "'5 kHz'"),
    ("wave", "frequency"): ("nan Hz", "'nan Hz'"),
    ("strobe", "evry"): (2, "did you mean 'every'"),
    ("air", "temperature"): ("3 kg", "'3 kg'"),
    ("air", "co2"): ("x", "'x'"),
    ("air", "humidity"): ("50 %", "did you mean 'relative_humidity'"),
}


def _one_error_line(result) -> str:
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("error: ")
    return lines[0]


@settings(max_examples=40, deadline=None)
@given(chosen=st.sets(st.sampled_from(sorted(MISTAKES)), min_size=1))
def test_every_rig_problem_is_on_the_one_line(chosen):
    raw = {section: dict(body) for section, body in MINIMAL.items()}
    for section, key in chosen:
        raw.setdefault(section, {})[key] = MISTAKES[section, key][0]
    line = _one_error_line(run_cli("check", "-", input=tomli_w.dumps(raw)))
    for section, key in chosen:
        assert f"{section}.{key} = " in line, (section, key, line)
        assert MISTAKES[section, key][1] in line, (section, key, line)
    # each problem once, none hidden behind a count
    assert line.count("; also ") == len(chosen) - 1, line
    assert "more problem" not in line


def test_a_typo_does_not_also_report_the_key_it_meant():
    # `frequncy` is reported with "did you mean 'frequency'"; the then missing `frequency`
    # is the same mistake and is not listed a second time.
    raw = {"wave": {"frequncy": "40 kHz"}, "controller": {"clock": "-5 MHz"},
           "strobe": {"pulse_width": "1 us"}}
    line = _one_error_line(run_cli("check", "-", input=tomli_w.dumps(raw)))
    assert line.startswith("error: wave.frequncy = '40 kHz': unknown key in wave; "
                           "did you mean 'frequency'?")
    assert "wave.frequency = (missing)" not in line
    assert "; also controller.clock = '-5 MHz': expected a value greater than 0 Hz" in line


def test_a_missing_section_and_a_bad_value_are_both_listed():
    raw = {"wave": {"frequency": "40 kHz"}, "strobe": {"pulse_width": "1 kHz", "every": 0}}
    line = _one_error_line(run_cli("check", "-", input=tomli_w.dumps(raw)))
    assert "controller = (missing): required key is missing" in line
    assert "; also strobe.pulse_width = '1 kHz': wrong unit" in line
    assert "; also strobe.every = 0: expected a value at least 1" in line


# --- output targets the kernel refuses ------------------------------------------------------
# /proc and /sys look like writable folders (root may write there) but refuse new files.
# On a system without them the folder check refuses first: exit 2 either way.
@pytest.mark.parametrize("target", ["/proc/x", "/sys/x", "/proc/strobeplan.csv"])
@pytest.mark.parametrize("command", [("schedule", str(example("levitator-40k"))), ("new",)])
def test_pseudo_filesystem_target_exits_2(command, target):
    line = _one_error_line(run_cli(*command, "-o", target))
    assert target in line


def test_report_to_a_pseudo_filesystem_exits_2():
    # the report is built in full before it is written: the minimal rig keeps that short
    line = _one_error_line(run_cli("report", "-", "-o", "/sys/r.html",
                                   input=tomli_w.dumps(MINIMAL)))
    assert "/sys/r.html" in line


def test_write_atomic_turns_a_refused_temporary_file_into_output_error():
    refused = r"^/sys/x: (cannot be written|the folder|leads into /sys)"
    with pytest.raises(OutputError, match=refused):
        write_atomic("/sys/x", "data")


# --- led.fit_extrapolated: a current against a current ---------------------------------------
def test_fit_extrapolated_limit_is_twice_the_highest_datasheet_current(tmp_path):
    # Highest forward-voltage point 1.5 A (not 1 A, so a ratio of 2 cannot pass as 2 A).
    # The limit is 2 x 1.5 A = 3 A, a current, like the value it is compared with.
    raw = patched("levitator-40k", {"led.forward_voltage": [
        {"current": "350 mA", "voltage": "2.10 V"},
        {"current": "700 mA", "voltage": "2.30 V"},
        {"current": "1.5 A", "voltage": "2.60 V"}]})
    rig = tmp_path / "rig.toml"
    rig.write_text(tomli_w.dumps(raw))
    data = json.loads(run_cli("check", rig, "--json").stdout)
    (hit,) = [f for f in data["findings"] if f["code"] == "led.fit_extrapolated"]
    assert hit["unit"] == "A"
    assert hit["limit"] == pytest.approx(2 * 1.5)
    assert hit["value"] == pytest.approx(data["led"]["peak_current_a"])
    assert hit["value"] > hit["limit"]
    # the message's ratio is the value over the highest datasheet point
    ratio = float(re.search(r"is ([0-9.]+)x the highest", hit["message"]).group(1))
    assert ratio == pytest.approx(hit["value"] / 1.5, abs=0.05)
