"""Photobiological safety of the source image: IEC 62471 retinal blue-light and thermal limits.

While aligning a schlieren system people look into the light at the cutoff, where the
mirror appears filled with the source's radiance (radiance is conserved, less the mirrors'
losses). The standard weights the spectral radiance by B(lambda) (blue-light, photochemical)
and R(lambda) (retinal thermal) and limits:

* blue light, t <= 1e4 s: L_B t <= 1e6 J m^-2 sr^-1 (time to the limit 1e6 / L_B); for
  longer times L_B <= 100 W m^-2 sr^-1 (then no limit is reached);
* retinal thermal, 10 us <= t <= 10 s: L_R <= 50000 / (alpha t^0.25) W m^-2 sr^-1, alpha the
  source's angular subtense in rad, taken within 0.0017-0.1 rad; beyond 10 s the 10 s value
  holds, so a source under it never reaches the limit.

Risk groups (IEC 62471 sec. 6): exempt, 1, 2, 3 by the time to reach the limit: blue light
> 1e4 s, > 100 s, > 0.25 s; retinal thermal > 10 s, > 10 s, > 0.25 s. A caution, not a
certification: the standard's measurement conditions (field of view, averaging apertures)
are not reproduced.

The LED spectrum is modelled, not measured: a colour LED as a Gaussian of 20 nm FWHM at its
peak wavelength, a phosphor-white LED as a 450 nm blue line (20 nm FWHM, a quarter of the
power) plus a broad phosphor band at 560 nm (120 nm FWHM) (both common practice).

Every function broadcasts over numpy arrays (the spectral grid is a trailing axis).

References
----------
1. IEC 62471:2006 / CIE S 009:2002, *Photobiological safety of lamps and lamp systems*,
   Table 4.2 (B(lambda), R(lambda)), sec. 4.3.3-4.3.4 (exposure limits) and sec. 6.1
   (risk groups). B(lambda) as in Table 4.2, confirmed value by value against the copy
   of the table in the luxpy package (1.12, blue_light_hazard_IEC62471_IECTR62778);
   R(lambda) from memory of the same table (not confirmed against a second copy); the
   blue-light limit 1e6 J m^-2 sr^-1 for t <= 1e4 s confirmed in the CIE lighting
   toolbox's notes.
2. E. F. Schubert, *Light-Emitting Diodes*, 2nd ed. (2006), ch. 12 and 21 (LED linewidths,
   phosphor-converted white spectra).
"""

from __future__ import annotations

import numpy as np

from .arrays import FWHM_PER_SIGMA

# IEC 62471:2006 Table 4.2 at 5 nm, 380-495 nm: B(lambda); R(lambda) = 10 B(lambda) there.
_NM = np.arange(380.0, 500.0, 5.0)
_B = np.array([0.01, 0.013, 0.025, 0.05, 0.10, 0.20, 0.40, 0.80, 0.90, 0.95, 0.98, 1.0,
               1.0, 0.97, 0.94, 0.90, 0.80, 0.70, 0.62, 0.55, 0.45, 0.40, 0.22, 0.16])

BLUE_DOSE_LIMIT = 1e6  # [J m^-2 sr^-1], t <= 1e4 s
BLUE_RADIANCE_LIMIT = 100.0  # [W m^-2 sr^-1], t > 1e4 s
THERMAL_CONSTANT = 50000.0  # [W m^-2 sr^-1 rad s^0.25]
ALPHA_MIN, ALPHA_MAX = 0.0017, 0.1  # [rad]
HAZARD_TIME = 0.25  # [s], the aversion response; risk group 2 / 3 boundary

GRID = np.arange(380e-9, 1000e-9 + 0.5e-9, 1e-9)  # spectral grid [m]


def _a(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


def blue_light_weight(wavelength):
    """Blue-light hazard function B(lambda) of IEC 62471 Table 4.2. [1]

    Parameters
    ----------
    wavelength : float or ndarray
        Wavelength. [m]

    References
    ----------
    1. IEC 62471:2006, Table 4.2: tabulated 380-495 nm, 10^((450 - lambda) / 50) for
       500-600 nm, 0.001 for 600-700 nm; 0.01 for 300-380 nm; 0 beyond 700 nm.
    """
    nm = _a(wavelength) * 1e9
    table = np.interp(nm, _NM, _B)
    out = np.where(nm < 380, np.where(nm >= 300, 0.01, 0.0), table)
    out = np.where(nm >= 495, np.where(nm <= 500, np.interp(nm, [495, 500], [0.16, 0.1]),
                                       out), out)
    out = np.where((nm > 500) & (nm <= 600), 10.0 ** ((450.0 - nm) / 50.0), out)
    out = np.where((nm > 600) & (nm <= 700), 0.001, out)
    return _out(np.where(nm > 700, 0.0, out))


def thermal_weight(wavelength):
    """Retinal thermal hazard function R(lambda) of IEC 62471 Table 4.2. [1]

    Parameters
    ----------
    wavelength : float or ndarray
        Wavelength. [m]

    References
    ----------
    1. IEC 62471:2006, Table 4.2: 10 B(lambda) for 380-495 nm, 1 for 500-700 nm,
       10^((700 - lambda) / 500) for 700-1050 nm, 0.2 for 1050-1150 nm,
       0.2 x 10^(0.02 (1150 - lambda)) for 1150-1200 nm, 0.02 for 1200-1400 nm.
    """
    nm = _a(wavelength) * 1e9
    out = np.where(nm < 380, 0.0, 10.0 * np.interp(nm, _NM, _B))
    out = np.where((nm >= 495) & (nm < 500), np.interp(nm, [495, 500], [1.6, 1.0]), out)
    out = np.where((nm >= 500) & (nm <= 700), 1.0, out)
    out = np.where((nm > 700) & (nm <= 1050), 10.0 ** ((700.0 - nm) / 500.0), out)
    out = np.where((nm > 1050) & (nm <= 1150), 0.2, out)
    out = np.where((nm > 1150) & (nm <= 1200), 0.2 * 10.0 ** (0.02 * (1150.0 - nm)), out)
    out = np.where((nm > 1200) & (nm <= 1400), 0.02, out)
    return _out(np.where(nm > 1400, 0.0, out))


def _gauss(grid, centre, fwhm):
    s = fwhm / FWHM_PER_SIGMA
    return np.exp(-0.5 * ((grid - centre) / s) ** 2)


def spectrum(peak, white, grid=GRID):
    """Relative spectral power on ``grid`` (trailing axis), normalised to sum 1. [1]

    Parameters
    ----------
    peak : float or ndarray
        Peak wavelength of a colour LED (ignored for white). [m]
    white : bool or ndarray
        True for the generic phosphor-white spectrum. [1]
    grid : ndarray
        Wavelength grid. [m]

    References
    ----------
    1. Schubert (2006), ch. 12 and 21 (common practice shapes).
    """
    p = _a(peak)[..., None]
    w = _a(white).astype(bool)[..., None]
    colour = _gauss(grid, p, 20e-9)
    blue = _gauss(grid, 450e-9, 20e-9)
    phosphor = _gauss(grid, 560e-9, 120e-9)
    wht = 0.25 * blue / blue.sum() + 0.75 * phosphor / phosphor.sum()
    s = np.where(w, wht, colour / np.maximum(colour.sum(axis=-1, keepdims=True), 1e-300))
    return s / s.sum(axis=-1, keepdims=True)


def weighted_fraction(peak, white, weight):
    """Fraction of the radiance that counts after a hazard weighting, sum S W / sum S. [1]

    Parameters
    ----------
    peak : float or ndarray
        Peak wavelength (colour LEDs). [m]
    white : bool or ndarray
        Phosphor-white spectrum. [1]
    weight : callable
        :func:`blue_light_weight` or :func:`thermal_weight`.

    References
    ----------
    1. IEC 62471:2006, sec. 4.3.3 (L_B = sum L_lambda B(lambda) d lambda).
    """
    s = spectrum(peak, white)
    return _out((s * _a(weight(GRID))).sum(axis=-1))


def photon_wavelength(peak, white):
    """Photon-weighted mean wavelength, sum S lambda / sum S (photons per joule x h c). [m]

    Parameters
    ----------
    peak : float or ndarray
        Peak wavelength. [m]
    white : bool or ndarray
        Phosphor-white spectrum. [1]

    References
    ----------
    1. Schubert (2006), ch. 16 (photon energy h c / lambda).
    """
    return _out((spectrum(peak, white) * GRID).sum(axis=-1))


def blue_time_to_limit(blue_radiance):
    """Time until the blue-light dose limit, 1e6 / L_B (inf when L_B <= 100). [s]

    Parameters
    ----------
    blue_radiance : float or ndarray
        B-weighted radiance L_B, time-averaged. [W m^-2 sr^-1]

    References
    ----------
    1. IEC 62471:2006, sec. 4.3.3, eq. 4.5a and 4.5b.
    """
    lb = _a(blue_radiance)
    safe = np.where(lb > BLUE_RADIANCE_LIMIT, lb, 1.0)
    return _out(np.where(lb > BLUE_RADIANCE_LIMIT, BLUE_DOSE_LIMIT / safe, np.inf))


def thermal_time_to_limit(thermal_radiance, alpha):
    """Time until the retinal thermal limit, (50000 / (alpha L_R))^4 up to 10 s, else inf. [s]

    Parameters
    ----------
    thermal_radiance : float or ndarray
        R-weighted radiance L_R. [W m^-2 sr^-1]
    alpha : float or ndarray
        Angular subtense of the source, clipped to 0.0017-0.1 rad. [rad]

    References
    ----------
    1. IEC 62471:2006, sec. 4.3.4, eq. 4.6.
    """
    lr = _a(thermal_radiance)
    al = np.clip(_a(alpha), ALPHA_MIN, ALPHA_MAX)
    safe = np.where(lr > 0, lr, 1.0)
    t = (THERMAL_CONSTANT / (al * safe)) ** 4
    return _out(np.where((lr > 0) & (t <= 10.0), t, np.inf))


def radiances_reaching_limits(time, alpha):
    """The B- and R-weighted radiances that reach the blue-light dose limit and the retinal
    thermal limit in ``time``: the inverses of :func:`blue_time_to_limit` (``1e6 / t``) and
    :func:`thermal_time_to_limit` (``50000 / (alpha t^(1/4))``, alpha clipped to
    0.0017-0.1 rad). A lower radiance takes longer.

    Parameters
    ----------
    time : float or ndarray
        Exposure time (up to 10 s for the thermal limit). [s]
    alpha : float or ndarray
        Angular subtense of the source. [rad]

    Returns
    -------
    tuple of float or ndarray
        Blue-light radiance L_B and retinal thermal radiance L_R. [W m^-2 sr^-1]

    References
    ----------
    1. IEC 62471:2006, sec. 4.3.3, eq. 4.5a (blue light) and sec. 4.3.4, eq. 4.6 (retinal
       thermal).
    """
    t = _a(time)
    al = np.clip(_a(alpha), ALPHA_MIN, ALPHA_MAX)
    return _out(BLUE_DOSE_LIMIT / t), _out(THERMAL_CONSTANT / (al * t**0.25))


def risk_group(blue_time, thermal_time):
    """IEC 62471 risk group 0 (exempt) to 3 from the times to the limits. [1]

    Parameters
    ----------
    blue_time : float or ndarray
        Time to the blue-light limit. [s]
    thermal_time : float or ndarray
        Time to the retinal thermal limit. [s]

    References
    ----------
    1. IEC 62471:2006, sec. 6.1, Table 6.1 (exempt > 1e4 s, RG1 > 100 s, RG2 > 0.25 s for
       blue light; > 10 s, > 10 s, > 0.25 s for retinal thermal).
    """
    tb, tt = _a(blue_time), _a(thermal_time)
    blue = np.where(tb > 1e4, 0, np.where(tb > 100.0, 1, np.where(tb > HAZARD_TIME, 2, 3)))
    thermal = np.where(tt > 10.0, 0, np.where(tt > HAZARD_TIME, 2, 3))
    return np.maximum(blue, thermal) if np.ndim(blue) else int(max(blue, thermal))
