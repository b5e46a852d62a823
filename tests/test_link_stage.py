"""Trigger-link stage, its findings, and the `divider` command (plan JSON, README.md)."""

from __future__ import annotations

import json
import tomllib

import pytest

from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from tests.conftest import example, run_cli

# plan JSON contract keys of the trigger_link section
LINK_KEYS = {"top_ohm", "bottom_ohm", "v_high_min_v", "v_high_max_v", "v_low_max_v",
             "edge_time_s", "current_a"}


def _rig(name, **edits):
    raw = tomllib.loads(example(name).read_text(encoding="utf-8"))
    for path, value in edits.items():
        node = raw
        *parents, key = path.split(".")
        for p in parents:
            node = node.setdefault(p, {})
        if value is None:
            node.pop(key, None)
        else:
            node[key] = value
    return rig_from_dict(raw)


def _codes(plan):
    return {f.code for f in plan.findings}


def test_unsafe_bench_trips_over_input_maximum():
    # README.md, bundled examples: unsafe-bench's 1 k over 2 k from 3.3 V into 1.8 V is
    # 2.2 V nominal, above VDD + 0.3 V = 1.95 V at 1.65 V (docs/references.md, "Logic levels
    # (JEDEC)" [src2])
    plan = solve(_rig("unsafe-bench"))
    assert "trigger_link.over_input_max" in _codes(plan)
    f = next(f for f in plan.findings if f.code == "trigger_link.over_input_max")
    assert f.severity == "hazard" and f.value > f.limit == pytest.approx(1.95)
    assert plan.verdict == "fail"


@pytest.mark.parametrize("name", ["levitator-40k", "rangefinder-58k"])
def test_good_examples_do_not_fail_on_the_link(name):
    plan = solve(_rig(name))
    bad = [f for f in plan.findings if f.code.startswith(("trigger_link.", "gate_link."))
           and f.severity in ("hazard", "fault")]
    assert bad == []
    t = plan.trigger_link
    assert t.margin_high_v >= 0 and t.margin_max_v >= 0 and t.current_a <= t.rated_current_a


def test_levitator_proposes_a_pair_and_json_has_contract_keys():
    r = run_cli("check", example("levitator-40k"), "--json")
    data = json.loads(r.output)
    link = data["trigger_link"]
    assert LINK_KEYS <= set(link)
    assert link["mode"] == "proposed" and link["top_ohm"] > 0 and link["bottom_ohm"] > 0
    # the proposal is an E24 value pair (IEC 60063)
    from strobeplan.physics.eseries import series_values
    e24 = set(series_values("E24"))
    assert link["top_ohm"] in e24 and link["bottom_ohm"] in e24


def test_checked_pair_below_vih_is_a_fault_with_an_alternative():
    # 2 k over 1 k from lvcmos33 into lvcmos18: 1.1 V nominal < VIH 0.65 * 1.95 V (JESD8-7A)
    plan = solve(_rig("unsafe-bench", **{"trigger_link.top": "2 kohm",
                                         "trigger_link.bottom": "1 kohm"}))
    f = next(f for f in plan.findings if f.code == "trigger_link.below_vih")
    assert f.severity == "fault" and f.value < f.limit
    assert "kΩ" in f.hint  # the hint names the best alternative pair
    assert plan.trigger_link.alternatives


def test_overloaded_source_is_a_hazard():
    # 100 ohm over 120 ohm draws ~16 mA from a 3.3 V output, above the 2 mA JESD8C test
    # current (the largest with a guaranteed level)
    plan = solve(_rig("unsafe-bench", **{"trigger_link.top": "100 ohm",
                                         "trigger_link.bottom": "120 ohm"}))
    f = next(f for f in plan.findings if f.code == "trigger_link.source_overloaded")
    assert f.severity == "hazard" and f.value > f.limit == pytest.approx(2e-3)


def test_edge_too_slow_warning_uses_one_percent_of_the_longer_timing():
    # rangefinder: 2 us pulse, 5 us trigger latency -> limit 50 ns (1 % of the longer, a
    # project default); its checked 13 k / 27 k into 15 pF is ~290 ns
    # (ln 9 * 8.8 kohm * 15 pF, worst case)
    plan = solve(_rig("rangefinder-58k"))
    f = next(f for f in plan.findings if f.code == "trigger_link.edge_too_slow")
    assert f.limit == pytest.approx(0.01 * 5e-6)
    assert f.value == pytest.approx(plan.trigger_link.edge_time_max_s)


def test_upward_link_has_no_feasible_pair():
    plan = solve(_rig("levitator-40k", **{"controller.output": "lvcmos18",
                                          "camera.trigger_input": {"family": "lvcmos33"},
                                          "gate_driver.input": "lvcmos18"}))
    assert "trigger_link.no_feasible_pair" in _codes(plan)
    assert plan.trigger_link.top_ohm is None and "translator" in plan.trigger_link.recommendation


def test_gate_driver_input_vih():
    # lvcmos12 controller (VOH <= 1.2 V) into a 3.3 V-logic gate-driver input (VIH 2.0 V)
    plan = solve(_rig("levitator-40k", **{"controller.output": "lvcmos12",
                                          "camera.trigger_input": {"family": "lvcmos12"}}))
    assert "gate_link.below_vih" in _codes(plan)
    assert plan.gate_link.margin_high_v < 0


def test_custom_family_from_the_rig_file():
    fam = {"vdd": "2.8 V", "vdd_min": "2.7 V", "vdd_max": "2.9 V", "vih": "2.0 V",
           "vil": "0.6 V", "voh": "2.5 V", "vol": "0.3 V", "output_current": "1 mA"}
    plan = solve(_rig("levitator-40k", **{"trigger_link.families": {"cam28": fam},
                                          "camera.trigger_input": {"family": "cam28"}}))
    t = plan.trigger_link
    assert t.destination_family == "cam28" and t.vih_v == pytest.approx(2.0)
    assert t.input_max_v == pytest.approx(3.0)  # 2.7 V + 0.3 V (common practice)


def test_unknown_family_is_bad_input():
    r = run_cli("check", "-", input=example("levitator-40k").read_text().replace(
        'output = "lvcmos33"', 'output = "lvds"'))
    assert r.exit_code == 2 and "controller.output" in r.output


# --- the divider command (README.md) ---------------------------------------------------------

def test_divider_check_1k_2k_is_over_input_maximum():
    # `--check 1k 2k` (1 k on top) is flagged over the input maximum
    r = run_cli("divider", "--from", "lvcmos33", "--to", "lvcmos18", "--tolerance", "1%",
                "--check", "1k", "2k", "--json")
    data = json.loads(r.output)
    assert r.exit_code == 1 and data["verdict"] == "fail"
    assert "trigger_link.over_input_max" in {f["code"] for f in data["findings"]}
    assert data["trigger_link"]["top_ohm"] == 1000 and data["trigger_link"]["bottom_ohm"] == 2000


def test_divider_check_2k_1k_is_below_vih():
    r = run_cli("divider", "--from", "lvcmos33", "--to", "lvcmos18", "--tolerance", "1%",
                "--check", "2k", "1k", "--json")
    data = json.loads(r.output)
    assert r.exit_code == 1
    assert "trigger_link.below_vih" in {f["code"] for f in data["findings"]}


def test_divider_proposal_passes_and_is_json_only():
    r = run_cli("divider", "--from", "lvcmos33", "--to", "lvcmos18", "--series", "E96",
                "--tolerance", "1%", "--capacitance", "10pF", "--json")
    data = json.loads(r.output)  # nothing but JSON on stdout
    assert r.exit_code == 0 and data["verdict"] == "pass" and data["findings"] == []
    assert LINK_KEYS <= set(data["trigger_link"])
    assert data["trigger_link"]["pairs_evaluated"] == 481**2  # E96, 10 ohm..1 Mohm


def test_divider_text_output():
    r = run_cli("divider", "--from", "cmos5", "--to", "lvcmos33")
    assert r.exit_code == 0 and "[trigger_link]" in r.output and "alternatives" in r.output


@pytest.mark.parametrize("args, word", [
    (["--from", "lvds", "--to", "lvcmos18"], "unknown logic family"),
    (["--from", "lvcmos33", "--to", "lvcmos18", "--tolerance", "1x"], "--tolerance"),
    (["--from", "lvcmos33", "--to", "lvcmos18", "--check", "1k", "2 Hz"], "--check"),
    (["--from", "lvcmos33", "--to", "lvcmos18", "--series", "E5"], "E5"),
])
def test_divider_bad_input_exits_2(args, word):
    r = run_cli("divider", *args)
    assert r.exit_code == 2 and word in r.output and "Traceback" not in r.output


def test_camera_trigger_is_advanced_by_the_divider_delay():
    # The exposure opens trigger latency + the divider's worst delay to VIH after the
    # trigger tick; the timing core places the trigger that much earlier.
    plan = solve(_rig("levitator-40k"))
    t, cam = plan.timing, plan.rig.camera
    opened = t.window_start_s - t.camera_trigger_offset_ticks * t.tick_s
    assert opened == pytest.approx(cam.trigger_latency + plan.trigger_link.delay_to_vih_s,
                                   rel=1e-12)
    assert plan.trigger_link.delay_to_vih_s > 0
