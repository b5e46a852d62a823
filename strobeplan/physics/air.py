"""Properties of humid air: speed of sound, density and ISO 9613-1 absorption.

All functions take SI floats or numpy arrays: temperature in kelvin, pressure in
pascal, relative humidity as a fraction (0..1), mole fractions as fractions.

References
----------
1. O. Cramer, "The variation of the specific heat ratio and the speed of sound in air
   with temperature, pressure, humidity, and CO2 concentration", J. Acoust. Soc. Am.
   93(5), 2510-2516 (1993). doi:10.1121/1.405827
2. P. Giacomo, "Equation for the determination of the density of moist air (1981)",
   Metrologia 18, 33-40 (1982). doi:10.1088/0026-1394/18/1/006
3. ISO 9613-1:1993, Acoustics - Attenuation of sound during propagation outdoors -
   Part 1: Calculation of the absorption of sound by the atmosphere, clauses 6.2-6.3
   (eqs. 3-5) and Annex B (eq. B.1, B.3).
4. A. Picard, R. S. Davis, M. Glaeser, K. Fujii, "Revised formula for the density of
   moist air (CIPM-2007)", Metrologia 45, 149-155 (2008). doi:10.1088/0026-1394/45/2/004
   (molar masses of dry air and water; the ideal-gas density here omits its
   compressibility factor Z, which is 0.9996 at room conditions).
"""

from __future__ import annotations

import numpy as np

ZERO_CELSIUS = 273.15  # [K]

# Cramer (1993), eq. 15 coefficients a0..a15 (Table III).
_CRAMER = (
    331.5024, 0.603055, -0.000528, 51.471935, 0.1495874, -0.000782, -1.82e-7, 3.73e-8,
    -2.93e-10, -85.20931, -0.228525, 5.91e-5, -2.835149, -2.15e-13, 29.179762, 0.000486,
)


def saturation_vapour_pressure(temperature):
    """Saturation vapour pressure of water over a plane surface.

    Parameters
    ----------
    temperature : float or ndarray
        Air temperature. [K]

    Returns
    -------
    float or ndarray
        Saturation vapour pressure. [Pa]

    References
    ----------
    1. Giacomo (1982), as used by Cramer (1993).
    """
    t = np.asarray(temperature, dtype=float)
    return np.exp(1.2811805e-5 * t**2 - 1.9509874e-2 * t + 34.04926034 - 6.3536311e3 / t)


def enhancement_factor(temperature, pressure):
    """Water-vapour enhancement factor f(p, t) of moist air. [1]

    Parameters
    ----------
    temperature : float or ndarray
        Air temperature. [K]
    pressure : float or ndarray
        Static pressure. [Pa]

    References
    ----------
    1. Giacomo (1982), as used by Cramer (1993).
    """
    t_c = np.asarray(temperature, dtype=float) - ZERO_CELSIUS
    return 1.00062 + 3.14e-8 * np.asarray(pressure, dtype=float) + 5.6e-7 * t_c**2


def water_mole_fraction(temperature, relative_humidity, pressure):
    """Mole fraction of water vapour x_w = h·f·p_sv/p.

    Parameters
    ----------
    temperature : float or ndarray
        Air temperature. [K]
    relative_humidity : float or ndarray
        Relative humidity as a fraction, 0..1. [1]
    pressure : float or ndarray
        Static pressure. [Pa]

    Returns
    -------
    float or ndarray
        Water-vapour mole fraction. [1]

    References
    ----------
    1. Cramer (1993), with Giacomo (1982) for f and p_sv.
    """
    p_sv = saturation_vapour_pressure(temperature)
    f = enhancement_factor(temperature, pressure)
    return np.asarray(relative_humidity, dtype=float) * f * p_sv / np.asarray(pressure, dtype=float)


def speed_of_sound(temperature, relative_humidity, pressure, co2_fraction=4.0e-4):
    """Zero-frequency speed of sound in humid air, Cramer (1993) eq. 15.

    Valid 0-30 degC, 75-102 kPa, x_w <= 0.06, x_c <= 0.01 (uncertainty < 300 ppm).

    Parameters
    ----------
    temperature : float or ndarray
        Air temperature. [K]
    relative_humidity : float or ndarray
        Relative humidity as a fraction, 0..1. [1]
    pressure : float or ndarray
        Static pressure. [Pa]
    co2_fraction : float or ndarray, optional
        CO2 mole fraction, default 400 ppm. [1]

    Returns
    -------
    float or ndarray
        Speed of sound. [m/s]

    References
    ----------
    1. Cramer (1993), J. Acoust. Soc. Am. 93(5) 2510, eq. 15 and Table III.
    """
    a = _CRAMER
    t = np.asarray(temperature, dtype=float) - ZERO_CELSIUS
    p = np.asarray(pressure, dtype=float)
    xw = water_mole_fraction(temperature, relative_humidity, pressure)
    xc = np.asarray(co2_fraction, dtype=float)
    c = (
        a[0] + a[1] * t + a[2] * t**2
        + (a[3] + a[4] * t + a[5] * t**2) * xw
        + (a[6] + a[7] * t + a[8] * t**2) * p
        + (a[9] + a[10] * t + a[11] * t**2) * xc
        + a[12] * xw**2 + a[13] * p**2 + a[14] * xc**2 + a[15] * xw * p * xc
    )
    return c if np.ndim(c) else float(c)


MOLAR_GAS_CONSTANT = 8.314462618  # [J/(mol K)], CODATA 2018 (exact since the 2019 SI)
MOLAR_MASS_WATER = 18.01528e-3  # [kg/mol], CIPM-2007 (Picard et al. 2008)


def dry_air_molar_mass(co2_fraction=4.0e-4):
    """Molar mass of CO2-bearing dry air, CIPM-2007.

    Parameters
    ----------
    co2_fraction : float or ndarray, optional
        CO2 mole fraction, default 400 ppm. [1]

    Returns
    -------
    float or ndarray
        Molar mass of dry air. [kg/mol]

    References
    ----------
    1. Picard et al. (2008), Metrologia 45, 149, eq. (A1.3):
       M_a = [28.96546 + 12.011 (x_CO2 - 0.0004)] g/mol.
    """
    xc = np.asarray(co2_fraction, dtype=float)
    m = (28.96546 + 12.011 * (xc - 4.0e-4)) * 1e-3
    return m if np.ndim(m) else float(m)


def density(temperature, relative_humidity, pressure, co2_fraction=4.0e-4):
    """Density of moist air from the ideal-gas law with the water-vapour mole fraction.

    rho = p (M_a (1 - x_w) + M_w x_w) / (R T), with x_w from `water_mole_fraction`.

    Parameters
    ----------
    temperature : float or ndarray
        Air temperature. [K]
    relative_humidity : float or ndarray
        Relative humidity as a fraction, 0..1. [1]
    pressure : float or ndarray
        Static pressure. [Pa]
    co2_fraction : float or ndarray, optional
        CO2 mole fraction of the dry air, default 400 ppm. [1]

    Returns
    -------
    float or ndarray
        Density of the moist air. [kg/m^3]

    References
    ----------
    1. Picard et al. (2008), Metrologia 45, 149, eq. (1) with Z = 1 (ideal gas).
    2. Giacomo (1982), for the enhancement factor and saturation vapour pressure.
    """
    t = np.asarray(temperature, dtype=float)
    p = np.asarray(pressure, dtype=float)
    xw = water_mole_fraction(temperature, relative_humidity, pressure)
    molar_mass = dry_air_molar_mass(co2_fraction) * (1.0 - xw) + MOLAR_MASS_WATER * xw
    rho = p * molar_mass / (MOLAR_GAS_CONSTANT * t)
    return rho if np.ndim(rho) else float(rho)


# ISO 9613-1:1993 reference atmosphere.
_ISO_T0 = 293.15  # reference temperature [K]
_ISO_T01 = 273.16  # triple-point isotherm [K]
_ISO_PR = 101.325e3  # reference pressure [Pa]


def absorption(frequency, temperature, relative_humidity, pressure):
    """Pure-tone atmospheric absorption coefficient, ISO 9613-1:1993.

    The standard states its accuracy (+-10 %) for 50 Hz - 10 kHz at ordinary conditions;
    the same relaxation formulae are used here at ultrasonic frequencies, where they are an
    extrapolation of the standard's stated range.

    Parameters
    ----------
    frequency : float or ndarray
        Sound frequency. [Hz]
    temperature : float or ndarray
        Air temperature. [K]
    relative_humidity : float or ndarray
        Relative humidity as a fraction, 0..1 (the standard's h_r in percent / 100). [1]
    pressure : float or ndarray
        Static pressure. [Pa]

    Returns
    -------
    float or ndarray
        Absorption coefficient alpha. [dB/m]

    References
    ----------
    1. ISO 9613-1:1993, eq. (5) for alpha, eqs. (3)-(4) for the oxygen and nitrogen
       relaxation frequencies, Annex B eqs. (B.1)-(B.3) for the molar concentration of
       water vapour.
    """
    f = np.asarray(frequency, dtype=float)
    t = np.asarray(temperature, dtype=float)
    pa_pr = np.asarray(pressure, dtype=float) / _ISO_PR
    hr_percent = 100.0 * np.asarray(relative_humidity, dtype=float)
    psat_pr = 10.0 ** (-6.8346 * (_ISO_T01 / t) ** 1.261 + 4.6151)
    h = hr_percent * psat_pr / pa_pr  # molar concentration of water vapour [%]
    t_ratio = t / _ISO_T0
    fr_o = pa_pr * (24.0 + 4.04e4 * h * (0.02 + h) / (0.391 + h))
    fr_n = pa_pr * t_ratio**-0.5 * (
        9.0 + 280.0 * h * np.exp(-4.170 * (t_ratio ** (-1.0 / 3.0) - 1.0))
    )
    alpha = 8.686 * f**2 * (
        1.84e-11 / pa_pr * t_ratio**0.5
        + t_ratio**-2.5 * (
            0.01275 * np.exp(-2239.1 / t) / (fr_o + f**2 / fr_o)
            + 0.1068 * np.exp(-3352.0 / t) / (fr_n + f**2 / fr_n)
        )
    )
    return alpha if np.ndim(alpha) else float(alpha)
