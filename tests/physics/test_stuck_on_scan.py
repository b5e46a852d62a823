"""The stuck-on scan's shortcuts in strobeplan.physics.supply give the full computation's bits.

Oracles (the definitions the shortcuts replace, run here in full):

- the full scan (every step of the stuck-on time grid: ``_scan`` with ``steps=None``) for
  the scan restricted to ``_steps_that_matter``: the peak, its time, the first crossing of
  the limit and the crossed flag must be equal bit for bit, on random step lines and on
  candidates built right at the limit and right at ties between two steps;
- ``foster_advance`` summed with ``np.sum`` (the crossing bisection's arithmetic before it
  was laid out term by term) for ``_bisect_crossing``;
- ``stuck_on_transient`` and ``burst_sag`` candidate by candidate (scalar calls) for the
  same functions over a grid, where the grid's answer does not depend on its neighbours.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import led, supply, thermal


def _lines(rng, n_steps, n_c, terms=3):
    """(decay, zero-state rise, times) per step and circuit, shaped like the stuck-on
    response: decay a sum of exponentials (shares of a Foster network) falling from ~1,
    rise climbing to a plateau and, for some circuits, falling back (the dump's hump)."""
    t = np.geomspace(1e-6, 100.0, n_steps)[:, None]  # (steps, 1)
    share = rng.dirichlet(np.ones(terms), size=n_c)  # (c, terms)
    tau = 10.0 ** rng.uniform(-5, 1.5, size=(n_c, terms))
    decay = np.einsum("ct,kct->kc", share, np.exp(-t[:, :, None] / tau[None]))
    top = rng.uniform(5.0, 200.0, size=n_c)
    hump = rng.uniform(0.0, 1.5, size=n_c) * top
    slow = 10.0 ** rng.uniform(-3, 1, size=n_c)
    rise = top * (1.0 - np.exp(-t / slow)) + hump * (t / slow) * np.exp(1.0 - t / slow)
    return decay, rise, np.broadcast_to(t, decay.shape).copy()


def _same(a, b):
    for x, y in zip(a, b, strict=True):
        assert x.shape == y.shape and np.array_equal(x, y, equal_nan=x.dtype.kind == "f")


def _at_limit(rng, d, z, lim, spread, at_limit):
    """Start rises in [0, spread], a fraction ``at_limit`` of them moved to where a random
    step's line meets the limit exactly (the ties the scan must get right)."""
    n_steps = d.shape[0]
    r0 = rng.uniform(0.0, 1.0, size=lim.shape) * spread
    k = rng.integers(0, n_steps, size=lim.shape)
    cols = np.arange(lim.shape[1])[None, :]
    with np.errstate(divide="ignore", over="ignore"):
        exact = (lim - z[k, cols]) / d[k, cols]
    pick = (rng.random(lim.shape) < at_limit) & (exact >= 0) & (exact <= 2 * spread + 1)
    return np.where(pick, exact, r0), cols


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n_steps=st.integers(20, 400),
       n_c=st.integers(1, 12), n_a=st.integers(1, 40),
       spread=st.floats(0.0, 60.0), at_limit=st.floats(0.0, 1.0),
       per_candidate_limit=st.booleans())
def test_kept_steps_give_the_full_scans_bits(seed, n_steps, n_c, n_a, spread, at_limit,
                                             per_candidate_limit):
    rng = np.random.default_rng(seed)
    d, z, g = _lines(rng, n_steps, n_c)
    lim = np.full((n_a, n_c), rng.uniform(20.0, 250.0))
    if per_candidate_limit:
        lim = lim + rng.uniform(-5.0, 5.0, size=lim.shape)
    # Candidates right at the limit: the start rise that puts a step exactly on it.
    r0, cols = _at_limit(rng, d, z, lim, spread, at_limit)
    # ... and right at a tie between two steps (their lines cross there).
    i, j = rng.integers(0, n_steps, size=(2, n_a, n_c))
    with np.errstate(divide="ignore", invalid="ignore"):
        tie = (z[j, cols] - z[i, cols]) / (d[i, cols] - d[j, cols])
    pick = (rng.random((n_a, n_c)) < 0.3) & np.isfinite(tie) & (tie >= 0) & (tie <= 200.0)
    r0 = np.where(pick, tie, r0)
    steps = supply._steps_that_matter(r0, lim, d, z)
    _same(supply._scan(r0, lim, d, z, g, steps), supply._scan(r0, lim, d, z, g, None))


def test_the_scan_keeps_few_steps_on_the_levitator_like_response():
    # The point of the shortcut (not a tolerance: the bits are tested above): a realistic
    # response keeps a small fraction of 341 steps.
    rng = np.random.default_rng(7)
    d, z, g = _lines(rng, 341, 50)
    r0 = rng.uniform(0.0, 17.0, size=(100, 50))
    lim = np.full(r0.shape, 100.0)
    steps = supply._steps_that_matter(r0, lim, d, z)
    assert steps is not None and steps.shape[1] < 341 // 4
    _same(supply._scan(r0, lim, d, z, g, steps), supply._scan(r0, lim, d, z, g, None))


def test_non_finite_inputs_scan_every_step():
    rng = np.random.default_rng(3)
    d, z, _ = _lines(rng, 100, 4)
    r0 = rng.uniform(0.0, 10.0, size=(5, 4))
    r0[2, 1] = np.nan
    assert supply._steps_that_matter(r0, np.full(r0.shape, 50.0), d, z) is None


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 300), terms=st.integers(1, 9))
def test_crossing_bisection_is_foster_advance_summed(seed, n, terms):
    rng = np.random.default_rng(seed)
    r = rng.uniform(0.1, 10.0, size=(n, terms))
    tau = 10.0 ** rng.uniform(-6, 1, size=(n, terms))
    state = rng.uniform(0.0, 50.0, size=(n, terms))
    heat = rng.uniform(0.0, 20.0, size=n)
    length = 10.0 ** rng.uniform(-7, 0, size=n)
    end = np.sum(thermal.foster_advance(state, heat, length, r, tau), axis=-1)
    start = np.sum(state, axis=-1)
    lim = start + rng.uniform(0.0, 1.0, size=n) * (end - start)  # crossed inside
    lo, up = np.zeros(n), length.copy()
    for _ in range(60):  # the bisection as it was written with foster_advance
        mid = 0.5 * (lo + up)
        above = np.sum(thermal.foster_advance(state, heat, mid, r, tau), axis=-1) >= lim
        up, lo = np.where(above, mid, up), np.where(above, lo, mid)
    got = supply._bisect_crossing(state, heat, r, tau, lim, length)
    assert np.array_equal(got, up)


LEVITATOR_FIT = dict(n_vt=0.0913, saturation_current=2.2e-11, led_series_resistance=0.21)


def test_stuck_on_grid_is_its_candidates_bit_for_bit():
    # A grid of (resistor, voltage) circuits against a spread of starting temperatures; the
    # reference is the full scan, forced by disabling the shortcut.
    volts = np.array([12.0, 24.0, 36.0])[None, None, :]
    ohms = np.array([0.5, 1.0, 2.2, 4.7, 10.0])[None, :, None]
    start = 298.15 + np.linspace(0.0, 30.0, 17)[:, None, None]
    args = dict(supply_voltage=volts, capacitance=10e-3, esr=0.05, series_resistor=ohms,
                on_resistance=0.01, current_limit=0.5, efficiency=0.3,
                resistances=[1.5, 3.0, 6.0, 15.0], time_constants=[20e-6, 2e-3, 80e-3, 20.0],
                ambient=298.15, start_temperature=start, junction_max=398.15,
                points_per_decade=32, **LEVITATOR_FIT)
    fast = supply.stuck_on_transient(**args)
    real = supply._steps_that_matter
    supply._steps_that_matter = lambda *a: None
    try:
        supply.forget_circuits()
        full = supply.stuck_on_transient(**args)
    finally:
        supply._steps_that_matter = real
        supply.forget_circuits()
    crossed = np.isfinite(full.time_to_limit)
    assert crossed.any() and (~crossed).any()  # both verdicts occur
    _same(fast, full)


def test_circuits_taken_from_a_remembered_grid_are_computed_ones():
    # A search's later evaluations meet its grid's circuits again in other arrays: their
    # rows are taken from the grid's response. Every array equals computing them afresh,
    # for subsets in any order and shape, repeats included (circuits 0.1 uF to 47 mF, so
    # their own time grids have different numbers of steps).
    caps = np.array([0.1e-6, 2.2e-6, 470e-6, 47e-3])[:, None]
    ohms = np.array([0.5, 2.2, 10.0])[None, :]
    base = dict(supply_voltage=24.0, esr=0.05, on_resistance=0.01, current_limit=0.5,
                efficiency=0.3, resistances=[1.5, 3.0, 6.0, 15.0],
                time_constants=[20e-6, 2e-3, 80e-3, 20.0], **LEVITATOR_FIT)

    def circuit(c, r):
        return tuple(base[k] if k not in ("capacitance", "series_resistor") else
                     (c if k == "capacitance" else r) for k in (
            "supply_voltage", "capacitance", "esr", "series_resistor", "on_resistance",
            "current_limit", "n_vt", "saturation_current", "led_series_resistance",
            "efficiency", "resistances", "time_constants"))

    supply.forget_circuits()
    try:
        whole = supply._circuit_response(circuit(caps, ohms), 32)
        assert len(set(whole.own.ravel().tolist())) > 1  # grids of different lengths
        for c, r in [(caps[[3, 0]], ohms), (np.array([2.2e-6, 2.2e-6]), np.array([10.0, 0.5])),
                     (0.1e-6, 0.5), (47e-3, 2.2), (caps[1:2], ohms[:, 2:])]:
            real = supply._compute_circuit_response
            supply._compute_circuit_response = None  # (taken from the grid's, not computed)
            try:
                got = supply._circuit_response(circuit(c, r), 32)
            finally:
                supply._compute_circuit_response = real
            fresh = real(circuit(c, r), 32)
            for name, x, y in zip(got._fields, got, fresh, strict=True):
                assert np.array_equal(x, y, equal_nan=True), name
                assert np.shape(x) == np.shape(y), name
    finally:
        supply.forget_circuits()


def test_burst_sag_grid_is_its_candidates_bit_for_bit():
    # The first flash is solved once per circuit and broadcast over spacing and count;
    # every candidate must still get what it gets alone (Charge balance, scalar calls).
    width = np.array([2e-6, 8e-6, 20e-6])[:, None, None]
    ohms = np.array([0.5, 2.2, 10.0])[None, :, None]
    every = np.array([1, 2, 5, 8])[None, None, :]
    spacing = every * 25e-6
    n = np.maximum(40 // every, 1)
    args = dict(capacitance=470e-6, esr=0.05, on_resistance=0.01, recharge_current=0.5,
                **LEVITATOR_FIT)
    grid = supply.burst_sag(24.0, args["capacitance"], args["esr"], ohms,
                            args["on_resistance"], args["recharge_current"], width, spacing,
                            n, args["n_vt"], args["saturation_current"],
                            args["led_series_resistance"])
    for idx in np.ndindex(3, 3, 4):
        w, r, e = width[idx[0], 0, 0], ohms[0, idx[1], 0], idx[2]
        one = supply.burst_sag(24.0, args["capacitance"], args["esr"], r,
                               args["on_resistance"], args["recharge_current"], w,
                               spacing[0, 0, e], n[0, 0, e], args["n_vt"],
                               args["saturation_current"], args["led_series_resistance"])
        for name, x in zip(one._fields, one, strict=True):
            assert getattr(grid, name)[idx] == x, name


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n_steps=st.integers(20, 400),
       n_c=st.integers(1, 12), n_a=st.integers(1, 40), spread=st.floats(0.0, 60.0),
       at_limit=st.floats(0.0, 1.0))
def test_crossing_only_steps_give_the_full_scans_crossing(seed, n_steps, n_c, n_a, spread,
                                                          at_limit):
    # Without the peak, only the steps that can hold the first crossing are kept: the
    # crossing step and the crossed flag must still be the full scan's, bit for bit.
    rng = np.random.default_rng(seed)
    d, z, g = _lines(rng, n_steps, n_c)
    lim = np.full((n_a, n_c), rng.uniform(20.0, 250.0)) + rng.uniform(-5.0, 5.0, (n_a, n_c))
    r0, _cols = _at_limit(rng, d, z, lim, spread, at_limit)
    steps = supply._steps_that_matter(r0, lim, d, z, False)
    pk, pt, bk, open_ = supply._scan(r0, lim, d, z, g, steps, False)
    full = supply._scan(r0, lim, d, z, g, None)
    assert np.isnan(pk).all() and np.isnan(pt).all()
    assert np.array_equal(bk, full[2]) and np.array_equal(open_, full[3])


def _verdict_case(volts, start, cap=10e-3, limit=0.5):
    return dict(supply_voltage=volts, capacitance=cap, esr=0.05,
                series_resistor=np.array([0.5, 1.0, 2.2, 4.7, 10.0])[None, :, None],
                on_resistance=0.01, current_limit=limit, efficiency=0.3,
                resistances=[1.5, 3.0, 6.0, 15.0], time_constants=[20e-6, 2e-3, 80e-3, 20.0],
                ambient=298.15, start_temperature=start, junction_max=398.15,
                points_per_decade=32, **LEVITATOR_FIT)


@pytest.mark.parametrize("limit", [0.5, 2.0])
def test_verdict_time_keeps_every_verdict_of_the_full_transient(limit):
    # The design search's mode against the full computation (the oracle: every crossing
    # bisected): whether the limit is reached and the side of verdict_time must agree for
    # every candidate, at verdict times spread over the crossings and right at them (so that
    # the crossing's interval holds verdict_time: there the time must be the exact one).
    args = _verdict_case(np.array([12.0, 24.0, 36.0])[None, None, :],
                         298.15 + np.linspace(0.0, 60.0, 17)[:, None, None], limit=limit)
    full = supply.stuck_on_transient(**args)
    t = full.time_to_limit
    finite = np.isfinite(t) & (t > 0)
    assert finite.any() and (~np.isfinite(t)).any()
    times = list(np.quantile(t[finite], [0.0, 0.3, 0.5, 0.9, 1.0])) + [10.0, 1e-9, 1e9]
    for vt in times:
        fast = supply.stuck_on_transient(**args, verdict_time=vt)
        assert np.array_equal(np.isfinite(fast.time_to_limit), np.isfinite(t))
        assert np.array_equal(fast.time_to_limit >= vt, t >= vt), vt
        at = t == vt
        assert np.array_equal(fast.time_to_limit[at], t[at])
        assert np.isnan(fast.peak_temperature).all() and np.isnan(fast.peak_time).all()
        for name in ("start_current", "steady_current", "resistor_peak_power",
                     "resistor_pulse_energy"):
            assert np.array_equal(getattr(fast, name), getattr(full, name)), name
    # a verdict time inside a crossing's interval gets that crossing bisected exactly
    vt = float(np.median(t[finite]))
    fast = supply.stuck_on_transient(**args, verdict_time=vt)
    moved = fast.time_to_limit != t
    assert not moved[t == vt].any()
    assert moved.any()  # the rest were decided by their interval (reported at its end)
    assert (fast.time_to_limit[moved] >= t[moved]).all()


def test_burst_sag_given_its_first_flash_is_the_same():
    # The power stage hands burst_sag the first flash it has solved: the same bits as the
    # burst solving it itself (the oracle), on a grid where some bursts sag and some not.
    width = np.array([2e-6, 8e-6, 20e-6])[:, None, None]
    ohms = np.array([0.5, 2.2, 10.0])[None, :, None]
    every = np.array([1, 2, 5, 8])[None, None, :]
    circuit = (24.0, 470e-6, 0.05, ohms, 0.01, 0.5, width, LEVITATOR_FIT["n_vt"],
               LEVITATOR_FIT["saturation_current"], LEVITATOR_FIT["led_series_resistance"])
    first = led.pulse_operating_point(*circuit)
    rest = (every * 25e-6, np.maximum(40 // every, 1))
    own = supply.burst_sag(*circuit[:7], *rest, *circuit[7:])
    given_first = supply.burst_sag(*circuit[:7], *rest, *circuit[7:], first=first)
    assert (own.at_end > own.at_end.min()).any()  # the bursts differ
    _same(given_first, own)


def test_operating_point_of_drooping_flashes_needs_no_boost_only_branch():
    # Every candidate drooping skips the boost-only start current; their figures must be
    # the ones they get beside candidates the boost alone carries (the oracle: the branch
    # computed and not selected).
    vs = np.array([24.0, 12.0, 6.0, 3.0])
    args = (470e-6, 0.05, 2.2, 0.01, 0.2, 8e-6, LEVITATOR_FIT["n_vt"],
            LEVITATOR_FIT["saturation_current"], LEVITATOR_FIT["led_series_resistance"])
    mixed = led.pulse_operating_point(np.append(vs, 2.4), *args)
    assert mixed.peak_current[-1] <= 0.2 < mixed.peak_current[:-1].min()  # last one held
    alone = led.pulse_operating_point(vs, *args)
    for name, x in zip(alone._fields, alone, strict=True):
        assert np.array_equal(x, getattr(mixed, name)[:-1]), name


def test_operating_point_computes_only_the_energy_forms_it_selects():
    # Short flashes (under 0.5 e-folds of droop) take the Gauss-Legendre form, long ones the
    # dilogarithm form; an array of one kind computes only its own form. The oracle: the
    # same candidates beside one of the other kind (both forms computed, one selected).
    args = (470e-6, 0.05, 2.2, 0.01, 0.2)
    fit = (LEVITATOR_FIT["n_vt"], LEVITATOR_FIT["saturation_current"],
           LEVITATOR_FIT["led_series_resistance"])
    vs = np.array([24.0, 18.0, 12.0])
    for width, other in ((np.array([2e-6, 8e-6, 20e-6]), 0.05),
                         (np.array([0.02, 0.05, 0.1]), 2e-6)):
        alone = led.pulse_operating_point(vs, *args, width, *fit)
        mixed = led.pulse_operating_point(np.append(vs, 24.0), *args, np.append(width, other),
                                          *fit)
        for name, x in zip(alone._fields, alone, strict=True):
            assert np.array_equal(x, getattr(mixed, name)[:-1]), name


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n_c=st.integers(1, 20), n_steps=st.integers(1, 200),
       density=st.floats(0.0, 0.3), empty_rows=st.floats(0.0, 0.5))
def test_kept_steps_are_listed_as_a_stable_argsort_lists_them(seed, n_c, n_steps, density,
                                                              empty_rows):
    # The layout the scan reads: per circuit its kept steps in increasing order, then its
    # last kept step repeated (step 0 for a circuit that keeps none). Oracle: the stable
    # argsort of the mask and the last kept step taken along it (the former construction).
    rng = np.random.default_rng(seed)
    keep = rng.random((n_c, n_steps)) < density
    keep[rng.random(n_c) < empty_rows] = False
    count = keep.sum(axis=1)
    m = max(int(count.max()), 1)
    order = np.argsort(~keep, axis=1, kind="stable")[:, :m]
    last = np.take_along_axis(order, np.maximum(count - 1, 0)[:, None], axis=1)
    want = np.where(np.arange(m)[None, :] < count[:, None], order, last)
    assert np.array_equal(supply._listed(keep, count, m), want)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 50))
def test_pulse_end_is_the_operating_points_peak_and_end_voltage(seed, n):
    # A burst's later flashes read only the peak current and the end voltage: pulse_end
    # must give the operating point's own (the oracle), bit for bit, drooping or held by
    # the boost, short or long against the circuit's time constant.
    rng = np.random.default_rng(seed)
    vs = rng.uniform(2.0, 36.0, n)
    c = 10.0 ** rng.uniform(-6, -2, n)
    rser = rng.choice([0.22, 1.0, 4.7, 68.0], n)
    ib = rng.uniform(0.0, 2.0, n)
    width = 10.0 ** rng.uniform(-7, -1, n)
    args = (vs, c, 0.05, rser, 0.01, ib, width, LEVITATOR_FIT["n_vt"],
            LEVITATOR_FIT["saturation_current"], LEVITATOR_FIT["led_series_resistance"])
    op = led.pulse_operating_point(*args)
    peak, end = led.pulse_end(*args)
    assert np.array_equal(peak, op.peak_current) and np.array_equal(end, op.end_voltage)
    one = tuple(x[0] if np.ndim(x) else x for x in args)
    op1 = led.pulse_operating_point(*one)
    assert tuple(map(float, led.pulse_end(*one))) == (op1.peak_current, op1.end_voltage)
