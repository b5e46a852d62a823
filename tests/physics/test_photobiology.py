"""Tests for strobeplan.physics.photobiology: IEC 62471 weightings, limits and risk groups."""

import numpy as np
import pytest

from strobeplan.physics import photobiology as pb


def test_blue_light_table_as_tabulated_in_luxpy():
    # IEC 62471:2006 Table 4.2, B(lambda) at 380-495 nm in 5 nm steps, as copied into the
    # luxpy package (PyPI, 1.12: toolboxes/photbiochem/blue_light_hazard_IEC62471_IECTR62778,
    # `_get_BLH`); the same 24 values, and 10^((450 - 500)/50) = 0.1 at 500 nm.
    # (luxpy itself is not imported: its import fails under numpy 2.)
    nm = np.arange(380, 500, 5)
    luxpy = [0.01, 0.013, 0.025, 0.05, 0.1, 0.2, 0.4, 0.8, 0.9, 0.95, 0.98, 1, 1, 0.97,
             0.94, 0.9, 0.8, 0.7, 0.62, 0.55, 0.45, 0.4, 0.22, 0.16]
    np.testing.assert_allclose(pb.blue_light_weight(nm * 1e-9), luxpy, rtol=1e-12)
    assert pb.blue_light_weight(500e-9) == pytest.approx(0.1, rel=1e-12)
    # luxpy interpolates linearly between the tabulated points (cie_interp kind='linear')
    assert pb.blue_light_weight(437.5e-9) == pytest.approx(1.0)
    assert pb.blue_light_weight(442.5e-9) == pytest.approx(0.985)


@pytest.mark.parametrize("nm, b", [
    # IEC 62471:2006 Table 4.2 (tabulated values; confirmed against luxpy's copy of the table)
    (400, 0.10), (420, 0.90), (435, 1.0), (440, 1.0), (450, 0.94), (460, 0.80),
    (470, 0.62), (480, 0.45), (490, 0.22),
    # formula 10^((450 - lambda)/50) for 500-600 nm: 550 nm -> 0.01; 0.001 at 600-700 nm
    (550, 0.01), (650, 0.001),
])
def test_blue_light_weight(nm, b):
    assert pb.blue_light_weight(nm * 1e-9) == pytest.approx(b, rel=1e-9)


@pytest.mark.parametrize("nm, r", [
    # IEC 62471:2006 Table 4.2 (R(lambda) from memory, not confirmed against a second
    # copy): R = 10 B for 380-495 nm, 1 for 500-700 nm,
    # 10^((700 - lambda)/500) for 700-1050 nm (800 nm -> 0.631), 0.2 for 1050-1150 nm
    (440, 10.0), (470, 6.2), (600, 1.0), (800, 10 ** (-0.2)), (1100, 0.2), (1300, 0.02),
])
def test_thermal_weight(nm, r):
    assert pb.thermal_weight(nm * 1e-9) == pytest.approx(r, rel=1e-9)


def test_blue_limit_and_risk_group_boundaries():
    # IEC 62471 sec. 4.3.3: 1e6 J/m^2/sr -> L_B = 1e4 reaches it in 100 s (RG1/RG2 boundary);
    # L_B = 4e6 in 0.25 s (RG2/RG3); under 100 W/m^2/sr never (exempt).
    assert pb.blue_time_to_limit(1e4) == pytest.approx(100.0)
    assert pb.blue_time_to_limit(4e6) == pytest.approx(0.25)
    assert np.isinf(pb.blue_time_to_limit(99.0))
    inf = np.inf
    assert pb.risk_group(pb.blue_time_to_limit(99.0), inf) == 0
    assert pb.risk_group(pb.blue_time_to_limit(5e3), inf) == 1
    assert pb.risk_group(pb.blue_time_to_limit(2e4), inf) == 2
    assert pb.risk_group(pb.blue_time_to_limit(5e6), inf) == 3


def test_thermal_limit_boundaries():
    # IEC 62471 sec. 4.3.4 / Table 6.1: the RG2/RG3 boundary 71000/alpha is the limit at
    # 0.25 s (50000 / 0.25^0.25 = 70711); 28000/alpha the 10 s value (50000 / 10^0.25 =
    # 28117).
    alpha = 0.05
    assert pb.thermal_time_to_limit(70711.0 / alpha, alpha) == pytest.approx(0.25, rel=1e-4)
    assert np.isinf(pb.thermal_time_to_limit(28000.0 / alpha, alpha))
    assert pb.risk_group(np.inf, pb.thermal_time_to_limit(80000.0 / alpha, alpha)) == 3
    # alpha is clipped to 0.1 rad
    assert pb.thermal_time_to_limit(1e6, 0.5) == pytest.approx(pb.thermal_time_to_limit(1e6,
                                                                                        0.1))


def test_spectra():
    # a colour LED's weighted fraction is close to the weight at its peak (20 nm FWHM)
    assert pb.weighted_fraction(450e-9, False, pb.blue_light_weight) == pytest.approx(0.93,
                                                                                   abs=0.03)
    # red LEDs carry almost no blue-light hazard; white ones a quarter-ish
    assert pb.weighted_fraction(630e-9, False, pb.blue_light_weight) < 2e-3
    assert 0.2 < pb.weighted_fraction(0.0, True, pb.blue_light_weight) < 0.35
    assert pb.photon_wavelength(625e-9, False) == pytest.approx(625e-9, rel=1e-3)
    out = pb.weighted_fraction(np.array([450e-9, 625e-9]), False, pb.thermal_weight)
    assert out.shape == (2,)


@pytest.mark.parametrize("t", [0.25, 1.0, 5.0])
@pytest.mark.parametrize("alpha", [0.001, 0.05, 0.5])
def test_radiances_reaching_the_limits_invert_the_times(t, alpha):
    # IEC 62471 Table 6.1's RG2/RG3 boundary values at 0.25 s: L_B = 4e6 (1e6 / 0.25) and
    # L_R alpha = 70711 (50000 / 0.25^0.25); at other times the round trip through the
    # times to the limits.
    lb, lr = pb.radiances_reaching_limits(t, alpha)
    assert pb.blue_time_to_limit(lb) == pytest.approx(t, rel=1e-12)
    assert pb.thermal_time_to_limit(lr, alpha) == pytest.approx(t, rel=1e-12)
    if t == 0.25:
        assert lb == pytest.approx(4e6, rel=1e-12)
        assert lr * min(max(alpha, 0.0017), 0.1) == pytest.approx(70711.0, rel=1e-5)
