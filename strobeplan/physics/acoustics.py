"""Sound pressure level at the view from a transducer's datasheet rating.

A datasheet rates an ultrasonic transducer by its SPL at a reference distance r0 (often
30 cm) for a reference drive voltage, at resonance. The SPL at the view, at distance r,
follows from four independent corrections in dB:

    SPL(r) = SPL(r0) + 20 log10(V / V_ref) - 20 log10(r / r0) - alpha (r - r0) - L_detune

(drive amplitude, spherical spreading in the far field, ISO 9613-1 absorption over the
extra path, and the loss from driving the transducer off its resonance). SPL is an RMS
level re 20 uPa.

Every function is vectorised over numpy arrays.

References
----------
1. L. E. Kinsler, A. R. Frey, A. B. Coppens, J. V. Sanders, *Fundamentals of Acoustics*,
   4th ed., Wiley (2000): spherical spreading, the on-axis field of a baffled piston.
2. ISO 9613-1:1993, eq. (5) (absorption coefficient) and clause 3 (attenuation alpha s).
3. ISO 1683:2015, Acoustics - Preferred reference values for acoustical and vibratory
   levels: p0 = 20 uPa for sound in air.
4. K. S. Van Dyke, "The piezo-electric resonator and its equivalent network",
   Proc. IRE 16(6), 742-764 (1928) (motional branch).
"""

from __future__ import annotations

import numpy as np

REFERENCE_PRESSURE = 20e-6  # [Pa], ISO 1683 reference sound pressure in air


def _arrays(*args):
    return np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])


def _out(x):
    return x if np.ndim(x) else x.item()


def voltage_gain_db(drive_voltage, reference_voltage):
    """Level change from driving at `drive_voltage` instead of the datasheet's voltage.

    Parameters
    ----------
    drive_voltage : float or ndarray
        Drive amplitude at the transducer (same measure, RMS or peak, as the reference). [V]
    reference_voltage : float or ndarray
        Drive amplitude of the datasheet rating. [V]

    Returns
    -------
    float or ndarray
        20 log10(V / V_ref): a linear transducer's pressure is proportional to its drive. [dB]

    References
    ----------
    1. Kinsler et al. (2000) (level of a pressure ratio).
    """
    v, v_ref = _arrays(drive_voltage, reference_voltage)
    return _out(20.0 * np.log10(v / v_ref))


def spreading_loss_db(distance, reference_distance):
    """Spherical-spreading loss between two far-field distances on the axis.

    Parameters
    ----------
    distance : float or ndarray
        Distance from the emitter to the view. [m]
    reference_distance : float or ndarray
        Distance of the datasheet rating. [m]

    Returns
    -------
    float or ndarray
        20 log10(r / r0) (negative when r < r0). [dB]

    References
    ----------
    1. Kinsler et al. (2000): far-field pressure of a spherical wave falls as 1/r.
    """
    r, r0 = _arrays(distance, reference_distance)
    return _out(20.0 * np.log10(r / r0))


def spl_at_distance(spl_reference, reference_distance, distance, absorption_db_m=0.0):
    """Far-field SPL at `distance` from the SPL at `reference_distance`.

    Parameters
    ----------
    spl_reference : float or ndarray
        SPL at the reference distance. [dB re 20 uPa]
    reference_distance : float or ndarray
        Reference distance. [m]
    distance : float or ndarray
        Distance of interest. [m]
    absorption_db_m : float or ndarray, optional
        Atmospheric absorption coefficient at the frequency. [dB/m]

    Returns
    -------
    float or ndarray
        SPL(r0) - 20 log10(r / r0) - alpha (r - r0). [dB re 20 uPa]

    References
    ----------
    1. Kinsler et al. (2000) (spherical spreading).
    2. ISO 9613-1:1993, clause 3: attenuation alpha s over the path s.
    """
    spl, r0, r, alpha = _arrays(spl_reference, reference_distance, distance, absorption_db_m)
    return _out(spl - 20.0 * np.log10(r / r0) - alpha * (r - r0))


def detuning_loss_db(motional_magnitude):
    """Level lost by driving the transducer away from its series resonance.

    Under voltage drive the radiated pressure follows the motional (velocity) current of
    the Butterworth-Van Dyke model; pass its magnitude normalised to 1 at resonance.

    Parameters
    ----------
    motional_magnitude : float or ndarray
        |I_m(f)| / |I_m(f_s)|, 0..1 (e.g. abs of drive.motional_response). [1]

    Returns
    -------
    float or ndarray
        -20 log10(|H|) >= 0 for |H| <= 1. [dB]

    References
    ----------
    1. Van Dyke (1928) (motional branch R1, L1, C1 of the equivalent network).
    """
    h = np.abs(np.asarray(motional_magnitude, dtype=float))
    return _out(-20.0 * np.log10(h) + 0.0)  # + 0.0: no "-0 dB" at resonance


def spl_at_view(
    spl_reference,
    reference_distance,
    reference_voltage,
    drive_voltage,
    distance,
    absorption_db_m=0.0,
    motional_magnitude=1.0,
):
    """SPL at the view from the datasheet rating, drive level, path and detuning.

    Parameters
    ----------
    spl_reference : float or ndarray
        Datasheet SPL at the reference distance and voltage, at resonance. [dB re 20 uPa]
    reference_distance : float or ndarray
        Datasheet reference distance. [m]
    reference_voltage : float or ndarray
        Datasheet reference drive voltage. [V]
    drive_voltage : float or ndarray
        Actual drive voltage, measured the same way as the reference. [V]
    distance : float or ndarray
        Emitter-to-view distance. [m]
    absorption_db_m : float or ndarray, optional
        Atmospheric absorption at the drive frequency. [dB/m]
    motional_magnitude : float or ndarray, optional
        Normalised motional response at the realised drive frequency. [1]

    Returns
    -------
    float or ndarray
        SPL at the view. [dB re 20 uPa]

    References
    ----------
    1. Kinsler et al. (2000); ISO 9613-1:1993; Van Dyke (1928).
    """
    return _out(
        np.asarray(spl_at_distance(spl_reference, reference_distance, distance, absorption_db_m))
        + np.asarray(voltage_gain_db(drive_voltage, reference_voltage))
        - np.asarray(detuning_loss_db(motional_magnitude))
    )


def pressure_amplitude(spl_db):
    """Peak acoustic pressure of a sinusoid from its (RMS) SPL.

    Parameters
    ----------
    spl_db : float or ndarray
        Sound pressure level. [dB re 20 uPa]

    Returns
    -------
    float or ndarray
        sqrt(2) * 20 uPa * 10^(SPL / 20). [Pa]

    References
    ----------
    1. ISO 1683:2015 (p0 = 20 uPa); the level is of the RMS pressure, and a sinusoid's
       peak is sqrt(2) times its RMS.
    """
    spl = np.asarray(spl_db, dtype=float)
    return _out(np.sqrt(2.0) * REFERENCE_PRESSURE * 10.0 ** (spl / 20.0))


def spl_from_pressure_amplitude(pressure):
    """SPL of a sinusoid of the given peak pressure (inverse of `pressure_amplitude`).

    Parameters
    ----------
    pressure : float or ndarray
        Peak acoustic pressure. [Pa]

    Returns
    -------
    float or ndarray
        20 log10(p / (sqrt(2) 20 uPa)). [dB re 20 uPa]

    References
    ----------
    1. ISO 1683:2015.
    """
    p = np.asarray(pressure, dtype=float)
    return _out(20.0 * np.log10(p / (np.sqrt(2.0) * REFERENCE_PRESSURE)))


def near_field_distance(radius, wavelength):
    """Near-field length of a circular piston, N = a^2 / lambda.

    On the axis of a baffled piston the pressure has its last maximum at
    a^2 / lambda - lambda / 4; beyond it the field falls off like a spherical wave. For
    a >> lambda the last maximum is at N. For a small transducer (a < lambda / 2) N is
    below lambda / 4 and the whole path is far field.

    Parameters
    ----------
    radius : float or ndarray
        Radius of the radiating face. [m]
    wavelength : float or ndarray
        Acoustic wavelength. [m]

    Returns
    -------
    float or ndarray
        radius^2 / wavelength. [m]

    References
    ----------
    1. Kinsler et al. (2000), the baffled circular piston: on-axis pressure
       |p(z)| = 2 rho c U |sin(k/2 (sqrt(z^2 + a^2) - z))|.
    """
    a, lam = _arrays(radius, wavelength)
    return _out(a**2 / lam)
