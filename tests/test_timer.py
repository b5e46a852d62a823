"""Counter feasibility ([controller.timer]) on rigs whose answer is known by hand.

The arithmetic is in the comments: a counter of b bits holds a period of at most 2^b
counts; a prescaler p makes it count every p-th tick (period/p counts, compare values in
steps of p ticks); two chained b-bit counters hold 2^(2b) counts.
"""

from __future__ import annotations

import pytest

from strobeplan.timers import PROFILES, TimerModel, fit_counter, wrap_time
from tests.conftest import plan_of


def _codes(plan):
    return sorted(f.code for f in plan.findings if f.code.startswith("timer."))


def test_eight_bit_one_mhz_rangefinder_loses_its_lock():
    # rangefinder-58k at 1 MHz: drive 1e6 / 58e3 = 17.2 -> 17 ticks, every 2 -> flash 34
    # ticks, 30 Hz -> 1e6 / 30 / 34 = 980.4 -> 980 flash periods = 33,320 ticks.
    # 8 bits: 256 counts; 33,320 / 256 = 130.2 -> a prescaler of at least 131, i.e. 256
    # (powers of two); 33,320 = 2^3 x 4,165, so 256, 512 and 1024 leave a remainder:
    # 33,320 / 256 = 130.16 counts -> 130 x 256 = 33,280 ticks, -1,200 ppm: the frames slip.
    plan = plan_of("rangefinder-58k", {"controller.clock": "1 MHz",
                                       "controller.timer": {"profile": "counter8-prescale-pow2"}})
    t, s = plan.timing, plan.timer
    assert (t.drive_period_ticks, t.flash_period_ticks, t.frame_period_ticks) == (17, 34, 33320)
    assert (s.drive_counter, s.flash_counter, s.frame_counter) == ("direct", "direct",
                                                                  "prescaler 256")
    assert "timer.prescaler_breaks_lock" in _codes(plan)
    f = next(f for f in plan.findings if f.code == "timer.prescaler_breaks_lock")
    assert f.limit == 33280 and "-1200 ppm" in f.message
    assert plan.verdict == "fail"


@pytest.mark.parametrize("profile", ["counter16", "counter32"])
def test_sixteen_and_thirty_two_bits_hold_the_one_mhz_frame(profile):
    # 33,320 <= 65,536 = 2^16: every count fits directly; only the wrap note remains:
    # 2^32 ticks at 1 MHz = 4,294.97 s.
    plan = plan_of("rangefinder-58k", {"controller.clock": "1 MHz",
                                       "controller.timer": {"profile": profile}})
    s = plan.timer
    assert (s.drive_counter, s.flash_counter, s.frame_counter) == ("direct",) * 3
    assert _codes(plan) == ["timer.absolute_ticks_wrap"]
    assert s.absolute_wrap_s == pytest.approx(4294.967296)
    assert s.absolute_wrap_frame == 2**32 // 33320  # 128,900 frames


def test_sixteen_mhz_frame_per_profile():
    # rangefinder-58k at 16 MHz: drive 16e6 / 58e3 = 275.9 -> 276, flash 552, frame
    # 16e6 / 30 / 552 = 966.2 -> 966 x 552 = 533,232 ticks.
    base = {"controller.clock": "16 MHz"}
    # 8 bits, prescaler up to 1024: 256 x 1024 = 262,144 < 533,232 -> nothing fits (fault);
    # the drive needs 276 / 256 -> prescaler 2 (138 counts), the flash 552 / 256 -> 4 (138)
    p8 = plan_of("rangefinder-58k", {**base,
                                     "controller.timer": {"profile": "counter8-prescale-pow2"}})
    assert p8.timing.frame_period_ticks == 533232
    assert (p8.timer.drive_prescaler, p8.timer.flash_prescaler) == (2, 4)
    assert p8.timer.frame_counter == "does not fit"
    assert "timer.count_overflow" in _codes(p8) and p8.verdict == "fail"
    # phase resolution: 360 deg x 57.97 kHz / 16 MHz = 1.304 deg per tick; x 4 = 5.217 deg
    assert p8.timer.phase_resolution_deg == pytest.approx(4 * 360 * 16e6 / 276 / 16e6,
                                                          rel=1e-12)
    # 16 bits, chainable: 533,232 > 65,536 but <= 2^32 -> two chained counters (note only)
    p16 = plan_of("rangefinder-58k", {**base, "controller.timer": {"profile": "counter16"}})
    assert p16.timer.frame_counter == "chained" and p16.timer.counters_needed == 4
    assert "timer.counter_chained" in _codes(p16) and p16.verdict != "fail"
    # 16 bits, not chainable, prescaler 1..65536: 533,232 / 65,536 = 8.14 -> 9, and
    # 533,232 = 9 x 59,248 exactly: the lock holds; the trigger moves in 9-tick steps
    p16p = plan_of("rangefinder-58k", {**base, "controller.timer": {
        "profile": "counter16-prescale16", "chainable": False}})
    assert p16p.timer.frame_prescaler == 9
    assert p16p.timer.trigger_resolution_s == pytest.approx(9 / 16e6)
    assert "timer.prescaler_needed" in _codes(p16p)
    assert "timer.prescaler_breaks_lock" not in _codes(p16p)
    # 32 bits: direct
    p32 = plan_of("rangefinder-58k", {**base, "controller.timer": {"profile": "counter32"}})
    assert (p32.timer.frame_counter, p32.timer.frame_prescaler) == ("direct", 1)


def test_levitator_wrap_and_pwm_reload():
    # 100 MHz: 2^32 ticks = 42.95 s (the figure a 32-bit absolute count reaches), 50 Hz ->
    # 2,000,000 ticks per frame -> frame 2,147
    plan = plan_of("levitator-40k", {"controller.timer": {"profile": "counter32"}})
    assert plan.timer.absolute_wrap_s == pytest.approx(42.94967296)
    assert plan.timer.absolute_wrap_frame == 2147
    # the sine-weighted PWM needs a new duty compare every 125-tick carrier period
    plan = plan_of("levitator-40k", {"controller.timer": {"profile": "counter8-prescale-pow2"}})
    assert "timer.no_compare_reload" in _codes(plan)


def test_fit_counter_by_hand():
    t8 = PROFILES["counter8-prescale-pow2"]
    assert fit_counter(256, [255], t8).how == "direct"          # 256 = 2^8
    f = fit_counter(257, [0], t8)                                # needs p >= 2; 257 is odd
    assert (f.how, f.prescaler, f.period_exact) == ("prescaler", 2, False)
    f = fit_counter(1000, [8, 16], t8)                           # p >= 4: 1000 = 8 x 125
    assert (f.prescaler, f.period_exact, f.compares_exact) == (4, True, True)
    f = fit_counter(1000, [10], t8)                              # 10 % 4 != 0, 10 % 8 != 0
    assert (f.prescaler, f.period_exact, f.compares_exact) == (4, True, False)
    assert fit_counter(256 * 1024 + 1, [0], t8).how == "none"
    t16 = PROFILES["counter16"]
    assert fit_counter(2**32, [0], t16).how == "chained"
    assert fit_counter(2**32 + 1, [0], t16).how == "none"       # no prescaler to help
    custom = TimerModel("custom", 12, 7, False, 2, False, False)
    f = fit_counter(4096 * 6, [12], custom)                      # p >= 6; 6 divides both
    assert (f.prescaler, f.compares_exact) == (6, True)
    assert wrap_time(1e6) == pytest.approx(4294.967296)


def test_custom_timer_keys_override_the_profile():
    plan = plan_of("levitator-40k", {"controller.timer": {"profile": "counter32", "bits": 16,
                                                          "chainable": True}})
    assert plan.timer.bits == 16 and plan.timer.profile == "counter32 (modified)"
    assert plan.timer.frame_counter == "chained"   # 2,000,000 > 65,536


def test_no_timer_section_no_timer_findings():
    plan = plan_of("levitator-40k", {"controller.timer": None})
    assert plan.timer is None and not _codes(plan)


def test_sine_duty_table_by_hand():
    from strobeplan.stages.timer import sine_duty_table

    # 125-tick carrier, 20 per cycle (the levitator): sin(2 pi 5/20) = 1 -> 125 (full duty),
    # sin(2 pi 15/20) = -1 -> 0, and opposite samples add to the period (half-up rounding
    # of 62.5 + x and 62.5 - x gives a sum of 125 or 126)
    table = sine_duty_table(125, 20)
    assert table[0] == 63 and table[5] == 125 and table[15] == 0
    assert all(table[i] + table[i + 10] in (125, 126) for i in range(10))
