"""Invariants across modules (hypothesis) and output safety."""

from __future__ import annotations

import copy

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan.cli import exit_code_for
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from strobeplan.units import parse
from tests.conftest import BASES, EXAMPLES, example, run_cli


def _bare_exposure_rig(freq, width, rise, tau, w, jitter):
    return {
        "wave": {"frequency": f"{freq!r} Hz", "harmonics": 3},
        "controller": {"clock": "1 GHz", "jitter_rms": f"{jitter!r} s"},
        "strobe": {"pulse_width": f"{width!r} s"},
        "led": {"forward_voltage": [{"current": "1 A", "voltage": "3 V"}],
                "max_dc_current": "1 A", "junction_max": "125 degC",
                "thermal": [{"resistance": "10 K/W", "time_constant": "1 ms"}],
                "rise_time": f"{rise!r} s", "phosphor_fraction": w,
                "phosphor_decay": f"{tau!r} s"},
    }


def _scaled(raw, k):
    """Every time multiplied by k, every frequency divided by k (strings re-written in SI)."""
    out = copy.deepcopy(raw)
    out["wave"]["frequency"] = f"{parse(raw['wave']['frequency'], 'frequency') / k!r} Hz"
    out["controller"]["clock"] = f"{parse(raw['controller']['clock'], 'frequency') / k!r} Hz"
    out["controller"]["jitter_rms"] = f"{parse(raw['controller']['jitter_rms'], 'time') * k!r} s"
    out["strobe"]["pulse_width"] = f"{parse(raw['strobe']['pulse_width'], 'time') * k!r} s"
    for key in ("rise_time", "phosphor_decay"):
        out["led"][key] = f"{parse(raw['led'][key], 'time') * k!r} s"
    return out


@settings(max_examples=60, deadline=None)
# (figures below 1e-24 SI are bad input: keep the drawn ones at 0 or well above)
@given(freq=st.floats(20e3, 200e3), frac=st.floats(0.01, 0.4),
       rise=st.floats(0.0, 0.2).filter(lambda x: x == 0 or x > 1e-12),
       tau=st.floats(1e-9, 2e-7), w=st.floats(0.0, 1.0).filter(lambda x: x == 0 or x > 1e-12),
       jitter=st.floats(0.0, 5e-9).filter(lambda x: x == 0 or x > 1e-21),
       k=st.sampled_from([0.25, 0.5, 2.0, 4.0, 10.0]))
def test_time_scaling_leaves_retention_unchanged(freq, frac, rise, tau, w, jitter, k):
    """Retention depends on f*t products only: t -> k t, f -> f/k keeps it (to rounding)."""
    width = frac / freq
    raw = _bare_exposure_rig(freq, width, rise * width, tau, w, jitter)
    a = solve(rig_from_dict(raw)).exposure
    b = solve(rig_from_dict(_scaled(raw, k))).exposure
    assert b.retention == pytest.approx(a.retention, rel=1e-6, abs=1e-9)
    for x, y in zip(a.retention_by_harmonic, b.retention_by_harmonic, strict=True):
        assert y == pytest.approx(x, rel=1e-6, abs=1e-9)


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(name=st.sampled_from(EXAMPLES), width_us=st.floats(0.1, 12.0),
       every=st.integers(1, 8))
def test_verdict_and_exit_code_always_agree(name, width_us, every):
    raw = copy.deepcopy(BASES[name])
    raw["strobe"]["pulse_width"] = f"{width_us!r} us"
    raw["strobe"]["every"] = every
    try:
        plan = solve(rig_from_dict(raw))
    except Exception as exc:  # bad combinations are RigErrors; nothing else may escape
        from strobeplan.errors import RigError

        assert isinstance(exc, RigError)
        return
    hazards_or_faults = any(f.severity in ("hazard", "fault") for f in plan.findings)
    assert (plan.verdict == "fail") == hazards_or_faults
    assert exit_code_for(plan.verdict) == (1 if hazards_or_faults else 0)


def test_failed_run_leaves_existing_output_untouched(tmp_path):
    out = tmp_path / "sweep.csv"
    out.write_text("precious\n")
    bad = tmp_path / "bad.toml"
    bad.write_text("[wave]\nfrequency = 'oops'\n")
    r = run_cli("schedule", bad, "-o", out)
    assert r.exit_code == 2
    assert out.read_text() == "precious\n"
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


def test_output_into_unwritable_places_is_exit_2(tmp_path):
    target = tmp_path / "a_dir"
    target.mkdir()
    for args in (("schedule", example("levitator-40k"), "-o", target),
                 ("schedule", example("levitator-40k"), "-o", tmp_path / "no" / "x.csv"),
                 ("new", "-o", tmp_path / "no" / "x.toml"),
                 ("schema", "-o", target)):
        r = run_cli(*args)
        assert r.exit_code == 2, args
        assert "Traceback" not in r.output


def test_outputs_get_ordinary_permissions(tmp_path):
    # A new output gets 0666 & ~umask like open() would (mkstemp alone gives 0600); a
    # replaced output keeps its mode.
    import os
    import stat

    umask = os.umask(0o022)
    try:
        out = tmp_path / "s.csv"
        assert run_cli("schedule", example("levitator-40k"), "-o", out).exit_code == 0
        assert stat.S_IMODE(out.stat().st_mode) == 0o644
        out.chmod(0o640)
        assert run_cli("schedule", example("levitator-40k"), "-o", out).exit_code == 0
        assert stat.S_IMODE(out.stat().st_mode) == 0o640
    finally:
        os.umask(umask)
