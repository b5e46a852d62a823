"""Junction temperature of the LED from a Foster thermal network (junction to ambient).

A Foster network is a sum of independent first-order terms ``R_i``, ``tau_i``; its step
response is ``Zth(t) = sum R_i (1 - exp(-t/tau_i))``. Because each term is linear and
time-invariant, the periodic steady state of any repeating heat pattern is a geometric
sum per term, so pulse trains and bursts have exact closed forms (no time stepping).

Array convention: the Foster terms lie along a trailing axis (``resistances[..., K]``,
``time_constants[..., K]``); every other argument broadcasts in front of it, so arrays of
candidate rigs (``power[N]``) combine with one network (``resistances[K]``) or with one
network per candidate (``resistances[N, K]``). Temperatures here are rises above ambient
in kelvin; heat is ``(1 - efficiency) * electrical power`` (the caller's job).

References
----------
1. JEDEC JESD51-14, "Transient dual interface test method for the measurement of the
   thermal resistance junction to case of semiconductor devices with heat flow through a
   single path" (2010): Foster and Cauer RC networks.
2. Infineon AN2008-03, "Thermal equivalent circuit models" (2008): Foster network,
   superposition of power pulses.
"""

from __future__ import annotations

import numpy as np


def _terms(resistances, time_constants):
    r = np.asarray(resistances, dtype=float)
    tau = np.asarray(time_constants, dtype=float)
    return np.broadcast_arrays(r, tau)


def _front(x):
    """Add the trailing Foster axis to a per-candidate argument."""
    return np.asarray(x, dtype=float)[..., None]


def zth(t, resistances, time_constants):
    """Transient thermal impedance of a Foster network (step response per watt).

    Parameters
    ----------
    t : float or ndarray
        Time since the power step. [s]
    resistances : array_like
        Foster resistances along the last axis. [K/W]
    time_constants : array_like
        Foster time constants along the last axis. [s]

    Returns
    -------
    float or ndarray
        ``Zth(t) = sum R_i (1 - exp(-t/tau_i))``. [K/W]

    References
    ----------
    1. JESD51-14 (2010); Infineon AN2008-03, eq. (1).
    """
    r, tau = _terms(resistances, time_constants)
    return np.sum(r * -np.expm1(-_front(t) / tau), axis=-1)


def step_rise(power, t, resistances, time_constants):
    """Temperature rise after a power step held since t = 0.

    Parameters
    ----------
    power : float or ndarray
        Heat flow from t = 0. [W]
    t : float or ndarray
        Time since the step. [s]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]

    Returns
    -------
    float or ndarray
        Rise above ambient. [K]

    References
    ----------
    1. JESD51-14 (2010), Foster network.
    """
    return np.asarray(power, dtype=float) * zth(t, resistances, time_constants)


def pulse_train_peak(power, width, period, resistances, time_constants):
    """Peak rise in the periodic steady state of a uniform pulse train.

    ``dT = P * sum R_i (1 - exp(-tp/tau_i)) / (1 - exp(-T/tau_i))`` at the end of each
    pulse (exact superposition of the infinite train).

    Parameters
    ----------
    power : float or ndarray
        Heat flow during a pulse. [W]
    width : float or ndarray
        Pulse width. [s]
    period : float or ndarray
        Pulse period (>= width). [s]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]

    Returns
    -------
    float or ndarray
        Peak rise above ambient. [K]

    References
    ----------
    1. Infineon AN2008-03, superposition of a periodic pulse train.
    """
    r, tau = _terms(resistances, time_constants)
    heat = -np.expm1(-_front(width) / tau)
    cool = -np.expm1(-_front(period) / tau)
    return np.asarray(power, dtype=float) * np.sum(r * heat / cool, axis=-1)


def pulse_train_shortcut(power, width, period, resistances, time_constants):
    """The common datasheet shortcut ``P*(D*Rth + (1 - D)*Zth(tp))`` (over-estimates).

    Parameters
    ----------
    power : float or ndarray
        Heat flow during a pulse. [W]
    width : float or ndarray
        Pulse width. [s]
    period : float or ndarray
        Pulse period. [s]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]

    Returns
    -------
    float or ndarray
        Estimated peak rise. [K]

    References
    ----------
    1. Infineon AN2008-03, approximation for periodic pulses (common practice).
    """
    r, _ = _terms(resistances, time_constants)
    duty = np.asarray(width, dtype=float) / np.asarray(period, dtype=float)
    z = zth(width, resistances, time_constants)
    return np.asarray(power, dtype=float) * (duty * np.sum(r, axis=-1) + (1 - duty) * z)


def _geometric(m, ratio_exponent):
    """(1 - b^m) / (1 - b) with b = exp(-ratio_exponent); m when b -> 1."""
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.expm1(-m * ratio_exponent) / np.expm1(-ratio_exponent)
    return np.where(ratio_exponent > 0, g, m)


def burst_peak(power, width, spacing, n_pulses, frame_period, resistances, time_constants):
    """Peak rise in the periodic steady state of bursts of pulses.

    Pattern: ``n_pulses`` pulses of ``width`` starting every ``spacing`` inside each frame,
    the burst repeated every ``frame_period``. Per Foster term (``b = exp(-s/tau)``,
    ``F = exp(-Tf/tau)``) the rise at the end of pulse ``k`` (0-based) of the burst is

        ``P R (1 - e^(-tp/tau)) [ S(k+1) + exp(-(Tf - (n-1-k) s)/tau) S(n) / (1 - F) ]``,

    ``S(m) = (1 - b^m)/(1 - b)``. Going from pulse ``k`` to ``k+1`` this changes by a
    positive multiple of ``1 - exp(-(Tf - n s)/tau)``, whose sign is the same for every
    term: when the frame is longer than ``n`` spacings (an idle gap follows the burst)
    every term, hence the sum, grows along the burst and the peak is at the end of the
    last pulse; otherwise at the end of the first. Between pulse ends the junction only
    cools, so the maximum of the two is the exact peak. ``Tf < (n-1) s + tp`` (bursts
    overlap) is invalid and returns nan.

    Parameters
    ----------
    power : float or ndarray
        Heat flow during a pulse. [W]
    width : float or ndarray
        Pulse width. [s]
    spacing : float or ndarray
        Start-to-start spacing of the pulses in a burst. [s]
    n_pulses : int or ndarray
        Pulses per burst (>= 1). [1]
    frame_period : float or ndarray
        Burst repetition period. [s]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]

    Returns
    -------
    float or ndarray
        Peak rise above ambient. [K]

    References
    ----------
    1. Infineon AN2008-03, superposition of power pulses on a Foster network.
    """
    r, tau = _terms(resistances, time_constants)
    tp, s, tf = _front(width), _front(spacing), _front(frame_period)
    n = _front(n_pulses)
    heat = -np.expm1(-tp / tau)
    cool = -np.expm1(-tf / tau)
    s_n = _geometric(n, s / tau)
    last = r * heat * s_n / cool
    first = r * heat * (1.0 + np.exp(-(tf - (n - 1) * s) / tau) * s_n / cool)
    peak = np.maximum(np.sum(last, axis=-1), np.sum(first, axis=-1))
    valid = np.asarray(frame_period, dtype=float) >= (np.asarray(n_pulses, dtype=float) - 1) * (
        np.asarray(spacing, dtype=float)) + np.asarray(width, dtype=float)
    return np.where(valid, np.asarray(power, dtype=float) * peak, np.nan)


def mean_rise(power, duty, resistances):
    """Mean rise in steady state, ``P * D * Rth`` (Rth = sum of the Foster resistances).

    Parameters
    ----------
    power : float or ndarray
        Heat flow during a pulse. [W]
    duty : float or ndarray
        Average duty (on-time fraction over the whole pattern). [1]
    resistances : array_like
        Foster resistances along the last axis. [K/W]

    Returns
    -------
    float or ndarray
        Mean rise above ambient. [K]

    References
    ----------
    1. JESD51-14 (2010): steady state Rth = sum of the network's resistances.
    """
    rth = np.sum(np.asarray(resistances, dtype=float), axis=-1)
    return np.asarray(power, dtype=float) * np.asarray(duty, dtype=float) * rth


def foster_advance(state, power, dt, resistances, time_constants):
    """Foster term rises after holding a constant heat for a time (exact).

    Each term obeys ``tau_i dT_i/dt = P R_i - T_i``; over an interval of constant ``P``
    it relaxes exactly, ``T_i(t + dt) = P R_i + (T_i(t) - P R_i) exp(-dt/tau_i)``. Chained
    over the intervals of a piecewise-constant heat this integrates the network with no
    step-size error of its own (the only error is the piecewise-constant heat).

    Parameters
    ----------
    state : ndarray
        Rise of each Foster term at the start, terms along the last axis. [K]
    power : float or ndarray
        Heat held over the interval. [W]
    dt : float or ndarray
        Interval length (>= 0; inf gives the steady state). [s]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]

    Returns
    -------
    ndarray
        Rise of each term at the end of the interval (sum along the last axis for the
        junction). [K]

    References
    ----------
    1. Infineon AN2008-03, Foster network: each RC term is a first-order lag.
    """
    r, tau = _terms(resistances, time_constants)
    target = _front(power) * r
    return target + (np.asarray(state, dtype=float) - target) * np.exp(-_front(dt) / tau)


def periodic_burst_rise(time, power, width, first, spacing, n_pulses, frame_period,
                        resistances, time_constants):
    """Junction temperature rise in the periodic steady state of a burst, in closed form.

    Pattern: ``n_pulses`` pulses of ``width`` starting at ``first + j*spacing``
    (``j = 0 .. n-1``), repeated every ``frame_period``. The superposition of every
    pulse of every earlier frame is summed exactly as geometric series, per Foster term
    (``C = 1 - exp(-tp/tau)``, ``F = exp(-Tf/tau)``, ``b = exp(-s/tau)``,
    ``G(c) = (1 - b^c)/(1 - b)``). With ``u`` the time since the burst started (modulo
    ``Tf``), ``m`` pulses have started in this frame; the newest started one is ``a`` old.
    Pulses that are off contribute ``C exp(-(age - tp)/tau) / (1 - F)`` each (all their
    repetitions), which sums to ``C [exp(-(a' - tp)/tau) G(c) + exp(-(a'' - tp)/tau)
    G(n - m)] / (1 - F)`` over the ``c`` started pulses that are off (newest ``a'`` old)
    and the ``n - m`` pulses of the previous frame (newest ``a'' = u + Tf - (n-1) s``
    old); a pulse that is on adds ``1 - exp(-a/tau) + C exp(-(a - tp + Tf)/tau)/(1 - F)``.
    The work is O(samples x terms), independent of the number of pulses, and every
    exponent is <= 0 (no overflow).

    Parameters
    ----------
    time : float or ndarray
        Times (any; taken modulo the frame period). [s]
    power : float
        Heat flow during a pulse. [W]
    width : float
        Pulse width (< spacing when n_pulses > 1). [s]
    first : float
        Start of the first pulse after the frame start. [s]
    spacing : float
        Start-to-start spacing of the pulses. [s]
    n_pulses : int
        Pulses per burst (>= 1). [1]
    frame_period : float
        Burst repetition period, at least ``(n-1) spacing + width``. [s]
    resistances, time_constants : array_like
        Foster network (one-dimensional). [K/W], [s]

    Returns
    -------
    ndarray
        Rise above ambient at each time. [K]

    References
    ----------
    1. Infineon AN2008-03, "Thermal equivalent circuit models" (2008): superposition of
       power pulses on a Foster network.
    2. JEDEC JESD51-14 (2010): Foster network step response.
    """
    r = np.asarray(resistances, dtype=float)
    tau = np.asarray(time_constants, dtype=float)
    n = int(n_pulses)
    tp, s, tf = float(width), float(spacing), float(frame_period)
    u = np.mod(np.asarray(time, dtype=float) - float(first), tf)
    started = np.minimum(n, np.floor(u / s) + 1.0) if n > 1 else np.ones_like(u)
    a = u - (started - 1.0) * s  # age of the newest pulse started in this frame
    on = a < tp
    newest_off = a + np.where(on, s, 0.0)
    count_off = started - on
    prev = u + tf - (n - 1) * s  # age of the newest pulse of the previous frame
    a, newest_off, count_off, prev = (x[..., None] for x in (a, newest_off, count_off, prev))
    on_k = on[..., None]
    c = -np.expm1(-tp / tau)
    keep = -np.expm1(-tf / tau)  # 1 - F
    ratio = s / tau
    off_sum = (np.exp(-np.maximum(newest_off - tp, 0.0) / tau) * _geometric(count_off, ratio)
               + np.exp(-np.maximum(prev - tp, 0.0) / tau) * _geometric(n - started[..., None],
                                                                         ratio))
    live = np.where(on_k, -np.expm1(-np.minimum(a, tp) / tau)
                    + c * np.exp(-(a - tp + tf) / tau) / keep, 0.0)
    return float(power) * np.sum(r * (c * off_sum / keep + live), axis=-1)
