"""MOSFET switching of the LED string: gate-charge timing, losses, overshoot, gate drive.

Gate model (piecewise-linear gate-charge curve, the basis of the gate-charge method):
``Vgs`` rises linearly with charge up to the plateau at ``Qgs`` (so ``Ciss ~ Qgs/Vpl``
below the plateau), stays at ``Vpl`` while ``Qgd`` is delivered (the Miller plateau),
then rises again with ``Cabove = (Qg - Qgs - Qgd)/(Vrated - Vpl)`` (``Qg`` taken as
specified at the rated gate voltage). The driver is a voltage step through
``Rdrv + Rg``; with the piecewise-linear curve each segment is an exact RC charge or a
constant-current plateau, so the times below are exact for that model.

Edges of the drain current into an LED (a resistive-like load, no freewheeling clamp):
the current flows from ``Vth`` on, and the drain voltage falls while it rises, so the
current edge spans ``Vth -> Vpl`` plus the Miller plateau (estimate of the 0-100 % edge).
Switching energy uses the resistive/LED-load model ``V*I*t/6`` per edge (voltage and
current ramp linearly in opposite directions), not the clamped-inductive ``V*I*t/2``.

References
----------
1. Vishay Siliconix AN608A, "Power MOSFET Basics: Understanding Gate Charge and Using it
   to Assess Switching Performance" (2016).
2. Fairchild AN-6005, "Synchronous buck MOSFET loss calculations with Excel model"
   (2006): gate-charge switching times and losses.
3. L. Balogh, "Fundamentals of MOSFET and IGBT Gate Driver Circuits", Texas Instruments
   SLUA618 (2017): gate charge, driver current, gate-drive power Qg*V*f.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

PLATEAU_HEADROOM = 1.0  # [V] driver supply should exceed the plateau by this (common practice)


def _f(x):
    return np.asarray(x, dtype=float)


def gate_current_on(drive_voltage, plateau_voltage, output_resistance, gate_resistor):
    """Gate current during the Miller plateau at turn-on.

    Parameters
    ----------
    drive_voltage : float or ndarray
        Gate-driver supply (high output level). [V]
    plateau_voltage : float or ndarray
        Miller plateau voltage. [V]
    output_resistance : float or ndarray
        Driver output resistance. [ohm]
    gate_resistor : float or ndarray
        External plus internal gate resistance. [ohm]

    Returns
    -------
    float or ndarray
        ``(Vdrv - Vpl)/(Rdrv + Rg)``; 0 when the drive does not exceed the plateau. [A]

    References
    ----------
    1. Vishay AN608A (2016), gate-charge method.
    """
    return np.maximum(_f(drive_voltage) - plateau_voltage, 0.0) / (
        _f(output_resistance) + gate_resistor)


def gate_current_off(plateau_voltage, output_resistance, gate_resistor):
    """Gate current during the Miller plateau at turn-off (driver pulls to 0 V).

    Parameters
    ----------
    plateau_voltage : float or ndarray
        Miller plateau voltage. [V]
    output_resistance : float or ndarray
        Driver output resistance. [ohm]
    gate_resistor : float or ndarray
        Gate resistance. [ohm]

    Returns
    -------
    float or ndarray
        ``Vpl/(Rdrv + Rg)``. [A]

    References
    ----------
    1. Vishay AN608A (2016).
    """
    return _f(plateau_voltage) / (_f(output_resistance) + gate_resistor)


def miller_time(gate_drain_charge, gate_current):
    """Duration of the Miller plateau, ``Qgd/Ig``.

    Parameters
    ----------
    gate_drain_charge : float or ndarray
        Gate-drain (Miller) charge. [C]
    gate_current : float or ndarray
        Gate current on the plateau. [A]

    Returns
    -------
    float or ndarray
        Plateau duration (inf when no current). [s]

    References
    ----------
    1. Vishay AN608A (2016).
    """
    with np.errstate(divide="ignore"):
        return _f(gate_drain_charge) / _f(gate_current)


class SwitchingTimes(NamedTuple):
    """Gate-charge timing [s]: turn_on_delay (to Vth), rise_time (drain-current edge at
    turn-on), turn_off_delay (Vdrv down to the plateau), fall_time (edge at turn-off)."""

    turn_on_delay: np.ndarray
    rise_time: np.ndarray
    turn_off_delay: np.ndarray
    fall_time: np.ndarray


def switching_times(drive_voltage, threshold_voltage, plateau_voltage, gate_charge,
                    gate_source_charge, gate_drain_charge, rated_gate_voltage,
                    output_resistance, gate_resistor):
    """Delays and drain-current edges from the piecewise-linear gate-charge curve.

    With ``R = Rdrv + Rg``, ``Ciss = Qgs/Vpl``, ``Cabove = (Qg - Qgs - Qgd)/(Vrated - Vpl)``
    (``Ciss`` if that is not positive):

    - turn-on delay (RC estimate to threshold): ``R Ciss ln(Vdrv/(Vdrv - Vth))``
    - rise: ``R Ciss ln((Vdrv - Vth)/(Vdrv - Vpl)) + Qgd R/(Vdrv - Vpl)``
    - turn-off delay: ``R Cabove ln(Vdrv/Vpl)``
    - fall: ``Qgd R/Vpl + R Ciss ln(Vpl/Vth)``

    A drive at or below the plateau never completes the turn-on (inf); at or below the
    threshold it never starts (inf delay).

    Parameters
    ----------
    drive_voltage : float or ndarray
        Driver supply. [V]
    threshold_voltage : float or ndarray
        Gate threshold voltage. [V]
    plateau_voltage : float or ndarray
        Miller plateau voltage. [V]
    gate_charge : float or ndarray
        Total gate charge at the rated gate voltage. [C]
    gate_source_charge : float or ndarray
        Gate-source charge (to the plateau). [C]
    gate_drain_charge : float or ndarray
        Gate-drain (Miller) charge. [C]
    rated_gate_voltage : float or ndarray
        Gate voltage at which ``gate_charge`` (and the on-resistance) is specified. [V]
    output_resistance : float or ndarray
        Driver output resistance. [ohm]
    gate_resistor : float or ndarray
        Gate resistance. [ohm]

    Returns
    -------
    SwitchingTimes
        turn_on_delay, rise_time, turn_off_delay, fall_time. [s]

    References
    ----------
    1. Vishay AN608A (2016); 2. Fairchild AN-6005 (2006), switching-time equations.
    """
    vd, vth, vpl = _f(drive_voltage), _f(threshold_voltage), _f(plateau_voltage)
    r = _f(output_resistance) + gate_resistor
    ciss = _f(gate_source_charge) / vpl
    above_v = _f(rated_gate_voltage) - vpl
    with np.errstate(divide="ignore", invalid="ignore"):
        c_above = (_f(gate_charge) - gate_source_charge - gate_drain_charge) / above_v
        c_above = np.where((c_above > 0) & (above_v > 0), c_above, ciss)
        on = vd > vpl
        vd_on = np.where(on, vd, vpl + 1.0)
        d_on = np.where(vd > vth, r * ciss * np.log(vd_on / (vd_on - vth)), np.inf)
        rise = r * ciss * np.log((vd_on - vth) / (vd_on - vpl)) + _f(gate_drain_charge) * r / (
            vd_on - vpl)
        rise = np.where(on, rise, np.inf)
        d_off = np.where(on, r * c_above * np.log(vd_on / vpl), np.inf)
        fall = _f(gate_drain_charge) * r / vpl + r * ciss * np.log(vpl / vth)
        fall = np.where(on, fall, np.inf)
    return SwitchingTimes(d_on, rise, d_off, fall)


def edge_energy(voltage, current, edge_time):
    """Energy lost in the switch during one edge into a resistive/LED load, ``V*I*t/6``.

    Parameters
    ----------
    voltage : float or ndarray
        Voltage across the switch when off (supply minus nothing: worst case). [V]
    current : float or ndarray
        Current when fully on. [A]
    edge_time : float or ndarray
        Edge duration. [s]

    Returns
    -------
    float or ndarray
        Energy per edge. [J]

    References
    ----------
    1. Integral of v(t) i(t) with ``v = V(1 - t/te)``, ``i = I t/te``: ``V I te/6``
       (resistive switching; Balogh, SLUA618).
    """
    return _f(voltage) * current * edge_time / 6.0


def gate_drive_power(gate_charge, drive_voltage, frequency):
    """Power the gate driver dissipates, ``Qg*Vdrv*f``.

    Parameters
    ----------
    gate_charge : float or ndarray
        Total gate charge. [C]
    drive_voltage : float or ndarray
        Driver supply. [V]
    frequency : float or ndarray
        Switching (flash) rate. [Hz]

    Returns
    -------
    float or ndarray
        Driver power. [W]

    References
    ----------
    1. Balogh, SLUA618 (2017), gate-drive power.
    """
    return _f(gate_charge) * drive_voltage * frequency


def turn_off_overshoot(voltage, loop_inductance, current, fall_time):
    """Peak drain voltage at turn-off, ``V + L*I/tf`` (linear current fall).

    Parameters
    ----------
    voltage : float or ndarray
        Supply (capacitor) voltage. [V]
    loop_inductance : float or ndarray
        Inductance of the capacitor-LED-switch loop. [H]
    current : float or ndarray
        Current being switched off. [A]
    fall_time : float or ndarray
        Current fall time. [s]

    Returns
    -------
    float or ndarray
        Peak drain-source voltage. [V]

    References
    ----------
    1. Faraday's law v = L di/dt with a linear ramp (Balogh, SLUA618).
    """
    with np.errstate(divide="ignore"):
        return _f(voltage) + _f(loop_inductance) * current / fall_time


def gate_drive_margin(drive_voltage, rated_gate_voltage, plateau_voltage,
                      headroom=PLATEAU_HEADROOM):
    """Margin of the driver supply: the smaller of ``Vdrv - Vrated`` and
    ``Vdrv - (Vpl + headroom)``; negative means the switch may stay in its linear region.

    Parameters
    ----------
    drive_voltage : float or ndarray
        Driver supply. [V]
    rated_gate_voltage : float or ndarray
        Gate voltage at which the on-resistance is specified. [V]
    plateau_voltage : float or ndarray
        Miller plateau voltage. [V]
    headroom : float or ndarray
        Required excess over the plateau (1 V, common practice). [V]

    Returns
    -------
    float or ndarray
        Margin. [V]

    References
    ----------
    1. Vishay AN608A (2016): Rds(on) holds only at the rated Vgs; near the plateau the
       switch is not fully enhanced.
    """
    vd = _f(drive_voltage)
    return np.minimum(vd - rated_gate_voltage, vd - (_f(plateau_voltage) + headroom))
