"""`strobeplan tune`: the vectorised search against the ordinary solve path.

The oracle of the search is the program's own scalar path: every candidate of a small grid is
turned into a rig, solved with :func:`strobeplan.solve` (which runs every stage and every
check), judged on its plan sections, and the brightest feasible one is picked by a plain
Python loop. The vectorised search must agree with it candidate by candidate and on the
winner. The written rig is then checked by the `check` command itself.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan import tune as tuner
from strobeplan.rig import load_rig, loads_rig
from strobeplan.solve import solve
from tests.conftest import example, run_cli

LEVITATOR = example("levitator-40k")


@pytest.fixture(scope="module")
def levitator():
    rig = load_rig(LEVITATOR)
    return rig, solve(rig)


def small_grid(rig, base, widths=7, every=2, supply=(18.0, 30.0), steps=2):
    """A grid small enough for a brute-force solve of every candidate (~100 solves)."""
    g = tuner.default_grid(rig, base, widths=widths, resistor_range=(1.0, 33.0),
                           max_every=every, supply_range=supply, supply_steps=steps)
    return tuner.Grid(g.widths, g.resistors[::4], g.everys, g.voltages, g.series)


def brute_force(rig, grid, limits):
    """Scalar loop through solve: (best flat index, light, feasible mask, violations)."""
    best, best_key = None, None
    feasible = np.zeros(grid.size, dtype=bool)
    violations = []
    for k in range(grid.size):
        w, r, e, v = grid.at(k)
        design = tuner.Design(w, r, e, v, 0.0, None, 0.0, 0.0, 0.0, 0.0, 0)
        plan = solve(tuner.candidate_rig(rig, design))
        bad = tuner.violations_from_plan(plan, limits)
        violations.append(bad)
        ok = not any(bad.values()) and plan.verdict != "fail"
        feasible[k] = ok
        if ok:
            key = (tuner.light_from_plan(plan), plan.led.thermal_margin_k)
            if best_key is None or key > best_key:
                best, best_key = k, key
    return best, best_key, feasible, violations


@pytest.mark.slow
def test_vectorised_equals_brute_force_through_solve(levitator):
    # Oracle: the ordinary solve path (every stage and check), one candidate at a time.
    rig, base = levitator
    grid = small_grid(rig, base)
    limits = tuner.Limits(min_retention=0.9, min_margin=10.0)
    best, key, feasible, violations = brute_force(rig, grid, limits)
    assert 0 < feasible.sum() < grid.size  # the grid straddles the feasibility boundary
    m, v = tuner.evaluate_grid(rig, base, grid, limits)
    vector_ok = ~np.any(np.stack([v[n] for n in v]), axis=0)
    for k in range(grid.size):  # the same verdict on every constraint of every candidate
        assert {n: bool(v[n][k]) for n in v} == violations[k], grid.at(k)
    np.testing.assert_array_equal(vector_ok, feasible)
    result = tuner.tune(rig, limits, grid, base=base)
    b = result.best
    assert (b.pulse_width_s, b.series_resistor_ohm, b.every, b.supply_voltage_v) == grid.at(best)
    assert b.light_per_frame == pytest.approx(key[0], rel=1e-9)
    assert b.thermal_margin_k == pytest.approx(key[1], rel=1e-9)
    assert result.feasible == feasible.sum()
    assert b.limited_by in tuner.CONSTRAINTS or b.limited_by.startswith("search range")


def _variant(name):
    rig = load_rig(LEVITATOR)
    if name == "continuous":  # heat as a continuous pulse train, not bursts per frame
        return rig.model_copy(update={"strobe": rig.strobe.model_copy(
            update={"continuous": True})})
    if name == "bare":  # no camera, switch, gate driver or optics: their constraints drop
        return rig.model_copy(update={"camera": None, "switch": None, "gate_driver": None,
                                      "optics": None, "trigger_link": None, "sweep": None})
    return load_rig(example("rangefinder-58k"))  # rolling shutter, phosphor LED


@pytest.mark.parametrize("name", ["continuous", "bare", "rangefinder"])
def test_vectorised_equals_brute_force_on_other_rigs(name):
    # Oracle: the ordinary solve path, as above, on rigs that exercise the other branches.
    rig = _variant(name)
    base = solve(rig)
    g = tuner.default_grid(rig, base, widths=5, resistor_range=(0.5, 33.0), max_every=2)
    grid = tuner.Grid(g.widths, g.resistors[::8], g.everys, g.voltages, g.series)
    limits = tuner.Limits(min_retention=0.9)
    best, key, feasible, violations = brute_force(rig, grid, limits)
    m, v = tuner.evaluate_grid(rig, base, grid, limits)
    for k in range(grid.size):
        assert {n: bool(v[n][k]) for n in v} == violations[k], grid.at(k)
    result = tuner.tune(rig, limits, grid, base=base)
    if best is None:
        assert result.best is None
    else:
        assert result.best._flat == best
        assert result.best.light_per_frame == pytest.approx(key[0], rel=1e-9)


def test_chunking_does_not_change_the_result(levitator):
    rig, base = levitator
    grid = small_grid(rig, base, widths=12, every=3, steps=3)
    limits = tuner.Limits(min_retention=0.9)
    a = tuner.tune(rig, limits, grid, base=base, verify=0)
    b = tuner.tune(rig, limits, grid, base=base, verify=0, chunk=7)
    assert a.best == b.best and a.excluded == b.excluded and a.feasible == b.feasible
    assert [d._flat for d in a.frontier] == [d._flat for d in b.frontier]


def test_memory_is_bounded_by_the_chunk(levitator):
    # Bounded memory: the traced peak follows the chunk size, not the grid size.
    import tracemalloc

    rig, base = levitator
    grid = tuner.default_grid(rig, base, widths=200, series="E96", max_every=4)
    assert grid.size > 100_000
    peaks = []
    for chunk in (1 << 12, grid.size):
        tracemalloc.start()
        tuner.tune(rig, tuner.Limits(0.9), grid, base=base, verify=0, chunk=chunk)
        peaks.append(tracemalloc.get_traced_memory()[1])
        tracemalloc.stop()
    assert peaks[0] < 16 * 2**20 and peaks[0] < peaks[1] / 4


def test_frontier_is_pareto(levitator):
    rig, base = levitator
    result = tuner.tune(rig, tuner.Limits(0.9), small_grid(rig, base, widths=20), base=base,
                        verify=0)
    f = result.frontier
    assert len(f) >= 2
    ret = [d.retention for d in f]
    light = [d.light_per_frame for d in f]
    assert ret == sorted(ret, reverse=True)  # retention falls along the frontier ...
    assert all(b > a for a, b in zip(light, light[1:], strict=False))  # ... light rises
    assert max(light) >= result.best.light_per_frame  # it includes designs below the target


@pytest.mark.parametrize("extra", [[], ["--min-retention", "95 %", "--min-margin", "60K"]])
def test_written_rig_passes_check(tmp_path, extra):
    out = tmp_path / "tuned.toml"
    r = run_cli("tune", LEVITATOR, "--widths", "40", "--max-every", "2", "--json",
                "--write-rig", out, *extra)
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert set(data["best"]) >= {"pulse_width_s", "series_resistor_ohm", "every",
                                 "supply_voltage_v", "light_per_frame", "limited_by"}
    assert {"frontier", "candidates", "seconds", "plan"} <= set(data)
    min_ret = 0.95 if extra else load_rig(LEVITATOR).strobe.min_retention
    min_margin = 60.0 if extra else 10.0
    c = run_cli("check", out, "--json")
    assert c.exit_code == 0, c.output
    plan = json.loads(c.stdout)
    assert plan["verdict"] in ("pass", "warn")
    assert plan["exposure"]["retention"] >= min_ret
    assert plan["led"]["thermal_margin_k"] >= min_margin
    tuned = load_rig(out)
    assert tuned.strobe.pulse_width == pytest.approx(data["best"]["pulse_width_s"], rel=1e-9)
    assert tuned.supply.series_resistor == pytest.approx(data["best"]["series_resistor_ohm"])
    # Only the tuned lines change; comments and every other line are kept.
    before = LEVITATOR.read_text(encoding="utf-8").splitlines()
    after = out.read_text(encoding="utf-8").splitlines()
    assert len(before) == len(after)
    changed = [(a, b) for a, b in zip(before, after, strict=True) if a != b]
    keys = {a.split("=")[0].strip() for a, _ in changed}
    assert keys <= {"pulse_width", "every", "series_resistor", "voltage", "min_retention"}
    for a, b in changed:
        if "#" in a:
            assert a[a.index("#"):] == b[b.index("#"):]


def test_never_overwrites_the_input(tmp_path):
    rig = tmp_path / "rig.toml"
    text = LEVITATOR.read_text(encoding="utf-8")
    rig.write_text(text, encoding="utf-8")
    r = run_cli("tune", rig, "--widths", "10", "--max-every", "1", "--write-rig", rig)
    assert r.exit_code == 2
    assert rig.read_text(encoding="utf-8") == text


def test_nothing_feasible_names_the_constraint(tmp_path):
    # A margin above junction_max - ambient (125 degC - 25 degC = 100 K, the rig's own
    # figures) can never be met: the junction temperature excludes every candidate.
    out = tmp_path / "never.toml"
    r = run_cli("tune", LEVITATOR, "--widths", "10", "--max-every", "2", "--min-margin",
                "150K", "--json", "--write-rig", out)
    assert r.exit_code == 1
    data = json.loads(r.stdout)
    assert data["best"] is None
    assert data["excluded"]["junction temperature"] == data["candidates"]
    assert "junction temperature" in data["explanation"]
    assert "change (junction temperature):" in data["explanation"]
    assert not out.exists()


def test_tuned_rig_text_keeps_layout_and_adds_missing_keys():
    text = ("# my rig\r\n[wave]\r\nfrequency = \"40 kHz\"\r\n[controller]\r\n"
            "clock = \"100 MHz\"\r\n[strobe]\r\npulse_width = \"1 us\"   # was guessed\r\n"
            "[led]\r\nforward_voltage = [{ current = \"1 A\", voltage = \"2.4 V\" }]\r\n"
            "max_dc_current = \"1 A\"\r\njunction_max = \"125 degC\"\r\n"
            "thermal = [{ resistance = \"10 K/W\", time_constant = \"1 s\" }]\r\n"
            "[supply]\r\nvoltage = \"24 V\"\r\nseries_resistor = \"2.2 ohm\"\r\n"
            "series_resistor_power = \"3 W\"\r\nstorage_capacitance = \"470 uF\"\r\n"
            "max_current = \"1 A\"\r\nmax_power = \"10 W\"\r\n")
    d = tuner.Design(2.5e-6, 4.7, 3, 18.0, 1.0, None, 0.9, 20.0, 50.0, 2.0, 10)
    new = tuner.tuned_rig_text(text, d)
    same = tuner.Design(1e-6, 4.7, 1, 24.0, 1.0, None, 0.9, 20.0, 50.0, 2.0, 10)
    kept = tuner.tuned_rig_text(text, same)  # unchanged values keep the user's lines
    assert 'pulse_width = "1 us"   # was guessed' in kept and 'voltage = "24 V"' in kept
    assert "every" not in kept
    rig = loads_rig(new)
    assert (rig.strobe.pulse_width, rig.strobe.every, rig.supply.series_resistor,
            rig.supply.voltage) == pytest.approx((2.5e-6, 3, 4.7, 18.0))
    assert "\r\n" in new and "\n" not in new.replace("\r\n", "")  # line endings kept
    assert '# was guessed' in new and new.startswith("# my rig")
    assert new.count("every = 3") == 1


# Hypothesis: tightening any constraint never increases the best light per frame.
@settings(max_examples=25, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ret=st.floats(0.5, 0.99), d_ret=st.floats(0.0, 0.2), margin=st.floats(0.0, 80.0),
       d_margin=st.floats(0.0, 40.0), rating=st.floats(0.3, 1.0), which=st.integers(0, 4))
def test_tightening_never_increases_light(levitator, ret, d_ret, margin, d_margin, rating,
                                          which):
    rig, base = levitator
    grid = small_grid(rig, base, widths=12, every=3, steps=3)
    loose = tuner.tune(rig, tuner.Limits(ret, margin), grid, base=base, verify=0)
    tight_rig = rig
    if which == 0:
        limits = tuner.Limits(min(ret + d_ret, 0.999), margin)
    elif which == 1:
        limits = tuner.Limits(ret, margin + d_margin)
    elif which == 2:  # a stricter LED pulse rating
        limits = tuner.Limits(ret, margin)
        led = rig.led.model_copy(update={"max_pulse_current": rig.led.max_pulse_current * rating})
        tight_rig = rig.model_copy(update={"led": led})
    elif which == 3:  # a smaller boost
        limits = tuner.Limits(ret, margin)
        sup = rig.supply.model_copy(update={"max_power": rig.supply.max_power * rating})
        tight_rig = rig.model_copy(update={"supply": sup})
    else:  # a stricter visibility threshold than the rig's own
        limits = tuner.Limits(ret, margin, min_contrast=base.optics.min_contrast / rating)
    tight = tuner.tune(tight_rig, limits, grid, base=base if tight_rig is rig else None,
                       verify=0)

    def light(r):
        return r.best.light_per_frame if r.best is not None else -math.inf

    assert light(tight) <= light(loose)
    assert tight.feasible <= loose.feasible


class _Terminal:
    """A stand-in stderr: records writes and claims (or not) to be a terminal."""

    def __init__(self, tty):
        self.tty, self.text = tty, ""

    def isatty(self):
        return self.tty

    def write(self, s):
        self.text += s

    def flush(self):
        pass


@pytest.mark.parametrize("tty, elapsed, shown", [(True, 2.0, True), (True, 0.0, False),
                                                 (False, 2.0, False)])
def test_progress_bar_only_for_long_searches_on_a_terminal(monkeypatch, tty, elapsed, shown):
    import time

    from strobeplan import cli

    term = _Terminal(tty)
    monkeypatch.setattr(cli.sys, "stderr", term)
    bar = cli._LazyBar(time.perf_counter() - elapsed)
    bar.update(40, 100)
    bar.update(100, 100)
    bar.close()
    assert ("tune" in term.text) is shown
    if not shown:
        assert term.text == ""


@pytest.mark.parametrize("args", [["--min-retention", "150 %"], ["--min-margin", "-3K"],
                                  ["--min-retention", "40 kHz"],
                                  ["--resistor-range", "5ohm", "1ohm"]])
def test_bad_options_exit_2_without_traceback(args):
    r = run_cli("tune", LEVITATOR, *args)
    assert r.exit_code == 2
    assert "Traceback" not in r.output
