"""Ciddor (1996) refractive index of moist air and the Gladstone-Dale constant from it."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import refraction


@pytest.mark.parametrize("lam_um", [0.4, 0.532, 0.63, 0.85, 1.55])
def test_standard_dry_air_is_ciddors_dispersion_formula(lam_um):
    # Ciddor (1996) eq. 1 (standard air: 15 degC, 101 325 Pa, dry, 450 ppm CO2), as the
    # refractiveindex.info database tabulates it: n - 1 = 0.05792105/(238.0185 - s^2)
    # + 0.00167917/(57.362 - s^2), s = 1/lambda [1/um]
    s2 = 1.0 / lam_um**2
    expected = 0.05792105 / (238.0185 - s2) + 0.00167917 / (57.362 - s2)
    got = refraction.refractive_index(lam_um * 1e-6, 288.15, 101325.0, 0.0, 450.0) - 1.0
    assert got == pytest.approx(expected, rel=1e-9)


def test_gladstone_dale_check_value_at_532_nm():
    # docs/references.md, "Acoustics and schlieren": Ciddor (1996) at 532 nm, 15 degC,
    # 101 325 Pa, dry: n - 1 = 2.7821e-4 over rho = 1.2256 kg/m3, K ~ 2.270e-4 m3/kg
    n1 = refraction.refractive_index(532e-9, 288.15, 101325.0, 0.0, 450.0) - 1.0
    rho = refraction.moist_air_density(288.15, 101325.0, 0.0, 450.0)
    assert n1 == pytest.approx(2.7821e-4, rel=5e-5)
    assert rho == pytest.approx(1.2256, rel=2e-4)
    assert refraction.gladstone_dale(532e-9) == pytest.approx(2.270e-4, rel=5e-4)


@pytest.mark.parametrize("t_c", [0.0, 15.0, 25.0, 35.0])
@pytest.mark.parametrize("rh", [0.0, 0.5, 0.9])
def test_moist_air_density_against_coolprop(t_c, rh, coolprop):
    from CoolProp import HumidAirProp as hap  # the coolprop fixture fails when it is absent

    # CoolProp's humid-air model (Herrmann et al. 2009, ASHRAE RP-1485): volume per kg of
    # dry air, so rho = (1 + W) / v_da with W the humidity ratio
    t = t_c + 273.15
    v = hap.HAPropsSI("Vda", "T", t, "P", 101325.0, "R", rh)
    w = hap.HAPropsSI("W", "T", t, "P", 101325.0, "R", rh)
    ref = (1.0 + w) / v
    assert refraction.moist_air_density(t, 101325.0, rh, 400.0) == pytest.approx(ref, rel=5e-4)


@settings(max_examples=40, deadline=None)
@given(st.floats(0.35e-6, 1.6e-6), st.floats(253.15, 323.15), st.floats(80e3, 120e3),
       st.floats(0.0, 1.0))
def test_index_properties(lam, t, p, rh):
    n_dry = refraction.refractive_index(lam, t, p, 0.0)
    n_wet = refraction.refractive_index(lam, t, p, rh)
    # water vapour refracts less than the dry air it displaces (Ciddor 1996, sec. 4)
    assert n_wet <= n_dry + 1e-12
    # K of dry air hardly depends on the state (the Gladstone-Dale law; non-ideality only)
    k = refraction.gladstone_dale(lam, t, p, 0.0)
    k_std = refraction.gladstone_dale(lam)
    assert k == pytest.approx(k_std, rel=2e-3)
    # normal dispersion in the visible: shorter wavelengths refract more
    assert refraction.refractive_index(lam * 0.9, t, p, rh) > n_wet


def test_broadcasts():
    lam = np.array([450e-9, 550e-9, 650e-9])
    k = refraction.gladstone_dale(lam[:, None], np.array([280.0, 300.0]), 101325.0, 0.5)
    assert k.shape == (3, 2) and np.all(np.diff(k[:, 0]) < 0)


def test_gladstone_dale_against_crockett_and_rueckner():
    # docs/references.md, "Acoustics and schlieren" [src2] (Crockett & Rueckner 2018):
    # K = 2.2563e-4 m^3/kg at 532 nm from a dry-air dispersion fit; Ciddor's dry air at
    # 15 degC gives 2.2702e-4 (the same section): the two agree within 1 %.
    k = refraction.gladstone_dale(532e-9, 288.15, 101325.0, 0.0, 450.0)
    assert k == pytest.approx(2.2563e-4, rel=0.01)
    assert k == pytest.approx(2.2702e-4, rel=1e-4)


def test_gladstone_dale_against_edlen_refractivity(coolprop):
    # Independent check: refractivity of standard dry air (15 degC, 101325 Pa) from the
    # revised Edlen formula of Birch & Downs, Metrologia 30, 155 (1993) (coefficients from
    # memory): (n - 1) 1e8 = 8342.54 + 2406147/(130 - s^2) + 15998/(38.9 - s^2), s in 1/um;
    # density from CoolProp (dry air). Ciddor's K times that density within 0.2 %.
    rho = coolprop.PropsSI("D", "T", 288.15, "P", 101325.0, "Air")
    for lam in (450e-9, 532e-9, 633e-9, 850e-9):
        s2 = (1e-6 / lam) ** 2
        refractivity = (8342.54 + 2406147 / (130 - s2) + 15998 / (38.9 - s2)) * 1e-8
        k = refraction.gladstone_dale(lam, 288.15, 101325.0, 0.0, 450.0)
        assert k * rho == pytest.approx(refractivity, rel=2e-3)
