"""Brightness banding of a camera that collects a continuous train of flashes.

A free-running camera (or a continuous flash train) is not synchronised with the flashes:
each row of a rolling shutter, or each frame of a global one, integrates the light that
falls inside its own exposure window, wherever that window happens to lie against the
train. With rectangular light pulses of length L every P, a window of length X collects

    B(u) = sum_j |[u, u + X] & [jP, jP + L]|        (u: the window's start)

which is periodic in u with period P. Writing X = qP + r (0 <= r < P), the least and the
most light over all offsets are

    B_min = qL + max(0, r - (P - L))
    B_max = qL + min(r, L)

(the window's remainder r either fits in a dark gap of P - L or cannot avoid r - (P - L)
of a pulse; at best it holds one whole pulse, or r of one). dB/du is the difference of two
pulse indicators, so it is +1, 0 or -1 and B rises from B_min to B_max along one
contiguous ramp of length B_max - B_min: rows whose start times span the readout R see at
worst a swing s = min(B_max - B_min, R), between B_min and B_min + s, a relative step of
s / (B_min + s).
A window that is a whole number of flash periods (r = 0) collects the same light at any
offset: no banding.

References
----------
1. R. N. Bracewell, The Fourier Transform and Its Applications, 3rd ed. (2000), ch. 3
   (convolution of two rectangle functions: a trapezoid with ramps of the shorter width).
2. Rolling-shutter row timing (common practice): each row starts readout / (rows - 1)
   after the previous one and integrates for the same exposure time.
"""

from __future__ import annotations

import numpy as np


def window_light_range(window, period, light):
    """Least and most light a window collects from a train of rectangular pulses.

    Parameters
    ----------
    window : float or ndarray
        Length of the exposure window (one row's exposure, or a global frame's). [s]
    period : float or ndarray
        Flash period (start to start). [s]
    light : float or ndarray
        Length of one light pulse, at most ``period``. [s]

    Returns
    -------
    (ndarray, ndarray)
        Least and most light over all window offsets, as seconds of full light. [s]
    """
    x = np.asarray(window, dtype=float)
    p = np.asarray(period, dtype=float)
    L = np.minimum(np.asarray(light, dtype=float), p)  # noqa: N806 - the equation's name
    q = np.floor(x / p + 1e-12)
    r = np.maximum(x - q * p, 0.0)
    lo = q * L + np.maximum(0.0, r - (p - L))
    hi = q * L + np.minimum(r, L)
    return lo, hi


def flashes_per_window(window, period):
    """Fewest and most flash starts inside a window of the given length.

    Parameters
    ----------
    window : float or ndarray
        Exposure window. [s]
    period : float or ndarray
        Flash period. [s]

    Returns
    -------
    (ndarray, ndarray)
        floor(window/period) and ceil(window/period) (equal for a whole multiple). [1]
    """
    ratio = np.asarray(window, dtype=float) / np.asarray(period, dtype=float)
    near = np.round(ratio)
    whole = np.abs(ratio - near) < 1e-9 * np.maximum(1.0, near)
    lo = np.where(whole, near, np.floor(ratio))
    hi = np.where(whole, near, np.ceil(ratio))
    return lo.astype(int), hi.astype(int)


def banding(window, period, light, readout):
    """Worst relative step between the darkest and the brightest row (or frame).

    Parameters
    ----------
    window : float or ndarray
        Exposure of one row (rolling shutter) or of the frame (global shutter). [s]
    period : float or ndarray
        Flash period. [s]
    light : float or ndarray
        Length of one light pulse. [s]
    readout : float or ndarray
        Spread of the rows' start times: the rolling shutter's readout; ``inf`` for
        frame-to-frame flicker (a free-running camera's frames land at every offset). [s]

    Returns
    -------
    ndarray
        (brightest - darkest) / brightest over the rows, worst case over the camera's
        offset against the train; 1 when some row gets no light at all. [1]
    """
    lo, hi = window_light_range(window, period, light)
    swing = np.minimum(hi - lo, np.asarray(readout, dtype=float))
    top = lo + swing
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(top > 0, swing / np.where(top > 0, top, 1.0), 1.0)


def banding_free_exposure(window, period):
    """The exposure nearest ``window`` that is a whole number (>= 1) of flash periods. [s]

    Parameters
    ----------
    window : float or ndarray
        Exposure asked. [s]
    period : float or ndarray
        Flash period. [s]
    """
    p = np.asarray(period, dtype=float)
    return np.maximum(1.0, np.round(np.asarray(window, dtype=float) / p)) * p


def bands_per_frame(readout, period):
    """Bright-dark band pairs across the image of a rolling shutter: readout / period. [1]

    Parameters
    ----------
    readout : float or ndarray
        First to last row start. [s]
    period : float or ndarray
        Flash period (the band pattern repeats every period of row start time). [s]
    """
    return np.asarray(readout, dtype=float) / np.asarray(period, dtype=float)
