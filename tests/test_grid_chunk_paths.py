"""The design search's shortcuts give the same numbers as the plain computation.

A grid chunk's plan (``rules_only``) skips figures no rule reads and resolves the eye's time
to the limit only as far as its rule's threshold; the light budget computes each factor at
the fewest design dimensions it depends on. The reference for every comparison is numpy's
own broadcasting (NumPy reference, "Broadcasting"): the plain formula on broadcast arrays,
and the plan of the same design solved with every figure.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan import tune as tuner
from strobeplan.checks import RULES, load_all
from strobeplan.physics import camera as cam_model
from strobeplan.physics.arrays import compact, expand, expanded
from strobeplan.physics.photobiology import HAZARD_TIME
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from strobeplan.stages import image as image_stage
from tests.conftest import patched

# Figures a grid chunk's light budget leaves out (no rule and no search figure reads them).
SKIPPED = {"electrons_per_flash", "grey_level", "grey_fraction", "shot_noise_electrons",
           "min_detectable_spl_db", "visible"}


@st.composite
def broadcast_cases(draw):
    shape = tuple(draw(st.lists(st.integers(1, 4), min_size=1, max_size=4)))
    small = tuple(n if draw(st.booleans()) else 1 for n in shape)
    small = small[draw(st.integers(0, len(small))):]  # fewer leading axes
    return small, shape


@settings(max_examples=60, deadline=None)
@given(broadcast_cases())
def test_compact_and_expand_agree_with_broadcast_to(case):
    small, shape = case
    x = np.arange(float(np.prod(small))).reshape(small) + 0.5
    view = np.broadcast_to(x, shape)
    full = expand(x, shape)
    # numpy's broadcast_to is the reference: same values, a fresh C-contiguous array
    assert full.shape == shape and full.flags.c_contiguous
    assert np.array_equal(full, view) and not np.shares_memory(full, x)
    back = compact(view)
    assert np.array_equal(np.broadcast_to(back, shape), view)
    assert back.size == x.size  # every broadcast axis cut to one
    assert np.array_equal(expand(view, shape), view)


@settings(max_examples=40, deadline=None)
@given(broadcast_cases(), broadcast_cases())
def test_expanded_operands_give_numpys_broadcast_result(a, b):
    rng = np.random.default_rng(0)
    x = rng.normal(size=a[0])
    y = rng.normal(size=b[0])
    try:
        want = np.less_equal(x, y), x * y, x / y
    except ValueError:  # numpy refuses: so does expanded
        with pytest.raises(ValueError):
            expanded(x, y)
        return
    xe, ye = expanded(x, y)
    for got, ref in zip((np.less_equal(xe, ye), xe * ye, xe / ye), want, strict=True):
        assert np.array_equal(got, ref)


def test_expand_refuses_shapes_that_do_not_broadcast():
    with pytest.raises(ValueError):
        expand(np.zeros((3, 2)), (3, 4))
    with pytest.raises(ValueError):
        expand(np.zeros((2, 3)), (3,))


def _grid_design(rig, every=3):
    base = solve(rig, checks=False, upto="flash")
    grid = tuner.default_grid(rig, base, widths=5, series="E12", resistor_range=(0.1, 100.0),
                              max_every=every, supply_range=(6.0, 36.0), supply_steps=2)
    return grid.design(slice(0, grid.shape[0]))


RIGS = [("levitator-40k", {}),
        ("levitator-40k", {"supply.storage_capacitance": "47 uF",
                           "supply.max_current": "150 mA"}),  # the burst droops
        ("rangefinder-58k", {}),
        ("unsafe-bench", {}),  # the eye hazard fires
        ("levitator-40k", {"led.emitting_size": "30 um"})]


@pytest.mark.parametrize("base, patch", RIGS)
def test_grid_chunk_figures_equal_the_full_plan(base, patch):
    rig = rig_from_dict(patched(base, patch))
    design = _grid_design(rig)
    full = solve(rig, design, checks=False)
    chunk = solve(rig, design, checks=False, rules_only=True)
    shape = design.shape
    if full.image is not None:
        for name, value in vars(full.image).items():
            got = getattr(chunk.image, name)
            if name.startswith("_") or (got is None and name in SKIPPED):
                continue
            if value is None or isinstance(value, str):
                assert got == value, name
                continue
            assert np.array_equal(np.broadcast_to(got, shape), np.broadcast_to(value, shape),
                                  equal_nan=True), name
    load_all()
    if full.eye is not None:
        t_full = np.asarray(full.eye.time_to_limit_s, dtype=float)
        t_chunk = np.asarray(chunk.eye.time_to_limit_s, dtype=float)
        assert np.array_equal(np.broadcast_to(t_chunk < HAZARD_TIME, shape),
                              np.broadcast_to(t_full < HAZARD_TIME, shape))
        # exact, or inf where (and because) no candidate reaches a limit that fast
        assert np.all((t_chunk == t_full) | (np.isinf(t_chunk) & (t_full >= HAZARD_TIME)))
    for code in ("image.too_dark", "image.snr_low", "image.overexposed", "eye.hazard",
                 "led.optical_exceeds_electrical", "led.output_extrapolated"):
        a, b = RULES[code].func(full), RULES[code].func(chunk)
        if a is None:
            assert b is None, code
            continue
        assert np.array_equal(np.broadcast_to(np.asarray(a.when), shape),
                              np.broadcast_to(np.asarray(b.when), shape)), code


def test_the_eye_rule_and_the_stage_share_the_threshold():
    load_all()
    hit = RULES["eye.hazard"].func(solve(rig_from_dict(patched("levitator-40k", {}))))
    # the rule's limit is the one the stage bounds against: IEC 62471:2006, Table 6.1
    # (0.25 s, the aversion response)
    assert hit.limit == HAZARD_TIME == 0.25


@pytest.mark.parametrize("base, patch", RIGS[:2])
def test_flash_energy_equals_the_simpson_formula_on_broadcast_arrays(base, patch):
    # The plain formula (Simpson over the pulse's peak, mean and end current, then over the
    # burst's first, middle and last flash), on arrays broadcast to the grid's full shape.
    rig = rig_from_dict(patched(base, patch))
    design = _grid_design(rig, every=4)
    plan = solve(rig, design, checks=False)
    shape = design.shape
    led = rig.led
    table = led.relative_output or []

    def flux(i):
        return cam_model.radiant_flux(i, led.optical_power.current, led.optical_power.power,
                                      [p.current for p in table], [p.ratio for p in table])

    def full(x):
        return np.broadcast_to(np.asarray(x, dtype=float), shape)

    pk, mean, end = (full(getattr(plan.led, k))
                     for k in ("peak_current_a", "mean_current_a", "end_current_a"))
    last = full(plan.supply.last_flash_current_a)
    width = full(plan.flash.current_width_s)
    s = np.where(pk > 0, last / np.where(pk > 0, pk, 1.0), 1.0)

    def flash(scale):
        return width * (flux(scale * pk) + 4.0 * flux(scale * mean) + flux(scale * end)) / 6.0

    one = (flash(1.0) + 4.0 * flash((1.0 + s) / 2.0) + flash(s)) / 6.0
    n, got, _ = image_stage._emitted(rig, plan)
    assert np.array_equal(np.broadcast_to(got, shape), one)
    if patch:
        assert np.any(s != 1.0)  # the drooping rig exercises the per-element path
    energy, _, _, _ = image_stage._emitted_per_frame(rig, design, plan)
    assert np.array_equal(np.broadcast_to(energy, shape), full(n) * one)


@settings(max_examples=25, deadline=None)
@given(st.floats(-3.0, 3.0))
def test_eye_bound_keeps_the_hazard_mask_near_its_threshold(log_scale):
    # The LED's rated flux scaled over six decades around the levitator's: the grid chunk's
    # bounded time to the limit fires exactly where the exact one does.
    raw = patched("levitator-40k", {"led.emitting_size": "100 um"})
    power = raw["led"]["optical_power"]
    power["power"] = f"{float(_watts(power['power'])) * 10.0 ** log_scale!r} W"
    rig = rig_from_dict(raw)
    design = _grid_design(rig, every=2)
    load_all()
    full = RULES["eye.hazard"].func(solve(rig, design, checks=False))
    chunk = RULES["eye.hazard"].func(solve(rig, design, checks=False, rules_only=True))
    assert np.array_equal(np.broadcast_to(np.asarray(chunk.when), design.shape),
                          np.broadcast_to(np.asarray(full.when), design.shape))


def _watts(text):
    from strobeplan.units import parse

    return parse(text, "power") if isinstance(text, str) else float(text)


@pytest.mark.parametrize("base", ["levitator-40k", "rangefinder-58k"])
def test_grid_chunk_exposure_equals_the_full_plan(base):
    # levitator: a standing wave (no blur: the chunk skips the sampled FWHM);
    # rangefinder: a travelling wave (the blur rule reads it: exact)
    rig = rig_from_dict(patched(base, {}))
    design = _grid_design(rig)
    full = solve(rig, design, checks=False).exposure
    chunk = solve(rig, design, checks=False, rules_only=True).exposure
    skipped = {"optical_duration_s", "blur_distance_m", "blur_pixels"}
    assert (chunk.optical_duration_s is None) == (rig.wave.kind == "standing")
    for name, value in vars(full).items():
        got = getattr(chunk, name)
        if got is None and name in skipped:
            continue
        if value is None:
            assert got is None, name
            continue
        assert np.array_equal(np.broadcast_to(got, design.shape),
                              np.broadcast_to(value, design.shape), equal_nan=True), name


def test_rule_masks_are_read_only_views_equal_to_the_broadcast_conditions():
    # checks.masks: each mask equals numpy's broadcast of the rule's conditions (ORed over
    # its hits), is read-only, and the evaluation's verdict is 2 where a hazard or fault
    # fires, else 1 where a warning does, else 0
    from strobeplan.checks import masks

    rig = rig_from_dict(patched("unsafe-bench", {}))
    design = _grid_design(rig)
    shape = design.shape
    plan = solve(rig, design, checks=False)
    fired = masks(plan, shape)
    load_all()
    assert fired
    for code, m in fired.items():
        hits = RULES[code].func(plan)
        hits = hits if isinstance(hits, list) else [hits]
        want = np.zeros(shape, dtype=bool)
        for h in hits:
            want = want | np.broadcast_to(np.asarray(h.when, dtype=bool), shape)
        assert m.shape == shape and not m.flags.writeable
        assert np.array_equal(m, want), code
    ev = tuner.evaluate(rig, design)
    fail = np.zeros(shape, dtype=bool)
    warn = np.zeros(shape, dtype=bool)
    for code, m in fired.items():
        if RULES[code].severity in ("hazard", "fault"):
            fail |= m
        elif RULES[code].severity == "warning":
            warn |= m
    assert np.array_equal(ev.verdict, np.where(fail, 2, np.where(warn, 1, 0)))
    assert ev.verdict.dtype == np.int64 and ev.score.shape == shape


def test_grid_chunks_share_the_trigger_links_divider_search():
    # The link stage of an array design remembers its divider search; each chunk's section
    # is its own copy, equal to a fresh link_section's, with the chunk's own edge limits.
    from strobeplan.stages import link as link_stage

    rig = rig_from_dict(patched("levitator-40k", {}))
    design = _grid_design(rig)
    first = solve(rig, design, checks=False, upto="drive").trigger_link
    again = solve(rig, design.with_(pulse_width=design.pulse_width * 0.5), checks=False,
                  upto="drive").trigger_link
    assert first is not again
    assert np.shape(first.edge_limit_s) == np.shape(design.pulse_width)
    link_stage._LINK_MEMO.clear()
    fresh = solve(rig, design, checks=False, upto="drive").trigger_link
    for name, value in vars(fresh).items():
        if name.startswith("_") or name == "alternatives":
            continue
        got = getattr(first, name)
        if isinstance(value, np.ndarray):
            assert np.array_equal(got, value), name
        else:
            assert got == value, name
    assert [str(a) for a in first.alternatives] == [str(a) for a in fresh.alternatives]
