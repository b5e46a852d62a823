"""Refractive index of moist air (Ciddor 1996) and the Gladstone-Dale constant from it.

Ciddor's method: the refractivities of standard dry air (15 degC, 101 325 Pa, 450 ppm
CO2) and of standard water vapour (20 degC, 1333 Pa) are dispersion formulas in the
wavenumber sigma = 1/lambda; each component's refractivity scales with its density in the
actual air over its density in the standard state, the densities from the BIPM
(CIPM-81/91) equation of state with its compressibility factor Z:

    n - 1 = (rho_a / rho_axs) (n_axs - 1) + (rho_w / rho_ws) (n_ws - 1)

The Gladstone-Dale constant of the moist air is then K = (n - 1) / rho, rho = rho_a +
rho_w its density; a small change of density (a sound wave, rho' = p'/c^2) changes the
index by K rho' (the same mixture compressed).

Valid (Ciddor) for 300-1700 nm, -40 to 100 degC, 80-120 kPa, 0-100 % RH, 0-2000 ppm CO2.
Every function broadcasts over numpy arrays; wavelengths are vacuum wavelengths.

References
----------
1. P. E. Ciddor, "Refractive index of air: new equations for the visible and near
   infrared", Appl. Opt. 35(9), 1566-1573 (1996). doi:10.1364/AO.35.001566
   (eqs. 1-4 and the appendix: the dispersion constants k0-k3, w0-w3, the CO2 and molar
   mass corrections, the compressibility constants a0-e).
2. J. A. Stone, J. H. Zimmerman, "Index of refraction of air", NIST Engineering Metrology
   Toolbox, https://emtoolbox.nist.gov/Wavelength/Documentation.asp (appendix A-I to
   A-III: saturation vapour pressure, enhancement factor and the Ciddor computation).
3. R. S. Davis, "Equation for the determination of the density of moist air (1981/91)",
   Metrologia 29, 67-70 (1992) (the compressibility factor Z).
"""

from __future__ import annotations

import numpy as np

from .air import ZERO_CELSIUS, enhancement_factor

GAS_CONSTANT = 8.314510  # [J/(mol K)] the value Ciddor (1996) used
WATER_MOLAR_MASS = 0.018015  # [kg/mol] (Ciddor 1996)

# Ciddor (1996), eq. 1 and 3: dispersion of standard air and water vapour [1/um^2].
_K0, _K1, _K2, _K3 = 238.0185, 5792105.0, 57.362, 167917.0
_W0, _W1, _W2, _W3 = 295.235, 2.6422, -0.032380, 0.004028
_WATER_FACTOR = 1.022
# Compressibility (Davis 1992, as Ciddor 1996 quotes it).
_A0, _A1, _A2 = 1.58123e-6, -2.9331e-8, 1.1043e-10
_B0, _B1 = 5.707e-6, -2.051e-8
_C0, _C1 = 1.9898e-4, -2.376e-6
_D, _E = 1.83e-11, -0.765e-8
# Saturation vapour pressure over water (Ciddor 1996 appendix; NIST EMT A-I; the Davis
# (1992) form, not Giacomo's of physics.air); the enhancement factor is the same as air's.
_SVP = (1.2378847e-5, -1.9121316e-2, 33.93711047, -6.3431645e3)


def _a(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


def compressibility(temperature, pressure, water_fraction):
    """Compressibility factor Z of moist air (BIPM equation of state). [1]

    Parameters
    ----------
    temperature : float or ndarray
        Temperature. [K]
    pressure : float or ndarray
        Total pressure. [Pa]
    water_fraction : float or ndarray
        Mole fraction of water vapour. [1]

    References
    ----------
    1. Davis (1992); Ciddor (1996), appendix.
    """
    t_k, p, xw = _a(temperature), _a(pressure), _a(water_fraction)
    t = t_k - ZERO_CELSIUS
    pt = p / t_k
    z = (1.0 - pt * (_A0 + _A1 * t + _A2 * t * t + (_B0 + _B1 * t) * xw
                     + (_C0 + _C1 * t) * xw * xw) + pt * pt * (_D + _E * xw * xw))
    return _out(z)


def water_fraction(temperature, pressure, relative_humidity):
    """Mole fraction of water vapour from the relative humidity. [1]

    Parameters
    ----------
    temperature : float or ndarray
        Temperature. [K]
    pressure : float or ndarray
        Total pressure. [Pa]
    relative_humidity : float or ndarray
        Relative humidity, 0..1. [1]

    References
    ----------
    1. Ciddor (1996), appendix (svp and the enhancement factor f = alpha + beta p +
       gamma t^2); Stone and Zimmerman (NIST EMT), A-I and A-II.
    """
    t_k, p, h = _a(temperature), _a(pressure), _a(relative_humidity)
    a, b, c, d = _SVP
    svp = np.exp(a * t_k * t_k + b * t_k + c + d / t_k)
    return _out(enhancement_factor(t_k, p) * h * svp / p)


def dry_air_molar_mass(co2_ppm):
    """Molar mass of dry air with a CO2 content. [kg/mol]

    Parameters
    ----------
    co2_ppm : float or ndarray
        CO2 mole fraction. [ppm]

    References
    ----------
    1. Ciddor (1996), eq. 4: M_a = 1e-3 [28.9635 + 12.011e-6 (x_c - 400)].
    """
    return _out(1e-3 * (28.9635 + 12.011e-6 * (_a(co2_ppm) - 400.0)))


def standard_refractivities(wavelength, co2_ppm=450.0):
    """(n_axs - 1, n_ws - 1): standard dry air with the CO2 content, standard vapour. [1]

    Parameters
    ----------
    wavelength : float or ndarray
        Vacuum wavelength. [m]
    co2_ppm : float or ndarray
        CO2 mole fraction. [ppm]

    References
    ----------
    1. Ciddor (1996), eqs. 1-3.
    """
    s2 = (1e-6 / _a(wavelength)) ** 2  # sigma^2 [1/um^2]
    n_as = 1e-8 * (_K1 / (_K0 - s2) + _K3 / (_K2 - s2))
    n_axs = n_as * (1.0 + 0.534e-6 * (_a(co2_ppm) - 450.0))
    n_ws = 1e-8 * _WATER_FACTOR * (_W0 + _W1 * s2 + _W2 * s2 * s2 + _W3 * s2**3)
    return _out(n_axs), _out(n_ws)


def _densities(temperature, pressure, xw, co2_ppm):
    """(dry-air part, water part) of the density of moist air. [kg/m^3]"""
    t, p, x = _a(temperature), _a(pressure), _a(xw)
    ma = _a(dry_air_molar_mass(co2_ppm))
    z = _a(compressibility(t, p, x))
    rho_a = p * ma * (1.0 - x) / (z * GAS_CONSTANT * t)
    rho_w = p * WATER_MOLAR_MASS * x / (z * GAS_CONSTANT * t)
    return rho_a, rho_w


def moist_air_density(temperature, pressure, relative_humidity=0.0, co2_ppm=450.0):
    """Density of moist air (BIPM equation with Ciddor's constants). [kg/m^3]

    Parameters
    ----------
    temperature : float or ndarray
        Temperature. [K]
    pressure : float or ndarray
        Total pressure. [Pa]
    relative_humidity : float or ndarray
        Relative humidity, 0..1. [1]
    co2_ppm : float or ndarray
        CO2 mole fraction. [ppm]

    References
    ----------
    1. Ciddor (1996), eq. 4 and appendix; Davis (1992).
    """
    xw = water_fraction(temperature, pressure, relative_humidity)
    rho_a, rho_w = _densities(temperature, pressure, xw, co2_ppm)
    return _out(rho_a + rho_w)


def refractive_index(wavelength, temperature, pressure, relative_humidity=0.0,
                     co2_ppm=450.0):
    """Phase refractive index of moist air (Ciddor 1996). [1]

    Parameters
    ----------
    wavelength : float or ndarray
        Vacuum wavelength, 300-1700 nm. [m]
    temperature : float or ndarray
        Temperature. [K]
    pressure : float or ndarray
        Total pressure. [Pa]
    relative_humidity : float or ndarray
        Relative humidity, 0..1. [1]
    co2_ppm : float or ndarray
        CO2 mole fraction. [ppm]

    Returns
    -------
    float or ndarray
        n. [1]

    References
    ----------
    1. Ciddor (1996), eq. 5 and appendix; Stone and Zimmerman (NIST EMT), A-III.
    """
    n_axs, n_ws = standard_refractivities(wavelength, co2_ppm)
    rho_axs = _densities(288.15, 101325.0, 0.0, co2_ppm)[0]
    rho_ws = _densities(293.15, 1333.0, 1.0, co2_ppm)[1]
    xw = water_fraction(temperature, pressure, relative_humidity)
    rho_a, rho_w = _densities(temperature, pressure, xw, co2_ppm)
    return _out(1.0 + rho_a / rho_axs * _a(n_axs) + rho_w / rho_ws * _a(n_ws))


def gladstone_dale(wavelength, temperature=288.15, pressure=101325.0,
                   relative_humidity=0.0, co2_ppm=450.0):
    """Gladstone-Dale constant K = (n - 1) / rho of moist air (Ciddor 1996). [m^3/kg]

    Parameters
    ----------
    wavelength : float or ndarray
        Vacuum wavelength. [m]
    temperature : float or ndarray
        Temperature. [K]
    pressure : float or ndarray
        Total pressure. [Pa]
    relative_humidity : float or ndarray
        Relative humidity, 0..1. [1]
    co2_ppm : float or ndarray
        CO2 mole fraction. [ppm]

    Returns
    -------
    float or ndarray
        K; about 2.270e-4 at 532 nm in standard dry air. [m^3/kg]

    References
    ----------
    1. Ciddor (1996) (n and the densities); the Gladstone-Dale relation n - 1 = K rho
       (G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer 2001, ch. 2).
    """
    n = _a(refractive_index(wavelength, temperature, pressure, relative_humidity, co2_ppm))
    rho = _a(moist_air_density(temperature, pressure, relative_humidity, co2_ppm))
    return _out((n - 1.0) / rho)
