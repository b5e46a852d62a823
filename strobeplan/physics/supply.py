"""Boost converter and storage-capacitor budget, and the stuck-on gate steady state.

This module extends the layout of design section 2 (which lists led, thermal and
switching for the power stage) with the supply side: what the boost must deliver on
average, how fast it refills the storage capacitor, how the capacitor sags across a
burst of flashes, and what flows when the gate is stuck on.

Model of the boost: an ideal source that holds its set voltage until the load asks for
more than its current limit, then delivers exactly the current limit (constant-current
fold-back). Switching ripple and control-loop dynamics are not modelled.

References
----------
1. R. W. Erickson, D. Maksimovic, *Fundamentals of Power Electronics*, 3rd ed., Springer
   (2020), ch. 2 (steady-state converter analysis: charge and energy balance).
   doi:10.1007/978-3-030-43881-4
2. Capacitor charge balance ``C dV = I dt`` and stored energy ``C V^2 / 2``.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from strobeplan.physics.led import current_at_voltage, forward_voltage, pulse_operating_point


def _f(x):
    return np.asarray(x, dtype=float)


def average_power(pulse_energy, rate):
    """Average power, energy per flash times flash rate.

    Parameters
    ----------
    pulse_energy : float or ndarray
        Energy drawn per flash. [J]
    rate : float or ndarray
        Average flash rate. [Hz]

    Returns
    -------
    float or ndarray
        Average power. [W]

    References
    ----------
    1. Erickson & Maksimovic (2020), ch. 2: energy balance over a period.
    """
    return _f(pulse_energy) * rate


def average_current(charge, rate):
    """Average current, charge per flash times flash rate.

    Parameters
    ----------
    charge : float or ndarray
        Charge drawn per flash. [C]
    rate : float or ndarray
        Average flash rate. [Hz]

    Returns
    -------
    float or ndarray
        Average current. [A]

    References
    ----------
    1. Charge balance over a period.
    """
    return _f(charge) * rate


def stored_energy(capacitance, voltage):
    """Energy stored in a capacitor, ``C V^2 / 2``.

    Parameters
    ----------
    capacitance : float or ndarray
        Capacitance. [F]
    voltage : float or ndarray
        Voltage. [V]

    Returns
    -------
    float or ndarray
        Stored energy. [J]

    References
    ----------
    1. Capacitor energy, ``W = C V^2/2``.
    """
    return 0.5 * _f(capacitance) * _f(voltage) ** 2


def recharge_time(capacitance, voltage_drop, current_limit):
    """Time for the boost to restore a capacitor voltage drop at its current limit.

    Parameters
    ----------
    capacitance : float or ndarray
        Storage capacitance. [F]
    voltage_drop : float or ndarray
        Voltage to restore. [V]
    current_limit : float or ndarray
        Boost current limit. [A]

    Returns
    -------
    float or ndarray
        ``C dV / I``; inf when the limit is zero. [s]

    References
    ----------
    1. Charge balance ``C dV = I dt``.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(_f(voltage_drop) > 0, _f(capacitance) * voltage_drop / current_limit,
                        0.0)


class BurstDroop(NamedTuple):
    """Capacitor sag across a burst [V]: before_last (below the set point when the last
    flash starts) and at_end (at the end of the last flash)."""

    before_last: np.ndarray
    at_end: np.ndarray


def burst_droop(charge, capacitance, recharge_current, width, spacing, n_pulses):
    """Capacitor sag across a burst, the boost recharging at its limit between flashes.

    Each flash draws ``charge`` of which the boost supplies ``Ib*tp`` during the flash;
    between flashes (``spacing - width``) the boost returns ``Ib*(s - tp)`` but never above
    the set point. The net loss per flash period is ``max(Q - Ib*s, 0)/C``, so before the
    last of ``n`` flashes the sag is ``(n - 1)`` times that. The charge per flash is held
    at its full-voltage value: a sagging capacitor drives less current, so this
    over-estimates the sag (conservative).

    Parameters
    ----------
    charge : float or ndarray
        Charge through the LED per flash at full voltage. [C]
    capacitance : float or ndarray
        Storage capacitance. [F]
    recharge_current : float or ndarray
        Boost current limit. [A]
    width : float or ndarray
        Flash width. [s]
    spacing : float or ndarray
        Start-to-start spacing of the flashes in a burst. [s]
    n_pulses : int or ndarray
        Flashes per burst. [1]

    Returns
    -------
    BurstDroop
        Sag before the last flash and at the end of the burst. [V]

    References
    ----------
    1. Charge balance ``C dV = (Ib - I) dt`` per flash period.
    """
    q, c, ib = _f(charge), _f(capacitance), _f(recharge_current)
    per_flash = np.maximum(q - ib * spacing, 0.0) / c
    single = np.maximum(q - ib * _f(width), 0.0) / c
    before = (np.maximum(_f(n_pulses), 1.0) - 1.0) * per_flash
    return BurstDroop(before, before + single)


class BurstSag(NamedTuple):
    """Flash-by-flash burst: before_last [V] and at_end [V] (capacitor sag below the set
    point), first_current and last_current [A] (peak current of the first and last flash)."""

    before_last: np.ndarray
    at_end: np.ndarray
    first_current: np.ndarray
    last_current: np.ndarray


def burst_sag(supply_voltage, capacitance, esr, series_resistor, on_resistance,
              recharge_current, width, spacing, n_pulses, n_vt, saturation_current,
              led_series_resistance):
    """Capacitor sag across a burst, flash by flash.

    Each flash is the exact operating point (:func:`strobeplan.physics.led.
    pulse_operating_point`) from the voltage the previous one left; between flashes the
    boost recharges at its limit for ``spacing - width``, never above the set point. The
    loop runs over the flash index (up to the largest ``n_pulses``), each step vectorised
    over the candidates.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Boost set voltage. [V]
    capacitance : float or ndarray
        Storage capacitance. [F]
    esr : float or ndarray
        Capacitor ESR. [ohm]
    series_resistor : float or ndarray
        Series resistor. [ohm]
    on_resistance : float or ndarray
        Switch on-resistance. [ohm]
    recharge_current : float or ndarray
        Boost current limit. [A]
    width : float or ndarray
        Flash width. [s]
    spacing : float or ndarray
        Start-to-start spacing of the flashes. [s]
    n_pulses : int or ndarray
        Flashes per burst (>= 1). [1]
    n_vt : float or ndarray
        LED ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        LED saturation current. [A]
    led_series_resistance : float or ndarray
        LED series resistance. [ohm]

    Returns
    -------
    BurstSag
        Sag before the last flash and at the end of the burst [V]; first and last peak
        current [A].

    References
    ----------
    1. Charge balance ``C dV = (Ib - I) dt``, flash by flash.
    """
    vs, c, esr_, rser, ron, ib, tp, s, n, a, i_s, rs = (x.ravel() for x in np.broadcast_arrays(
        *[np.asarray(x, dtype=float) for x in (
            supply_voltage, capacitance, esr, series_resistor, on_resistance,
            recharge_current, width, spacing, n_pulses, n_vt, saturation_current,
            led_series_resistance)]))
    shape = np.broadcast_shapes(*(np.shape(x) for x in (
        supply_voltage, capacitance, esr, series_resistor, on_resistance, recharge_current,
        width, spacing, n_pulses, n_vt, saturation_current, led_series_resistance)))
    n = np.maximum(np.rint(n), 1.0)
    v_before_last = vs.copy()
    v_end = vs.copy()
    first = np.empty_like(vs)
    last = np.empty_like(vs)
    # Only the candidates whose burst still changes are stepped: once a flash starts where
    # the previous one did, every later flash repeats it exactly.
    act = np.arange(vs.size)
    v = vs.copy()
    k = 0
    while act.size:
        op = pulse_operating_point(v, c[act], esr_[act], rser[act], ron[act], ib[act], tp[act],
                                   a[act], i_s[act], rs[act])
        peak = np.asarray(op.peak_current, dtype=float)
        end = np.asarray(op.end_voltage, dtype=float)
        if k == 0:
            first[act] = peak
        last[act] = peak
        v_before_last[act] = v
        v_end[act] = end
        v_next = np.minimum(vs[act], end + ib[act] * (s[act] - tp[act]) / c[act])
        more = (k + 1 < n[act]) & (v_next != v)
        act, v = act[more], v_next[more]
        k += 1
    out = BurstSag(*((x).reshape(shape) for x in (vs - v_before_last, vs - v_end, first,
                                                   last)))
    if out.at_end.ndim == 0:
        return BurstSag(*(float(x) for x in out))
    return out


def brightness_change(first_current, last_current):
    """Flash-to-flash brightness change across a burst, taking light proportional to
    current (efficiency droop neglected).

    Parameters
    ----------
    first_current : float or ndarray
        Peak current of the first flash. [A]
    last_current : float or ndarray
        Peak current of the last flash. [A]

    Returns
    -------
    float or ndarray
        Relative change ``last/first - 1`` (negative: dimmer). [1]

    References
    ----------
    1. Schubert, *Light-Emitting Diodes* (2006), ch. 5: light output roughly proportional
       to current below the efficiency-droop region (from memory).
    """
    return _f(last_current) / _f(first_current) - 1.0


class StuckOn(NamedTuple):
    """Steady state with the gate held on: current [A], led_voltage [V], led_power [W]
    (electrical), resistor_power [W] (series resistor), switch_power [W], boost_limited
    (True when the boost's current limit, not the string, sets the current)."""

    current: np.ndarray
    led_voltage: np.ndarray
    led_power: np.ndarray
    resistor_power: np.ndarray
    switch_power: np.ndarray
    boost_limited: np.ndarray


def stuck_on_state(supply_voltage, current_limit, series_resistor, on_resistance, n_vt,
                   saturation_current, led_series_resistance):
    """DC state once the capacitor has emptied with the gate stuck on.

    The boost delivers the lower of its current limit and what its set voltage drives
    through the series resistor, the LED and the on-resistance (the capacitor's ESR
    carries no DC current).

    Parameters
    ----------
    supply_voltage : float or ndarray
        Boost set voltage. [V]
    current_limit : float or ndarray
        Boost current limit. [A]
    series_resistor : float or ndarray
        Series resistor. [ohm]
    on_resistance : float or ndarray
        Switch on-resistance. [ohm]
    n_vt : float or ndarray
        LED ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        LED saturation current. [A]
    led_series_resistance : float or ndarray
        LED series resistance. [ohm]

    Returns
    -------
    StuckOn
        Current [A], LED voltage [V], LED power [W], resistor power [W], switch power [W],
        boost_limited.

    References
    ----------
    1. Erickson & Maksimovic (2020): current-limited source into a resistive-diode load.
    """
    r_ext = _f(series_resistor) + on_resistance
    i_string = current_at_voltage(supply_voltage, n_vt, saturation_current,
                                  r_ext + led_series_resistance)
    limit = _f(current_limit)
    i = np.minimum(i_string, limit)
    v_led = forward_voltage(i, n_vt, saturation_current, led_series_resistance)
    return StuckOn(i, v_led, i * v_led, i**2 * series_resistor, i**2 * _f(on_resistance),
                   np.asarray(limit < i_string))
