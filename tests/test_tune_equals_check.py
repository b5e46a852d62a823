"""tune's per-candidate verdict equals check's, on random rigs and random designs.

Random rigs (bundled examples with a few keys changed) and random designs inside the
search's ranges: the grid engine's verdict of each design (tune.evaluate on an array design)
equals `check` of the rig with that design written in, in both directions, the same
findings fire, and its figures (score, light, margin, retention) are check's to the last
bit. At least 500 examples run in CI (a file of its own, so the parallel suite runs it
beside tests/test_tune.py).
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan import tune as tuner
from strobeplan.design import Design
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from tests.conftest import patched


def _candidate(values):
    w, r, e, v = values
    return tuner.Candidate(w, r, e, v, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0, "pass")


_MUTATIONS = {
    "levitator-40k": [{}, {"supply.storage_capacitance": "47 uF", "supply.max_current": "150 mA"},
                      {"supply.storage_capacitance": "10 mF"}, {"strobe.continuous": True},
                      {"led.max_pulse_current": "3 A"}, {"camera.exposure": "19 ms"},
                      {"controller.shared_clock": False, "controller.clock_tolerance": "50 ppm"},
                      {"sweep": {"slow_motion": "2 Hz"}}],
    "rangefinder-58k": [{}, {"supply.max_power": "2 W"}, {"led.efficiency": "20 %"}],
    "unsafe-bench": [{}, {"gate_driver.supply": "12 V"}],
}
_RIGS: dict = {}
SCALAR_ONLY = ("timer.", "timing.trigger_in_exposure", "timing.flash_outside_frame")


def _rig(base, k):
    key = (base, k)
    if key not in _RIGS:
        _RIGS[key] = rig_from_dict(patched(base, _MUTATIONS[base][k]))
    return _RIGS[key]


@st.composite
def rigs_and_designs(draw):
    base = draw(st.sampled_from(sorted(_MUTATIONS)))
    rig = _rig(base, draw(st.integers(0, len(_MUTATIONS[base]) - 1)))
    clock = rig.controller.clock
    period = 1.0 / rig.wave.frequency
    n = draw(st.integers(1, 3))
    designs = []
    for _ in range(n):
        ticks = draw(st.integers(2, max(2, int(period * clock) - 1)))
        designs.append((ticks / clock, draw(st.sampled_from([0.22, 1.0, 2.2, 4.7, 15.0, 68.0])),
                        draw(st.integers(1, 4)), draw(st.floats(6.0, 36.0))))
    return rig, designs


@settings(max_examples=500, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(rigs_and_designs())
def test_tune_verdict_equals_check(case):
    rig, designs = case
    a = np.array(designs)
    design = Design(pulse_width=a[:, 0], series_resistor=a[:, 1],
                    every=a[:, 2].astype(np.int64), supply_voltage=a[:, 3])
    ev = tuner.evaluate(rig, design)
    # the grid chunks' mode (figures resolved only as far as the rules need) fires the same
    grid = tuner.evaluate(rig, design, rules_only=True)
    for code, m in ev.masks.items():
        assert np.array_equal(grid.masks[code], m), code
    for name in ("verdict", "feasible", "score", "margin", "retention", "light"):
        assert np.array_equal(getattr(grid, name), getattr(ev, name),
                              equal_nan=name not in ("verdict", "feasible")), name
    for k in range(len(designs)):  # the candidates the search reports, from either mode
        assert repr(tuner._candidate(grid, k, design)) == repr(tuner._candidate(ev, k, design))
    for k, values in enumerate(designs):
        plan = solve(tuner.candidate_rig(rig, _candidate(values)))
        # The timer counters' discrete fits and the schedule's frame-by-frame checks are
        # evaluated for one design only (tune verifies its choice through check instead):
        # compare everything else.
        found = [f for f in plan.findings if not f.code.startswith(SCALAR_ONLY)]
        severities = {f.severity for f in found}
        verdict = ("fail" if severities & {"hazard", "fault"} else
                   "warn" if "warning" in severities else "pass")
        fired = {c for c, m in ev.masks.items() if m[k]}
        assert ("pass", "warn", "fail")[int(ev.verdict[k])] == verdict, (
            values, sorted(f.code for f in found), sorted(fired))
        assert fired == {f.code for f in found}
        # ... and the figures it lists for a candidate are check's, to the last bit: no
        # solver's answer depends on the other candidates solved beside it (a design
        # search's frontier once listed a score 2e-15 off check's)
        figures = {"score": tuner.objective(plan)[1], "light": plan.led.light_per_frame_a_s,
                   "margin": plan.led.thermal_margin_k, "retention": plan.exposure.retention}
        for name, value in figures.items():
            assert getattr(ev, name)[k] == value, (name, values)


