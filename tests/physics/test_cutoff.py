"""Tests for strobeplan.physics.cutoff against a Monte-Carlo ray trace of the cutoff."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import cutoff as co


def trace(shift, height, mask, blur, n=200_000, seed=1):
    """Monte-Carlo: random points of the source image (uniform over its height, plus
    Gaussian diffraction blur), shifted by the deflection, kept where the mask passes."""
    rng = np.random.default_rng(seed)
    y = rng.uniform(-height / 2, height / 2, n) + rng.normal(0.0, blur, n) if blur else \
        rng.uniform(-height / 2, height / 2, n)
    return mask(y + shift).mean()


@pytest.mark.parametrize("shift", [-0.6e-3, -0.2e-3, 0.0, 0.1e-3, 0.3e-3, 0.7e-3])
@pytest.mark.parametrize("blur", [0.0, 0.05e-3])
def test_knife_against_ray_trace(shift, blur):
    h, cut = 1e-3, 0.5
    edge = -h / 2 + cut * h
    mc = trace(shift, h, lambda y: y > edge, blur)
    # Monte-Carlo standard error sqrt(p(1-p)/n) <= 1.1e-3: 5e-3 absolute
    assert co.knife_transmission(shift, h, cut, blur) == pytest.approx(mc, abs=5e-3)


@pytest.mark.parametrize("shift", [-0.9e-3, -0.4e-3, 0.0, 0.2e-3, 0.5e-3, 1.2e-3])
@pytest.mark.parametrize("blur", [0.0, 0.05e-3])
def test_rod_against_ray_trace(shift, blur):
    h, w = 1e-3, 1.2e-3
    mc = trace(shift, h, lambda y: np.abs(y) > w / 2, blur)
    assert co.rod_transmission(shift, h, w, blur) == pytest.approx(mc, abs=5e-3)


def test_erf_against_math():
    # Abramowitz & Stegun 7.1.26 bound 1.5e-7, checked against the standard library.
    import math
    xs = np.linspace(-4, 4, 81)
    assert np.max(np.abs(co.erf(xs) - [math.erf(x) for x in xs])) < 2e-7


def test_knife_slope_is_one_over_a():
    # Settles (2001) eq. 3.6: contrast T/T0 - 1 = s / a in the linear range.
    h, cut = 1e-3, 0.7
    a = (1 - cut) * h
    t0 = co.knife_transmission(0.0, h, cut)
    s = 0.05e-3
    assert co.knife_transmission(s, h, cut) / t0 - 1 == pytest.approx(s / a, rel=1e-9)
    # clips once wholly cut: shift -a gives 0
    assert co.knife_transmission(-a - 1e-6, h, cut) == 0.0


def test_rod_has_no_first_order_response():
    # Settles (2001) sec. 3.5: a centred stop is even in the shift -> no fundamental, the
    # image shows the wave at twice its spatial frequency.
    mean, first, second = co.harmonics(0.4e-3, 1e-3, True, 0.5, 1.2e-3, 0.02e-3)
    assert first < 1e-9 * max(second, 1e-30) + 1e-12
    assert second > 1e-3
    # a knife edge in its linear range: fundamental = amplitude / h, no second harmonic
    mean, first, second = co.harmonics(0.1e-3, 1e-3, False, 0.5, 0.0)
    assert first == pytest.approx(0.1, rel=1e-9)
    assert second < 1e-12
    assert mean == pytest.approx(0.5, rel=1e-12)


def test_rod_second_harmonic_against_ray_trace():
    # Independent: the Monte-Carlo transmission sampled over one period, Fourier analysed.
    h, w, amp = 1e-3, 1.0e-3, 0.5e-3
    theta = 2 * np.pi * np.arange(32) / 32
    mc = np.array([trace(amp * np.sin(t), h, lambda y: np.abs(y) > w / 2, 0.0, n=100_000)
                   for t in theta])
    second = 2 * abs((mc * np.exp(-2j * theta)).mean())
    assert co.harmonics(amp, h, True, 0.5, w, 0.0, samples=32)[2] == pytest.approx(
        second, abs=3e-3)


@settings(max_examples=60, deadline=None)
@given(s=st.floats(-3e-3, 3e-3), cut=st.floats(0.05, 0.95), w=st.floats(0.1e-3, 3e-3),
       b=st.floats(0, 0.2e-3))
def test_transmission_bounded_and_rod_even(s, cut, w, b):
    h = 1e-3
    t = co.transmission(s, h, False, cut, w, b)
    assert 0.0 <= t <= 1.0
    assert co.rod_transmission(s, h, w, b) == pytest.approx(co.rod_transmission(-s, h, w, b),
                                                            abs=1e-9)


def test_broadcasts():
    out = co.harmonics(np.array([0.1e-3, 0.2e-3]), 1e-3, np.array([[True], [False]]), 0.5,
                       1e-3)
    assert out[1].shape == (2, 2)
