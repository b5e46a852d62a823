"""Emitter drive chain: reconstruction filter, amplifier pole, transducer motional branch.

Each response is a complex transfer function of frequency (SI: hertz in, dimensionless
out), vectorised over numpy arrays. The chain's *phase delay* -arg H(j2 pi f)/(2 pi f) is
what a steady sinusoid sees, so that is what the timing core adds up.

References
----------
1. S. Butterworth, "On the theory of filter amplifiers", Wireless Engineer 7, 536-541
   (1930). Pole positions of the normalised Butterworth low-pass.
2. K. S. Van Dyke, "The piezo-electric resonator and its equivalent network",
   Proc. IRE 16(6), 742-764 (1928). doi:10.1109/JRPROC.1928.221464
3. IEEE Std 176-1987, Standard on Piezoelectricity, clause 6 (equivalent circuit).
"""

from __future__ import annotations

import numpy as np


def rc_response(frequency, cutoff):
    """First-order RC low-pass H = 1/(1 + j f/fc).

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    cutoff : float or ndarray
        -3 dB frequency. [Hz]

    Returns
    -------
    complex or ndarray
        Transfer function. [1]

    References
    ----------
    1. Any circuit text; phase -atan(f/fc) (-45 deg at fc).
    """
    x = np.asarray(frequency, dtype=float) / np.asarray(cutoff, dtype=float)
    return 1.0 / (1.0 + 1j * x)


def butterworth_response(frequency, cutoff, order):
    """Butterworth low-pass of the given order, H = prod 1/(s/wc - p_k).

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    cutoff : float
        -3 dB frequency. [Hz]
    order : int
        Filter order, 1..8.

    Returns
    -------
    complex or ndarray
        Transfer function, unity gain at DC. [1]

    References
    ----------
    1. Butterworth (1930): poles p_k = exp(j pi (2k + n - 1) / (2n)), k = 1..n.
    """
    n = int(order)
    if not 1 <= n <= 8:
        raise ValueError("order must be 1..8")
    s = 1j * np.asarray(frequency, dtype=float) / float(cutoff)
    k = np.arange(1, n + 1)
    poles = np.exp(1j * np.pi * (2 * k + n - 1) / (2 * n))
    h = np.ones_like(s, dtype=complex)
    for p in poles:
        h = h * (-p) / (s - p)
    return h


def butterworth_phase(frequency, cutoff, order):
    """Continuous (unwrapped) phase of the Butterworth low-pass, the sum of its poles' phases.

    ``np.angle`` of the product wraps beyond -180 deg (orders 3 and up above fc); the sum
    of the first-order factors' phases does not.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    cutoff : float
        -3 dB frequency. [Hz]
    order : int
        Filter order, 1..8.

    Returns
    -------
    float or ndarray
        Phase, 0 at DC, falling to -order*pi/2. [rad]

    References
    ----------
    1. Butterworth (1930), pole positions as in :func:`butterworth_response`.
    """
    n = int(order)
    s = 1j * np.asarray(frequency, dtype=float) / float(cutoff)
    k = np.arange(1, n + 1)
    poles = np.exp(1j * np.pi * (2 * k + n - 1) / (2 * n))
    return sum(np.angle(-p / (s - p)) for p in poles)


def single_pole_response(frequency, bandwidth):
    """An amplifier modelled as one pole at its -3 dB bandwidth. [1]

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    bandwidth : float or ndarray
        -3 dB bandwidth. [Hz]

    References
    ----------
    1. Same form as :func:`rc_response` (common practice for a wide-band amplifier).
    """
    return rc_response(frequency, bandwidth)


def motional_response(frequency, resonance, quality_factor):
    """Motional-branch current of a Butterworth-Van Dyke transducer, normalised at fs.

    With Z_m = R1 (1 + j Q (f/fs - fs/f)), the motional current (and so the surface
    velocity and the radiated pressure) at constant drive voltage is 1/(1 + j Q (f/fs -
    fs/f)). Near resonance its phase is -atan(2 Q (f - fs)/fs).

    Parameters
    ----------
    frequency : float or ndarray
        Drive frequency. [Hz]
    resonance : float or ndarray
        Series resonance fs = 1/(2 pi sqrt(L1 C1)). [Hz]
    quality_factor : float or ndarray
        Q = (1/R1) sqrt(L1/C1). [1]

    Returns
    -------
    complex or ndarray
        Normalised motional response (1 at fs). [1]

    References
    ----------
    1. Van Dyke (1928); IEEE Std 176-1987.
    """
    f = np.asarray(frequency, dtype=float)
    fs = np.asarray(resonance, dtype=float)
    q = np.asarray(quality_factor, dtype=float)
    return 1.0 / (1.0 + 1j * q * (f / fs - fs / f))


def phase_delay(phase, frequency):
    """Phase delay -phi/(2 pi f) of a phase shift at a frequency.

    Parameters
    ----------
    phase : float or ndarray
        Phase shift (unwrapped), e.g. ``np.angle(H)`` for a first-order section. [rad]
    frequency : float or ndarray
        Frequency. [Hz]

    Returns
    -------
    float or ndarray
        Delay of a steady sinusoid. [s]

    References
    ----------
    1. A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed. (2010),
       section 5.1 (phase and group delay).
    """
    return -np.asarray(phase, dtype=float) / (2.0 * np.pi * np.asarray(frequency, dtype=float))


def attenuation_db(response):
    """-20 log10 |H| (positive when the signal is attenuated). [dB]

    Parameters
    ----------
    response : complex or ndarray
        Transfer function value(s). [1]

    References
    ----------
    1. IEC 60027-3 (logarithmic quantities).
    """
    return -20.0 * np.log10(np.abs(response))


def sample_hold_delay(carrier_frequency):
    """Delay of the drive's fundamental caused by a PWM table updated once per carrier
    period: half a carrier period, 1 / (2 f_c).

    Derivation: table entry n holds the sine at t_n = n T_c (tick 0 at index 0) and sets the
    duty d_n = (1 + m sin(w t_n)) / 2 of carrier period n. Averaged over that period the
    output is d_n, held for T_c: a zero-order hold, H(f) = sinc(f T_c) e^{-j pi f T_c}, whose
    phase delay is T_c / 2 (Oppenheim & Schafer, sec. 4.6). Where the pulse sits in its
    period changes only the terms of order (w T_c)^2: a pulse centred in the period has its
    centre at t_n + T_c/2 exactly; an edge-aligned pulse [t_n, t_n + d_n T_c] has its centre
    at t_n + d_n T_c / 2, and the part of d_n^2 at the fundamental, m sin(w t_n) / 2, again
    gives T_c / 2 (Holmes & Lipo, ch. 3, regular-sampled PWM). At 20 carrier periods per
    cycle it is 9 deg of the wave.

    Parameters
    ----------
    carrier_frequency : float or ndarray
        PWM carrier (table update) rate. [Hz]

    Returns
    -------
    float or ndarray
        Delay of the fundamental behind the table's sine. [s]

    References
    ----------
    1. A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed. (2010),
       sec. 4.6 (zero-order hold).
    2. D. G. Holmes, T. A. Lipo, Pulse Width Modulation for Power Converters, Wiley-IEEE
       (2003), ch. 3 (naturally and regularly sampled PWM).
    """
    out = 0.5 / np.asarray(carrier_frequency, dtype=float)
    return out if np.ndim(out) else float(out)
