"""The cutoff's response: light passed as the source image shifts by a deflection.

The source image at the cutoff is a uniform band of height h (across the cutoff's edge),
blurred by diffraction at the mirror's aperture (a Gaussian of standard deviation
``blur``). A deflection eps shifts it by s = f2 eps. The fraction of the image's light that
passes:

* **knife edge** blocking the part below y_k = -h/2 + cut_fraction h (a bright-field cutoff):
  T(s) rises linearly with slope 1/h until the image is wholly cut or wholly open (clipping);
  the contrast T/T(0) - 1 has the slope 1/a, a = (1 - cut_fraction) h (Settles eq. 3.6).
* **rod or wire stop** of width w centred on the image (dark field when w >= h): T(s) is even
  in s, so a sinusoidal deflection brightens both its crests and troughs: the image has no
  first-order response and shows the wave at twice its spatial frequency.

With F(x) = x Phi(x / sigma) + sigma phi(x / sigma) (the integral of the Gaussian CDF),
the fraction of the image past an edge at y0 is [F(h/2 + s - y0) - F(-h/2 + s - y0)] / h.

Every function broadcasts over numpy arrays.

References
----------
1. G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer (2001), sec. 3.2-3.4
   (knife-edge response, measuring range) and sec. 3.5 (dark-field and wire cutoffs).
2. M. Abramowitz, I. A. Stegun, *Handbook of Mathematical Functions*, NBS (1964), 7.1.26
   (rational approximation of erf, |error| <= 1.5e-7).
3. E. Hecht, *Optics*, 5th ed. (2017), sec. 10.2 (Airy disc; its core is close to a Gaussian
   of sigma ~ 0.42 lambda N).
"""

from __future__ import annotations

import numpy as np

_SQRT2 = np.sqrt(2.0)


def _a(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


def erf(x):
    """Error function, Abramowitz & Stegun 7.1.26 (|error| <= 1.5e-7). [1]

    Parameters
    ----------
    x : float or ndarray
        Argument. [1]

    References
    ----------
    1. Abramowitz & Stegun (1964), 7.1.26.
    """
    x = _a(x)
    s = np.sign(x)
    z = np.minimum(np.abs(x), 30.0)
    t = 1.0 / (1.0 + 0.3275911 * z)
    poly = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027
                                                                         + t * 1.061405429))))
    return _out(s * (1.0 - poly * np.exp(-z * z)))


def _integral_cdf(x, sigma):
    """F(x) = int_-inf^x Phi(u / sigma) du; max(x, 0) when sigma = 0."""
    x, sigma = np.broadcast_arrays(_a(x), _a(sigma))
    safe = np.where(sigma > 0, sigma, 1.0)
    with np.errstate(over="ignore", divide="ignore"):
        u = np.clip(x / safe, -40.0, 40.0)
    phi = np.exp(-0.5 * u * u) / np.sqrt(2.0 * np.pi)
    cdf = 0.5 * (1.0 + _a(erf(u / _SQRT2)))
    return np.where(sigma > 0, x * cdf + safe * phi, np.maximum(x, 0.0))


def _past(shift, height, edge, blur):
    """Fraction of the (shifted, blurred) image lying above y = edge."""
    h = _a(height)
    hi = _integral_cdf(h / 2 + _a(shift) - _a(edge), blur)
    lo = _integral_cdf(-h / 2 + _a(shift) - _a(edge), blur)
    return (hi - lo) / h


def knife_transmission(shift, height, cut_fraction, blur=0.0):
    """Fraction of the source image's light a knife edge passes at a given shift. [1]

    Parameters
    ----------
    shift : float or ndarray
        Shift of the source image across the edge (positive: away from the knife). [m]
    height : float or ndarray
        Source image height h. [m]
    cut_fraction : float or ndarray
        Fraction blocked with no shift. [1]
    blur : float or ndarray
        Gaussian sigma of the diffraction blur of the image. [m]

    References
    ----------
    1. Settles (2001), sec. 3.2.
    """
    h = _a(height)
    edge = -h / 2 + _a(cut_fraction) * h
    return _out(np.clip(_past(shift, h, edge, blur), 0.0, 1.0))


def rod_transmission(shift, height, width, blur=0.0):
    """Fraction of the source image's light passing a centred rod or wire stop. [1]

    Parameters
    ----------
    shift : float or ndarray
        Shift of the source image across the rod. [m]
    height : float or ndarray
        Source image height h. [m]
    width : float or ndarray
        Rod or wire diameter w. [m]
    blur : float or ndarray
        Gaussian sigma of the diffraction blur. [m]

    References
    ----------
    1. Settles (2001), sec. 3.5 (dark-field and wire cutoffs).
    """
    w = _a(width)
    inside = _past(shift, height, -w / 2, blur) - _past(shift, height, w / 2, blur)
    return _out(np.clip(1.0 - inside, 0.0, 1.0))


def transmission(shift, height, rod, cut_fraction, width, blur=0.0):
    """Knife or rod transmission chosen by ``rod`` (bool or bool array). [1]

    Parameters
    ----------
    shift, height, cut_fraction, width, blur : float or ndarray
        As in :func:`knife_transmission` and :func:`rod_transmission`. [m] or [1]
    rod : bool or ndarray
        True for a rod or wire stop, False for a knife edge. [1]

    References
    ----------
    1. Settles (2001), sec. 3.2-3.5.
    """
    knife = knife_transmission(shift, height, cut_fraction, blur)
    stop = rod_transmission(shift, height, width, blur)
    return _out(np.where(rod, stop, knife))


def linear_range(height, rod, cut_fraction, width):
    """Largest shift of the source image before the cutoff's response clips. [m]

    Knife: min(a, h - a), a = (1 - cut_fraction) h (wholly cut, or wholly open). Rod:
    (w + h) / 2, the image wholly past the stop.

    Parameters
    ----------
    height, cut_fraction, width : float or ndarray
        As in :func:`transmission`. [m] or [1]
    rod : bool or ndarray
        True for a rod stop. [1]

    References
    ----------
    1. Settles (2001), sec. 3.4 (measuring range).
    """
    h, c, w = _a(height), _a(cut_fraction), _a(width)
    knife = np.minimum((1.0 - c) * h, c * h)
    return _out(np.where(rod, (w + h) / 2.0, knife))


def harmonics(amplitude, height, rod, cut_fraction, width, blur=0.0, samples=64):
    """Mean, fundamental and second harmonic of the transmission under a sinusoidal shift.

    The source image shifts by s(x) = amplitude sin(k x) across the wave; the image is
    T(s(x)). Its Fourier coefficients over one period (``samples`` points) give the mean
    level and the amplitudes at the wave's spatial frequency and at twice it.

    Parameters
    ----------
    amplitude : float or ndarray
        Peak shift of the source image at the cutoff, f2 x deflection. [m]
    height, cut_fraction, width, blur : float or ndarray
        As in :func:`transmission`. [m] or [1]
    rod : bool or ndarray
        True for a rod stop. [1]
    samples : int
        Points per period. [1]

    Returns
    -------
    mean, first, second : float or ndarray
        Mean transmission, amplitude of the fundamental and of the second harmonic. [1]

    References
    ----------
    1. Settles (2001), sec. 3.5 (a dark-field stop doubles the apparent frequency).
    """
    theta = 2.0 * np.pi * np.arange(samples) / samples
    args = np.broadcast_arrays(_a(amplitude), _a(height), _a(rod).astype(bool),
                               _a(cut_fraction), _a(width), _a(blur))
    amp, h, r, c, w, b = (x[..., None] for x in args)
    t = transmission(amp * np.sin(theta), h, r, c, w, b)
    mean = t.mean(axis=-1)
    first = 2.0 * np.abs((t * np.exp(-1j * theta)).mean(axis=-1))
    second = 2.0 * np.abs((t * np.exp(-2j * theta)).mean(axis=-1))
    return _out(mean), _out(first), _out(second)


def diffraction_blur(light_wavelength, focal_length, mirror_diameter):
    """Gaussian sigma of the source image's diffraction blur at the cutoff, 0.42 lambda f/D. [m]

    Parameters
    ----------
    light_wavelength : float or ndarray
        Light wavelength. [m]
    focal_length : float or ndarray
        Focusing distance to the cutoff. [m]
    mirror_diameter : float or ndarray
        Aperture (mirror) diameter. [m]

    References
    ----------
    1. Hecht (2017), sec. 10.2 (Airy pattern of a circular aperture); Gaussian core fit
       sigma ~ 0.42 lambda N (common practice).
    """
    return _out(0.42 * _a(light_wavelength) * _a(focal_length) / _a(mirror_diameter))


def harmonic_amplitudes(amplitude, height, rod, cut_fraction, width, blur=0.0, orders=8,
                        samples=64):
    """Amplitudes of harmonics 1..orders of the transmission under a sinusoidal shift.

    A clipped knife adds odd (and, with an off-centre cut, even) harmonics; a rod stop's
    response is even in the shift, so its harmonics are even. These are what a phase-stepped
    sequence must resolve (strobeplan.physics.demod.min_steps).

    Parameters
    ----------
    amplitude : float or ndarray
        Peak shift of the source image at the cutoff. [m]
    height, cut_fraction, width, blur : float or ndarray
        As in :func:`transmission`. [m] or [1]
    rod : bool or ndarray
        True for a rod stop. [1]
    orders : int
        Highest order returned (below samples / 2). [1]
    samples : int
        Points per period. [1]

    Returns
    -------
    ndarray, shape (..., orders)
        Amplitude of each order (relative to the open image). [1]

    References
    ----------
    1. Settles (2001), sec. 3.4-3.5 (clipping beyond the measuring range; dark field).
    """
    theta = 2.0 * np.pi * np.arange(samples) / samples
    args = np.broadcast_arrays(_a(amplitude), _a(height), _a(rod).astype(bool),
                               _a(cut_fraction), _a(width), _a(blur))
    amp, h, r, c, w, b = (x[..., None] for x in args)
    t = transmission(amp * np.sin(theta), h, r, c, w, b)
    m = np.arange(1, orders + 1)
    basis = np.exp(-1j * np.outer(theta, m))  # (samples, orders)
    return 2.0 * np.abs(t @ basis / samples)
