"""Phase-stepped demodulation and the inverted schlieren chain (physics/demod.py)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import air, cutoff, demod, schlieren


def _fit(frames, phases, orders=(1, 2)):
    b = demod.harmonic_basis(phases, orders)
    flat = frames.reshape(len(phases), -1)
    gram = b.T @ b
    coef, var = demod.solve_normal_equations(gram, b.T @ flat, (flat**2).sum(axis=0),
                                             len(phases))
    return coef, var, gram


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0, 2 * math.pi), min_size=6, max_size=20, unique=True),
       st.floats(-1e3, 1e3), st.floats(0, 2 * math.pi), st.floats(0.1, 1e3))
def test_normal_equations_equal_lstsq_at_any_steps(phases, a0, theta, amp):
    phases = np.asarray(phases)
    assume_spread = np.ptp(np.exp(1j * phases).real) > 0.2  # not all phases alike
    if not assume_spread:
        return
    rng = np.random.default_rng(1)
    data = (a0 + amp * np.sin(phases + theta))[:, None] + rng.normal(0, 1, (len(phases), 5))
    b = demod.harmonic_basis(phases, (1, 2))
    if np.linalg.cond(b) > 1e3:  # the normal equations square the condition number:
        return                     # cond 1e3 leaves ~1e-10 of double precision
    coef, var, _ = _fit(data, phases)
    # oracle: numpy's least squares on the whole stack, and its residual sum of squares
    ref, rss, *_ = np.linalg.lstsq(b, data, rcond=None)
    assert np.allclose(coef, ref, rtol=1e-6, atol=1e-6 * (1 + abs(a0) + amp))
    if len(phases) > 5:
        assert np.allclose(var * (len(phases) - 5), rss, rtol=1e-5, atol=1e-6 * (1 + amp**2))


def test_complex_harmonic_phase_convention():
    phases = np.linspace(0, 2 * math.pi, 9, endpoint=False)
    theta = 0.7
    frames = (100 + 10 * np.sin(phases + theta))[:, None]
    coef, _, _ = _fit(frames, phases)
    z = demod.complex_harmonic(coef, 1)
    # the harmonic is Im[Z exp(i phi)]: Z = A exp(i theta) for A sin(phi + theta)
    assert abs(z[0] - 10 * np.exp(1j * theta)) < 1e-9


@pytest.mark.parametrize("steps", [8, 12, 36])
def test_phase_noise_matches_the_standard_result(steps):
    """Brophy (1990): sigma_phi = sigma_I sqrt(2/N) / A for uncorrelated intensity noise
    (docs/references.md, "Phase stepping and analyse"); the spread over seeds within 15 %."""
    amp, sigma = 40.0, 4.0
    phases = np.linspace(0, 2 * math.pi, steps, endpoint=False) + 0.3
    expected = demod.phase_sigma_equal_steps(sigma, amp, steps)
    assert expected == pytest.approx(sigma * math.sqrt(2 / steps) / amp)
    spreads = []
    for seed in range(4):
        rng = np.random.default_rng(seed)
        theta = rng.uniform(0, 2 * math.pi, 4000)
        frames = 1000 + amp * np.sin(phases[:, None] + theta[None, :])
        frames = frames + rng.normal(0, sigma, frames.shape)
        coef, var, gram = _fit(frames, phases, (1,))
        z = demod.complex_harmonic(coef, 1)
        err = np.angle(z * np.exp(-1j * theta))
        spreads.append(err.std())
        # the predicted noise from the residuals agrees too (within 15 %)
        predicted = np.median(demod.coefficient_sigma(gram, np.sqrt(var), 1)) / amp
        assert predicted == pytest.approx(expected, rel=0.15)
    assert np.mean(spreads) == pytest.approx(expected, rel=0.15)


def test_coefficient_sigma_equal_steps_closed_form():
    # Brophy (1990): var(a) = var(b) = 2 sigma^2 / N for N equal steps
    n = 10
    b = demod.harmonic_basis(np.arange(n) * 2 * math.pi / n, (1, 2))
    assert demod.coefficient_sigma(b.T @ b, 3.0, 1) == pytest.approx(3.0 * math.sqrt(2 / n))


def test_aliasing_rule():
    # Surrel (1996): N equal steps resolve harmonics up to (N - 1)/2; m = +-1 (mod N)
    # aliases onto the fundamental
    assert demod.max_resolved_order(4) == 1 and demod.max_resolved_order(8) == 3
    assert demod.min_steps(1) == 3 and demod.min_steps(3) == 7
    assert demod.aliases_onto(3, 1, 4) and not demod.aliases_onto(3, 1, 8)
    assert demod.aliases_onto(7, 1, 8) and demod.aliases_onto(5, 1, 4)
    assert not demod.aliases_onto(1, 1, 4)
    four = np.arange(4) * math.pi / 2
    lam = demod.leakage(four, (1,), 3)[0]
    # 3 = -1 (mod 4): sin(3 phi_k) = -sin(phi_k), the conjugate with a minus sign
    assert abs(lam[0]) < 1e-12 and abs(lam[1] + 1) < 1e-12
    eight = np.arange(8) * math.pi / 4
    assert np.abs(demod.leakage(eight, (1, 2), 3)).max() < 1e-12


@settings(max_examples=30, deadline=None)
@given(st.integers(3, 40), st.integers(2, 30))
def test_leakage_agrees_with_the_modular_rule(n, m):
    phases = np.arange(n) * 2 * math.pi / n
    orders = tuple(j for j in (1, 2) if j <= demod.max_resolved_order(n))
    lam = demod.leakage(phases, orders, m)
    for i, j in enumerate(orders):
        leaks = np.abs(lam[i]).max() > 1e-9
        assert leaks == (demod.aliases_onto(m, j, n) or m == j)


def test_square_wave_harmonics_of_a_clipped_knife():
    # a knife edge driven far past its range with a sharp image passes 0 or 1: a square
    # wave whose odd harmonics are 2 / (pi m) (Fourier series of a square wave, e.g.
    # Bracewell, The Fourier Transform and its Applications, 3rd ed. (2000), ch. 10)
    amps = cutoff.harmonic_amplitudes(1.0, 1e-3, False, 0.5, 0.0, 0.0, orders=7, samples=4096)
    for m in (1, 3, 5, 7):
        assert amps[m - 1] == pytest.approx(2 / (math.pi * m), rel=2e-3)
    for m in (2, 4, 6):
        assert amps[m - 1] < 1e-3
    assert demod.highest_significant_order(amps, 1) == 7
    # within the linear range only the fundamental remains (Settles 2001, sec. 3.4)
    small = cutoff.harmonic_amplitudes(1e-5, 1e-3, False, 0.5, 0.0, 1e-6, orders=6)
    assert demod.highest_significant_order(small, 1) == 1
    mean, first, second = cutoff.harmonics(1e-5, 1e-3, False, 0.5, 0.0, 1e-6)
    assert small[0] == pytest.approx(first) and small[1] == pytest.approx(second, abs=1e-12)


def test_phase_gradient_of_a_plane_wave():
    rows, cols = np.mgrid[0:40, 0:50]
    k_col, k_row = 0.2, -0.1
    z = np.exp(1j * (k_col * cols + k_row * rows))
    for step in (1, 3):
        gc, gr = demod.phase_gradient(z, step)
        assert np.allclose(gc, k_col) and np.allclose(gr, k_row)


def test_robust_mean_ignores_outliers():
    x = np.r_[np.full(100, 1.0) + np.linspace(-0.01, 0.01, 100), [50.0, -40.0]]
    mean, std, n = demod.robust_mean(x)
    assert mean == pytest.approx(1.0, abs=1e-3) and n == 100


def test_two_wave_fit_recovers_a_standing_wave_and_its_pressure():
    # p = cos(k y) exp(i delta): gradient -k sin(k y) exp(i delta); two counter-waves of
    # half amplitude each (Kinsler et al. 2000, standing waves)
    k, delta = 700.0, 0.4
    y = np.linspace(-0.01, 0.01, 301)
    grad = -k * np.sin(k * y) * np.exp(1j * delta)
    a, b, cov, rms = demod.two_wave_fit(grad, np.zeros_like(y), y, 0.0, k)
    p = demod.pressure_phasor_from_gradient(a, b, k)
    assert abs(p - np.exp(1j * delta)) < 1e-9 and rms < 1e-9


def test_pressure_from_deflection_inverts_the_worked_chain():
    # docs/references.md, "Acoustics and schlieren", worked chain [calc]: 40 kHz, c = 343.2,
    # K = 2.26e-4, L = 10 mm, single pass, 140 dB (282.84 Pa peak): eps = 3.974 urad
    k = schlieren.wavenumber(40e3, 343.2)
    p = demod.pressure_from_deflection(3.974e-6, 1, 0.010, 2.26e-4, k, 343.2)
    assert p == pytest.approx(math.sqrt(2) * 20e-6 * 10**7, rel=2e-4)


def test_knife_slope_is_f2_over_a_for_a_sharp_image():
    # Settles (2001), eq. 3.6: contrast = f2 eps / a, a = (1 - cut_fraction) h
    h, cut, f2 = 1e-3, 0.7, 1.5
    t0 = cutoff.knife_transmission(0.0, h, cut, 0.0)
    assert demod.knife_slope(h, cut, 0.0, f2, t0) == pytest.approx(f2 / ((1 - cut) * h),
                                                                   rel=1e-6)


def test_rod_curvature_gives_the_second_harmonic():
    # T(s0 sin phi) = T0 + T'' s0^2 (1 - cos 2 phi) / 4: the second harmonic's amplitude
    # (Taylor expansion of an even response; Settles 2001, sec. 3.5)
    h, w, blur, f2 = 1e-3, 1.2e-3, 5e-5, 1.0
    t0 = cutoff.rod_transmission(0.0, h, w, blur)
    eps = 2e-6
    _, _, second = cutoff.harmonics(f2 * eps, h, True, 0.5, w, blur, samples=256)
    assert demod.rod_curvature(h, w, blur, f2, t0) * eps**2 * t0 == pytest.approx(second,
                                                                                  rel=0.02)


def test_lens_sensitivity_from_a_synthetic_lens_frame():
    # Settles (2001), ch. 10: a lens of focal length F deflects by -y / F
    focal, s = 2.0, 3000.0
    y = np.linspace(-0.01, 0.01, 51)
    contrast = s * demod.lens_deflection(y, focal)
    slope = np.polyfit(y, contrast, 1)[0]
    assert demod.lens_sensitivity(slope, focal) == pytest.approx(s)


def test_temperature_for_speed_inverts_cramer():
    # docs/references.md, "Air": Cramer (1993) at 20 degC, 50 % RH, 101325 Pa: 343.987 m/s
    t = demod.temperature_for_speed(343.987, 0.5, 101325.0)
    assert t == pytest.approx(293.15, abs=0.01)
    c = air.speed_of_sound(np.array([280.0, 300.0]), 0.3, 101325.0)
    assert np.allclose(demod.temperature_for_speed(c, 0.3, 101325.0), [280.0, 300.0],
                       atol=1e-6)
    # dc/dT near 0.6 m/s/K at room temperature (Cramer's a1 = 0.603055, docs/references.md)
    assert demod.speed_slope(293.15, 0.0, 101325.0) == pytest.approx(0.59, abs=0.02)
