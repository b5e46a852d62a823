"""Banding of a continuous flash train against a direct simulation of row exposure windows.

Oracle: a brute-force model written independently here: rows start readout/(rows - 1)
apart (common practice for a rolling shutter), each integrates rectangular light pulses of
length L at times j*P over its own exposure window; the brightest and darkest rows are
compared over many offsets of the camera against the train.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from strobeplan.physics import banding as bd


def light_in_windows(starts, window, period, light):
    """Seconds of light each window [s, s + window) collects from pulses [jP, jP + L)."""
    starts = np.asarray(starts, dtype=float)[:, None]
    j = np.arange(np.floor(starts.min() / period) - 1, np.ceil((starts.max() + window)
                                                                / period) + 1)[None, :]
    a = j * period
    overlap = np.minimum(starts + window, a + light) - np.maximum(starts, a)
    return np.clip(overlap, 0.0, None).sum(axis=1)


def brute_banding(window, period, light, readout, rows=200, offsets=250):
    worst = 0.0
    for t0 in np.linspace(0.0, period, offsets, endpoint=False):
        b = light_in_windows(t0 + np.linspace(0.0, readout, rows), window, period, light)
        worst = max(worst, (b.max() - b.min()) / b.max() if b.max() > 0 else 1.0)
    return worst


@settings(max_examples=25, deadline=None)
@given(ratio=st.floats(0.2, 12.0), duty=st.floats(0.005, 0.6),
       spread=st.floats(0.0, 3.0))
def test_window_light_range_matches_brute_force(ratio, duty, spread):
    period = 25e-6
    window, light = ratio * period, duty * period
    lo, hi = bd.window_light_range(window, period, light)
    u = np.linspace(0.0, period, 2001)
    b = light_in_windows(u, window, period, light)
    # the grid steps by P/2000, so each extreme is found to within that much light
    assert_allclose([lo, hi], [b.min(), b.max()], atol=period / 2000 * 1.01)


@pytest.mark.parametrize("window_periods, duty, readout_periods", [
    (333.33, 0.04, 40.0),     # phone-class: 1/120 s on a 25 us train, 1 ms of readout
    (2.5, 0.04, 10.0),        # few flashes per row: a half-flash step
    (2.5, 0.04, 0.01),        # readout shorter than the ramp: the step is cut to it
    (3.0, 0.04, 10.0),        # a whole number of periods: no banding
    (0.8, 0.1, 10.0),         # shorter than the dark gap: some rows dark
    (1.95, 0.3, 0.2),         # a pulse cut by the window's end
])
def test_banding_matches_direct_simulation(window_periods, duty, readout_periods):
    period = 25e-6
    window, light = window_periods * period, duty * period
    readout = readout_periods * period
    want = brute_banding(window, period, light, readout)
    got = float(bd.banding(window, period, light, readout))
    # offsets and rows are sampled; the ramp is found to within ~P/200 of light
    assert got == pytest.approx(want, abs=max(2e-3, 3 * (period / 200) / (window + light)))


def test_flashes_per_window_counts_flash_starts():
    period = 10e-6
    for window in (5e-6, 10e-6, 25e-6, 100e-6, 101e-6):
        starts = np.linspace(0.0, period, 997, endpoint=False)
        counts = [np.sum((np.arange(-2, 200) * period >= s)
                         & (np.arange(-2, 200) * period < s + window)) for s in starts]
        lo, hi = bd.flashes_per_window(window, period)
        assert (lo, hi) == (min(counts), max(counts))


def test_whole_periods_remove_banding_and_arrays_broadcast():
    period = np.array([20e-6, 25e-6, 34.5e-6])
    exposure = bd.banding_free_exposure(8.333e-3, period)
    assert_allclose(exposure / period, np.round(exposure / period))
    assert_allclose(bd.banding(exposure, period, 1e-6, 30e-3), 0.0, atol=1e-9)
    # 1/120 s on a 25 us train of 1 us flashes: 333 or 334 flashes -> 1/334 = 0.30 %
    assert float(bd.banding(1 / 120, 25e-6, 1e-6, 30e-3)) == pytest.approx(1 / 334, rel=1e-3)
    assert bd.bands_per_frame(30e-3, period).shape == (3,)
