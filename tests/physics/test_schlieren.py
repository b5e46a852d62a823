"""Tests for strobeplan.physics.schlieren: the chain from pressure to image contrast."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import acoustics as ac
from strobeplan.physics import schlieren as sc


def chain(spl, path, cutoff_distance, passes=1, frequency=40e3, c=343.2, k_gd=2.26e-4,
          opening=1e-3):
    p = ac.pressure_amplitude(spl)
    n1 = sc.index_amplitude(sc.density_amplitude(p, c), k_gd)
    eps = sc.deflection(passes, path, sc.wavenumber(frequency, c), n1)
    return eps, sc.knife_edge_contrast(cutoff_distance, eps, opening)


def test_worked_chain():
    # docs/references.md, "Acoustics and schlieren", worked chain [calc]: 40 kHz, c = 343.2,
    # K = 2.26e-4, L = 10 mm, f2 = 1 m, a = 1 mm, single pass, 140 dB: eps = 3.974 urad, C = 0.0040
    # (Settles 2001 eq. 3.6 for C; Gladstone-Dale; rho' = p'/c^2).
    eps, contrast = chain(140.0, 10e-3, 1.0)
    assert eps == pytest.approx(3.974e-6, abs=1e-9)
    assert contrast == pytest.approx(0.0040, abs=5e-5)


def test_double_pass_doubles_deflection():
    # docs/references.md, "Acoustics and schlieren": double pass doubles eps [mem].
    single, _ = chain(130.0, 20e-3, 1.5, passes=1)
    double, _ = chain(130.0, 20e-3, 1.5, passes=2)
    assert double == pytest.approx(2 * single, rel=1e-12)


def test_density_amplitude():
    # Linear adiabatic acoustics (Kinsler 2000): 1 Pa in air at 343 m/s is 8.5e-6 kg/m^3.
    assert sc.density_amplitude(1.0, 343.0) == pytest.approx(1 / 343.0**2, rel=1e-12)


@settings(max_examples=100, deadline=None)
@given(
    st.floats(80.0, 160.0),
    st.floats(1e-3, 0.5),
    st.floats(0.1, 3.0),
    st.floats(1.1, 10.0),
)
def test_contrast_linear_in_pressure_path_and_cutoff_distance(spl, path, f2, factor):
    # Settles 2001 eq. 3.6 chain is linear in each factor (linear-range contrast).
    _, base = chain(spl, path, f2)
    _, louder = chain(spl + 20 * np.log10(factor), path, f2)  # pressure x factor
    _, longer = chain(spl, factor * path, f2)
    _, farther = chain(spl, path, factor * f2)
    for scaled in (louder, longer, farther):
        assert scaled == pytest.approx(factor * base, rel=1e-9)


def test_saturation_and_visible_contrast():
    # Linear until |C| = 1 with a half cut-off (docs/references.md, "Acoustics and schlieren"
    # [calc]).
    assert sc.saturated(1.0) and sc.saturated(-1.5) and not sc.saturated(0.999)
    assert np.array_equal(sc.saturated(np.array([0.5, 2.0])), [False, True])
    assert sc.visible_contrast(0.02, 0.9) == pytest.approx(0.018)
    assert sc.visible_contrast(-3.0, 0.9) == pytest.approx(0.9)  # saturated: clipped at 1


def test_default_min_contrast():
    # Common practice: two grey levels at half scale, 2 / 2^(bits - 1).
    assert sc.default_min_contrast(8) == pytest.approx(2 / 128)
    assert sc.default_min_contrast(12) == pytest.approx(2 / 2048)
    assert np.shape(sc.default_min_contrast(np.array([8, 10, 12]))) == (3,)
