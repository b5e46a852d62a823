"""Free-running cameras (camera.trigger = "none") and continuous trains (strobe.continuous).

A phone-class rig: a rolling shutter whose readout (32 ms) is longer than its exposure, so
no moment exists in which all rows expose; the controller cannot trigger it. With the LED
flashing continuously each row collects floor or ceil(exposure / flash period) flashes
(physics/banding.py, tested against a direct simulation in tests/physics/test_banding.py).
"""

from __future__ import annotations

import pytest

from tests.conftest import plan_of, run_cli

PHONE = {"camera.trigger": "none", "camera.exposure": "8.333 ms", "camera.readout": "32 ms",
         "camera.trigger_input": None, "trigger_link": None}


def test_phone_class_rig_passes_with_its_banding():
    plan = plan_of("rangefinder-58k", PHONE)
    codes = {f.code for f in plan.findings}
    assert "timing.rolling_window_too_short" not in codes
    b = plan.banding
    # flash period 552 ticks at 16 MHz = 34.5 us; 8.333 ms / 34.5 us = 241.5 flashes
    assert b.flash_period_s == pytest.approx(34.5e-6)
    assert (b.flashes_per_row_min, b.flashes_per_row_max) == (241, 242)
    assert b.banding < 0.02 and "banding.visible" not in codes
    assert b.bands_per_frame == pytest.approx(32e-3 / 34.5e-6)
    assert plan.verdict != "fail"
    assert plan.timing.camera_trigger_offset_ticks is None


def test_the_same_rig_triggered_fails_as_before():
    plan = plan_of("rangefinder-58k", {**PHONE, "camera.trigger": "input"})
    assert "timing.rolling_window_too_short" in {f.code for f in plan.findings}
    assert plan.banding is None


def test_continuous_train_changes_the_verdict_and_the_duty():
    triggered = plan_of("rangefinder-58k", {"camera.readout": "2 ms"})
    cont = plan_of("rangefinder-58k", {"camera.readout": "2 ms", "strobe.continuous": True})
    assert "timing.rolling_window_too_short" in {f.code for f in triggered.findings}
    assert "timing.rolling_window_too_short" not in {f.code for f in cont.findings}
    assert cont.banding is not None
    assert cont.timing.duty_average > triggered.timing.duty_average


def test_banding_finding_and_its_fix():
    # 100 us on a 34.5 us train: 2 or 3 flashes of ~2 us -> about a third of the light
    plan = plan_of("rangefinder-58k", {**PHONE, "camera.exposure": "100 us"})
    f = next(f for f in plan.findings if f.code == "banding.visible")
    assert f.value > 0.3
    fixed = plan.banding.band_free_exposure_s
    assert fixed == pytest.approx(3 * 34.5e-6)   # round(100 / 34.5) = 3 periods
    again = plan_of("rangefinder-58k", {**PHONE, "camera.exposure": f"{fixed * 1e6:.4f} us"})
    assert "banding.visible" not in {f.code for f in again.findings}


def test_free_running_rig_plots_and_reports(tmp_path):
    from tests.conftest import patched
    from tests.test_export import _toml

    rig = tmp_path / "phone.toml"
    rig.write_text(_toml(patched("rangefinder-58k", PHONE)))
    for args in (("plot", rig, "--kind", "timing", "-o", tmp_path / "t.png"),
                 ("report", rig, "-o", tmp_path / "r.html"), ("schedule", rig)):
        r = run_cli(*args)
        assert r.exit_code == 0, r.output
