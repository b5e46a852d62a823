"""Schlieren visibility of a sound wave: density, refractive index, deflection, contrast.

Chain for a plane sinusoidal wave of peak pressure p' seen across a path L:

    rho' = p' / c^2                      (linear adiabatic acoustics)
    n'   = K rho'                        (Gladstone-Dale; K = (n - 1)/rho of the air at the
                                          light's wavelength: physics.refraction)
    eps  = passes * L * k * n'           (ray deflection, k = 2 pi f / c the wavenumber)
    C    = f2 * eps / a                  (knife-edge contrast: f2 the distance from the
                                          schlieren head to the cut-off, a the unobstructed
                                          height of the source image)

The response is linear until |C| = 1 (the image of the source moves wholly on or off the
knife edge with a half cut-off): beyond that the image saturates.

Every function is vectorised over numpy arrays.

References
----------
1. G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer (2001), ch. 3
   (eq. 3.6: contrast f2 eps / a). doi:10.1007/978-3-642-56640-0
2. J. Crockett, W. Rueckner, "Visualizing sound waves with schlieren optics",
   Am. J. Phys. 86, 870 (2018) (the chain for sound).
3. L. E. Kinsler et al., *Fundamentals of Acoustics*, 4th ed., Wiley (2000)
   (rho' = p' / c^2).
"""

from __future__ import annotations

import numpy as np


def _arrays(*args):
    return np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])


def _out(x):
    return x if np.ndim(x) else x.item()


def density_amplitude(pressure_amplitude, speed):
    """Density amplitude of a linear adiabatic sound wave.

    Parameters
    ----------
    pressure_amplitude : float or ndarray
        Acoustic pressure amplitude. [Pa]
    speed : float or ndarray
        Speed of sound. [m/s]

    Returns
    -------
    float or ndarray
        p' / c^2. [kg/m^3]

    References
    ----------
    1. Kinsler et al. (2000): linearised adiabatic equation of state p' = c^2 rho'.
    """
    p, c = _arrays(pressure_amplitude, speed)
    return _out(p / c**2)


def index_amplitude(density_amplitude, gladstone_dale_constant):
    """Refractive-index amplitude from the density amplitude (Gladstone-Dale).

    Parameters
    ----------
    density_amplitude : float or ndarray
        Density amplitude. [kg/m^3]
    gladstone_dale_constant : float or ndarray
        Gladstone-Dale constant K. [m^3/kg]

    Returns
    -------
    float or ndarray
        n' = K rho'. [1]

    References
    ----------
    1. Settles (2001) (Gladstone-Dale relation n - 1 = K rho).
    """
    rho, k = _arrays(density_amplitude, gladstone_dale_constant)
    return _out(k * rho)


def wavenumber(frequency, speed):
    """Acoustic wavenumber.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    speed : float or ndarray
        Speed of sound. [m/s]

    Returns
    -------
    float or ndarray
        k = 2 pi f / c. [rad/m]

    References
    ----------
    1. Kinsler et al. (2000).
    """
    f, c = _arrays(frequency, speed)
    return _out(2.0 * np.pi * f / c)


def deflection(passes, path, wavenumber, index_amplitude):
    """Peak ray deflection across a plane sound wave.

    Parameters
    ----------
    passes : float or ndarray
        Number of passes of the light through the wave (1, or 2 for double pass). [1]
    path : float or ndarray
        Length of the light path inside the sound field (uniform along it). [m]
    wavenumber : float or ndarray
        Acoustic wavenumber k. [rad/m]
    index_amplitude : float or ndarray
        Refractive-index amplitude n'. [1]

    Returns
    -------
    float or ndarray
        eps = passes L k n' (the peak index gradient is k n'; eps = L dn/dy). [rad]

    References
    ----------
    1. Settles (2001) (eps = (1/n) integral of dn/dy along the path).
    """
    m, length, k, n1 = _arrays(passes, path, wavenumber, index_amplitude)
    return _out(m * length * k * n1)


def knife_edge_contrast(cutoff_distance, deflection, cutoff_opening):
    """Knife-edge schlieren contrast, linear range.

    Parameters
    ----------
    cutoff_distance : float or ndarray
        Distance f2 from the schlieren head (mirror or lens) to the cut-off. [m]
    deflection : float or ndarray
        Ray deflection eps. [rad]
    cutoff_opening : float or ndarray
        Unobstructed height a of the source image at the cut-off. [m]

    Returns
    -------
    float or ndarray
        C = f2 eps / a (not clipped; |C| >= 1 means saturation). [1]

    References
    ----------
    1. Settles (2001), eq. 3.6.
    """
    f2, eps, a = _arrays(cutoff_distance, deflection, cutoff_opening)
    return _out(f2 * eps / a)


def saturated(contrast):
    """Whether the knife-edge response saturates (|C| >= 1).

    Parameters
    ----------
    contrast : float or ndarray
        Linear-range contrast. [1]

    Returns
    -------
    bool or ndarray of bool
        |C| >= 1. [1]

    References
    ----------
    1. Settles (2001), ch. 3 (measuring range of a knife-edge system).
    """
    s = np.abs(np.asarray(contrast, dtype=float)) >= 1.0
    return s if np.ndim(s) else bool(s)


def visible_contrast(contrast, retention):
    """Contrast left in the strobed image: the optics' contrast times the flash's retention.

    The optics' contrast is clipped at 1 (a saturated image keeps full-scale contrast).

    Parameters
    ----------
    contrast : float or ndarray
        Knife-edge contrast. [1]
    retention : float or ndarray
        Temporal contrast retention of the flash. [1]

    Returns
    -------
    float or ndarray
        min(|C|, 1) * retention. [1]

    References
    ----------
    1. Settles (2001), ch. 3; cascaded transfer factors multiply (Boreman, *Modulation
       Transfer Function in Optical and Electro-Optical Systems*, SPIE 2001).
    """
    c, r = _arrays(contrast, retention)
    return _out(np.minimum(np.abs(c), 1.0) * r)


def default_min_contrast(bit_depth):
    """Smallest useful contrast: two grey levels at half scale (common practice).

    An image exposed to half scale has 2^(bits - 1) grey levels; a modulation of two of
    them is taken as the least that can be seen above quantisation and noise. This is a
    rule of thumb (common practice), not a standard.

    Parameters
    ----------
    bit_depth : int or ndarray
        Camera bit depth. [1]

    Returns
    -------
    float or ndarray
        2 / 2^(bits - 1). [1]

    References
    ----------
    1. Common practice (no standard).
    """
    bits = np.asarray(bit_depth, dtype=float)
    return _out(2.0 / 2.0 ** (bits - 1.0))
