"""Boost converter and storage-capacitor budget, and the stuck-on gate (dump and steady state).

This module extends the layout of design section 2 (which lists led, thermal and
switching for the power stage) with the supply side: what the boost must deliver on
average, how fast it refills the storage capacitor, how the capacitor sags across a
burst of flashes, and what flows when the gate is stuck on: first the charged capacitor
dumping into the LED (:func:`stuck_on_transient`), then the boost's steady state
(:func:`stuck_on_state`).

Model of the boost: an ideal source that holds its set voltage until the load asks for
more than its current limit, then delivers exactly the current limit (constant-current
fold-back). Switching ripple and control-loop dynamics are not modelled.

References
----------
1. R. W. Erickson, D. Maksimovic, *Fundamentals of Power Electronics*, 3rd ed., Springer
   (2020), ch. 2 (steady-state converter analysis: charge and energy balance).
   doi:10.1007/978-3-030-43881-4
2. Capacitor charge balance ``C dV = I dt`` and stored energy ``C V^2 / 2``.
3. Infineon AN2008-03, "Thermal equivalent circuit models" (2008): Foster network driven
   by a time-varying heat.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from strobeplan.physics.led import (
    current_at_voltage,
    forward_voltage,
    pulse_end,
    pulse_operating_point,
)


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


class BurstSag(NamedTuple):
    """Flash-by-flash burst: before_last [V] and at_end [V] (capacitor sag below the set
    point), first_current and last_current [A] (peak current of the first and last flash)."""

    before_last: np.ndarray
    at_end: np.ndarray
    first_current: np.ndarray
    last_current: np.ndarray


def burst_sag(supply_voltage, capacitance, esr, series_resistor, on_resistance,
              recharge_current, width, spacing, n_pulses, n_vt, saturation_current,
              led_series_resistance, first=None):
    """Capacitor sag across a burst, flash by flash.

    Each flash is the exact operating point (:func:`strobeplan.physics.led.
    pulse_operating_point`; its peak current and end voltage, :func:`strobeplan.physics.led.
    pulse_end`) from the voltage the previous one left; between flashes the
    boost recharges at its limit for ``spacing - width``, never above the set point. The
    loop runs over the flash index (up to the largest ``n_pulses``), each step vectorised
    over the candidates whose burst still changes.

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
    first : strobeplan.physics.led.OperatingPoint, optional
        The first flash, if the caller has solved it already: ``pulse_operating_point`` of
        these same arguments (all but ``spacing`` and ``n_pulses``, in this order); None
        solves it here.

    Returns
    -------
    BurstSag
        Sag before the last flash and at the end of the burst [V]; first and last peak
        current [A].

    References
    ----------
    1. Charge balance ``C dV = (Ib - I) dt``, flash by flash.
    """
    args = [np.asarray(x, dtype=float) for x in (
        supply_voltage, capacitance, esr, series_resistor, on_resistance, recharge_current,
        width, spacing, n_pulses, n_vt, saturation_current, led_series_resistance)]
    vs, c, esr_, rser, ron, ib, tp, s, n, a, i_s, rs = args
    shape = np.broadcast_shapes(*(x.shape for x in args))
    n = np.maximum(np.rint(n), 1.0)
    # The first flash starts at the set point: it does not depend on the spacing or the
    # flash count, so it is solved once per circuit (e.g. not once per ``every`` of a grid).
    if first is None:
        first = pulse_operating_point(vs, c, esr_, rser, ron, ib, tp, a, i_s, rs)
    peak = np.asarray(first.peak_current, dtype=float)
    end = np.asarray(first.end_voltage, dtype=float)
    recharge = ib * (s - tp) / c  # the boost's recharge between flashes [V]
    v_next = np.minimum(vs, end + recharge)
    grid = shape or (1,)  # (one candidate as a row of one)
    more = np.broadcast_to((1 < n) & (v_next != vs), grid)

    def full(x):
        return np.array(np.broadcast_to(x, grid)).ravel()

    vs_f = full(vs)
    v_before_last, v_end, first_i, last = vs_f.copy(), full(end), full(peak), full(peak)
    # Only the candidates whose burst still changes are stepped: once a flash starts where
    # the previous one did, every later flash repeats it exactly. Their arguments are taken
    # once (a single value stays a scalar) and narrowed with the set.
    act = np.flatnonzero(more)
    where = np.unravel_index(act, grid)

    def take(x):
        return x.reshape(()) if x.size == 1 else np.broadcast_to(x, grid)[where]

    v = np.broadcast_to(v_next, grid)[where]
    part = [take(x) for x in (c, esr_, rser, ron, ib, tp, a, i_s, rs, vs, n, recharge)]
    k = 1
    while act.size:
        c_a, esr_a, rser_a, ron_a, ib_a, tp_a, a_a, is_a, rs_a, vs_a, n_a, re_a = part
        peak, end = pulse_end(v, c_a, esr_a, rser_a, ron_a, ib_a, tp_a, a_a, is_a, rs_a)
        v_next = np.minimum(vs_a, end + re_a)
        more = (k + 1 < n_a) & (v_next != v)
        if more.all():  # (a flash's figures are kept only when it is a candidate's last)
            v = v_next
        else:
            gone = act[~more]
            last[gone], v_before_last[gone], v_end[gone] = peak[~more], v[~more], end[~more]
            act, v = act[more], v_next[more]
            part = [x[more] if x.ndim else x for x in part]
        k += 1
    out = BurstSag(*((x).reshape(shape) for x in (vs_f - v_before_last, vs_f - v_end, first_i,
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


def _padded(shape: tuple, ndim: int) -> tuple:
    """``shape`` left-padded with ones to ``ndim`` dimensions (numpy broadcasting)."""
    return (1,) * (ndim - len(shape)) + tuple(shape)


class StuckOnTransient(NamedTuple):
    """Gate stuck on from a charged capacitor (:func:`stuck_on_transient`).

    time_to_limit [s] (inf if the junction never reaches its limit), peak_temperature [K]
    and peak_time [s] of the junction, start_current [A] (capacitor full) and
    steady_current [A] (capacitor emptied, :func:`stuck_on_state`), resistor_peak_power
    [W] (at the start), resistor_pulse_energy [J] (the capacitor dump's energy in the
    series resistor above the steady dissipation).
    """

    time_to_limit: np.ndarray
    peak_temperature: np.ndarray
    peak_time: np.ndarray
    start_current: np.ndarray
    steady_current: np.ndarray
    resistor_peak_power: np.ndarray
    resistor_pulse_energy: np.ndarray


DISCHARGE_END = 40.0  # [1] time constants after which a decaying term is taken as settled
TAIL_FACTOR = 1e6  # [1] diode-tail horizon (no boost) in initial discharge time constants


def stuck_on_transient(supply_voltage, capacitance, esr, series_resistor, on_resistance,
                       current_limit, n_vt, saturation_current, led_series_resistance,
                       efficiency, resistances, time_constants, ambient, start_temperature,
                       junction_max, points_per_decade=64, verdict_time=None):
    """Gate stuck on with the storage capacitor charged: the dump, then the boost limit.

    Circuit (the one :func:`strobeplan.physics.led.pulse_operating_point` solves): the
    storage capacitor, charged to ``supply_voltage``, discharges through its ESR, the series
    resistor, the LED and the switch's on-resistance while the boost feeds its current
    limit; the current falls from ``start_current`` to the boost limit (or, when the boost
    alone carries the string, stays at the string current). The LED energy delivered up to
    any time ``t`` is that function's exact ``led_energy`` for a gate time ``t``, so the
    discharge is not time-stepped and not written twice.

    Junction: the Foster network starts at ``start_temperature`` (each term at its share
    ``R_i/Rth`` of the rise, the steady state of a constant heat) and is driven by the heat
    ``(1 - efficiency) x LED power``. Time grid: ``t_0 = 0`` and ``t_k`` log-spaced with
    ``points_per_decade`` points per decade from ``1e-3 min(tau_min, C R)`` (``C R`` the
    initial discharge time constant) to ``40 tau_max``; on each interval the heat is held at
    its exact interval mean (LED energy difference over the interval), and the Foster terms
    are advanced exactly for that constant heat (:func:`strobeplan.physics.thermal.
    foster_advance`). The only error is the heat's variation inside an interval: a term
    much faster than the interval sees the interval's mean heat instead of the current one,
    so the error is first order in the interval and, on a falling heat, over-estimates the
    temperature (conservative). At the default 64 points per decade (each interval 3.7 % of
    its time) the levitator example with 10 mF peaks 0.13 K above an adaptive ODE solution
    of the same circuit and network (0.29 K at 32, 0.05 K at 128 points per decade) and
    reaches the limit within 0.01 % of its time. The error is largest where a fast Foster
    term (time constant far below the interval) follows a quickly falling heat: it is then
    about ``R_fast |dP/dt| dt / 2``, e.g. 0.34 K on a 69 K rise (0.5 %) for a 10 mF dump
    with no boost into a 2 K/W, 10 us term; it is on the hot side, so the time to the limit
    comes out early (2.7 % early for a junction peaking 0.7 K above its limit, where the
    temperature is nearly flat). Random circuits stay within 0.2 K + 0.6 % of the rise, never
    below the reference by more than 0.2 K + 0.2 % (tests/physics/test_stuck_on_transient.py).
    The peak and the first crossing
    are taken at the grid points, and the crossing is refined inside its interval by bisection
    on the exact in-interval response. Over many candidates per circuit the scan visits only
    the grid points that can change a candidate's peak or first crossing (every point is a
    line in the starting rise; the others are provably below the envelope of those lines by
    a margin far above rounding, see ``_steps_that_matter``): the same numbers as a scan of
    every point. After ``40 tau_max`` every term has followed the
    (non-increasing) heat, so the junction only cools towards its steady state: a limit
    not reached by then is never reached.

    Resistor pulse energy: ``R (integral of I^2 - I_ss^2 dt)`` over the dump, from the
    exact ``integral I^2 dt`` at a time when the capacitor has settled (40 of its slowest
    time constants ``C (R_tot + n_vt/I_b)``, at most ``1e6`` initial ones, which bounds the
    diode's hyperbolic tail when there is no boost); 0 when the boost carries the string.

    Every argument broadcasts over candidates (e.g. grids of supply voltage and series
    resistor); the Foster terms lie along the trailing axis of ``resistances`` and
    ``time_constants`` (one network, or one per candidate).

    Parameters
    ----------
    supply_voltage : float or ndarray
        Boost set voltage, the capacitor's voltage when the gate sticks. [V]
    capacitance : float or ndarray
        Storage capacitance. [F]
    esr : float or ndarray
        Capacitor ESR. [ohm]
    series_resistor : float or ndarray
        Series resistor. [ohm]
    on_resistance : float or ndarray
        Switch on-resistance. [ohm]
    current_limit : float or ndarray
        Boost current limit. [A]
    n_vt : float or ndarray
        LED ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        LED saturation current. [A]
    led_series_resistance : float or ndarray
        LED series resistance. [ohm]
    efficiency : float or ndarray
        LED wall-plug efficiency (fraction of the electrical power leaving as light). [1]
    resistances, time_constants : array_like
        Foster network, terms along the last axis. [K/W], [s]
    ambient : float or ndarray
        Ambient temperature. [K]
    start_temperature : float or ndarray
        Junction temperature when the gate sticks (e.g. the mean of normal operation). [K]
    junction_max : float or ndarray
        Junction temperature limit. [K]
    points_per_decade : int
        Density of the log-spaced time grid.
    verdict_time : float, optional
        Resolve only what comparing the time to the limit with this time needs (a design
        search's verdicts): a first crossing whose grid interval lies wholly before
        ``verdict_time`` or wholly at or after it is reported at the interval's end (the
        exact time is inside the interval, so on the same side; only an interval that
        holds ``verdict_time`` is bisected), and the peak and its time are not computed
        (NaN; the scan then visits only the steps that can hold the first crossing).
        Whether the limit is reached, and ``time_to_limit >= verdict_time``, are exactly
        those of the full computation; None (default) resolves everything. [s]

    Returns
    -------
    StuckOnTransient
        Time to the junction limit [s] (0 if already at it, inf if never), peak junction
        temperature [K] and its time [s] (NaN with ``verdict_time``), start and steady
        current [A], resistor peak power [W] and pulse energy [J].

    References
    ----------
    1. Erickson & Maksimovic (2020): current-limited source into a resistive-diode load.
    2. Infineon AN2008-03: Foster network, superposition of power steps.
    """
    # The circuit (everything but the temperatures) sets the heat; the starting temperature
    # only adds the free decay of the network's initial state (the network is linear). So
    # the heat and the zero-state response are computed over the circuit's shape (once per
    # circuit: a grid search's chunks share it, see _circuit_response), and the start
    # enters per candidate as rise0 x sum_i (R_i/Rth) exp(-t/tau_i).
    circuit = (supply_voltage, capacitance, esr, series_resistor, on_resistance,
               current_limit, n_vt, saturation_current, led_series_resistance, efficiency,
               resistances, time_constants)
    cr = _circuit_response(circuit, points_per_decade)
    cshape = cr.cshape
    t_amb, t_start, t_max = (np.asarray(x, dtype=float) for x in (ambient, start_temperature,
                                                                   junction_max))
    shape = np.broadcast_shapes(cshape, t_amb.shape, t_start.shape, t_max.shape)
    i_ss, i0, rser, pulse_energy = cr.i_ss, cr.i0, cr.rser, cr.pulse_energy
    share, r, tau, grid, heat, dt = cr.share, cr.r, cr.tau, cr.grid, cr.heat, cr.dt
    zero, free, rise_zero, decay, n_steps = cr.zero, cr.free, cr.rise_zero, cr.decay, cr.n_steps
    rise0 = np.broadcast_to(t_start - t_amb, shape)
    allowed = np.broadcast_to(t_max - t_amb, shape)
    peak, peak_t = rise0.copy(), np.zeros(shape)
    crossed = rise0 >= allowed
    b_k = np.full(shape, -1)
    if np.isnan(decay).any() or np.isnan(rise_zero).any():
        # (np.argmax stops at a NaN: keep the blocked form's answer in that corner)
        block = max(1, (1 << 22) // max(1, math.prod(shape)))
        for j in range(0, n_steps + 1, block):
            rise = rise0[..., None] * decay[..., j:j + block] + rise_zero[..., j:j + block]
            above = rise >= allowed[..., None]
            first = ~crossed & above.any(axis=-1)
            b_k = np.where(first, j + np.argmax(above, axis=-1), b_k)
            crossed = crossed | first
            kk = np.argmax(rise, axis=-1)
            top = np.take_along_axis(rise, kk[..., None], axis=-1)[..., 0]
            higher = top > peak
            t_top = np.take_along_axis(np.broadcast_to(grid[..., j:j + block], rise.shape),
                                       kk[..., None], axis=-1)[..., 0]
            peak, peak_t = np.where(higher, top, peak), np.where(higher, t_top, peak_t)
    else:
        # Step by step, over the candidates at once (no reduction along the short step
        # axis): the same rise0 x decay + zero-state rise per step, the first maximum
        # (strictly higher replaces) and the first crossing kept per candidate. The
        # candidates are laid out as (the axes the circuit does not vary along, the
        # circuit's axes), so each step is a long run of memory.
        nd = len(shape)
        cpad = (1,) * (nd - len(cshape)) + tuple(cshape)
        perm = [i for i in range(nd) if cpad[i] == 1] + [i for i in range(nd) if cpad[i] != 1]
        n_c = math.prod(cshape)
        n_a = math.prod(shape) // max(n_c, 1)

        def flat(x):
            return np.ascontiguousarray(np.broadcast_to(x, shape).transpose(perm)).reshape(
                n_a, n_c)

        r0, lim = flat(rise0), flat(allowed)
        d_k, z_k, g_k = cr.decay_k, cr.rise_zero_k, cr.grid_k
        want_peak = verdict_time is None
        pk, pt, bk, open_ = _scan(r0, lim, d_k, z_k, g_k,
                                  _steps_that_matter(r0, lim, d_k, z_k, want_peak), want_peak)
        back = np.argsort(perm)
        shaped = [shape[i] for i in perm]
        peak, peak_t, b_k, crossed = (
            x.reshape(shaped).transpose(back) for x in (pk, pt, bk, ~open_))
        if not shape:
            crossed = crossed[()]
    # First crossing inside its interval: bisection on the exact in-interval response from
    # the state at the interval's start (only for the candidates that cross during it).
    hi = np.zeros(shape)
    b_t = np.zeros(shape)
    todo = np.flatnonzero(crossed & ~(rise0 >= allowed))
    if todo.size:
        steps = heat.shape[-1]
        flat_c = _circuit_rows(todo, shape, cshape)
        k = b_k.ravel()[todo]
        # only the crossing interval's entries (no per-candidate copies of the whole grid)
        b_dt = dt.reshape(-1, steps)[flat_c, k]
        b_start = grid.reshape(-1, steps)[flat_c, k] - b_dt
        np.put(b_t, todo, b_start)
        np.put(hi, todo, b_dt)
        if verdict_time is not None:
            # The time is b_start + (a bisection end in [0, b_dt]), and a rounded sum is
            # monotone in its terms: an interval wholly on one side of verdict_time decides
            # the comparison already (reported at its end, b_dt above).
            split = ~(b_start >= verdict_time) & ~(b_start + b_dt < verdict_time)
            todo, flat_c, k, b_dt = todo[split], flat_c[split], k[split], b_dt[split]
    if todo.size:
        share2 = share.reshape(-1, share.shape[-1])[flat_c]
        r2 = r.reshape(-1, r.shape[-1])[flat_c]
        tau2 = tau.reshape(-1, tau.shape[-1])[flat_c]
        r0 = rise0.ravel()[todo]
        lim = allowed.ravel()[todo]
        b_p = heat.reshape(-1, steps)[flat_c, k]
        prev = np.maximum(k - 1, 0)
        zero_prev = zero.reshape(-1, steps, zero.shape[-1])[flat_c, prev]
        free_prev = free.reshape(-1, steps, free.shape[-1])[flat_c, prev]
        start_state = np.where((k > 0)[:, None], zero_prev + r0[:, None] * share2 * free_prev,
                               r0[:, None] * share2)
        np.put(hi, todo, _bisect_crossing(start_state, b_p, r2, tau2, lim, b_dt))
    t_cross = np.where(rise0 >= allowed, 0.0, np.where(crossed, b_t + hi, np.inf))
    t_amb = np.broadcast_to(t_amb, shape)
    i0, i_ss, rser, pulse_energy = (np.broadcast_to(x, shape) for x in (i0, i_ss, rser,
                                                                          pulse_energy))
    if verdict_time is not None:  # (not resolved: see verdict_time)
        peak, peak_t = np.full(shape, np.nan), np.full(shape, np.nan)
    out = StuckOnTransient(t_cross, t_amb + peak, peak_t, i0, i_ss, rser * i0**2,
                           pulse_energy)
    if np.ndim(out.time_to_limit) == 0:
        return StuckOnTransient(*(float(x) for x in out))
    return out


def _circuit_rows(todo, shape, cshape):
    """The circuit's flat row of each flat candidate index ``todo`` of ``shape`` (the
    circuit's shape ``cshape`` broadcast to it)."""
    if not shape:
        return np.zeros(todo.size, dtype=np.intp)
    cidx = np.unravel_index(todo, shape)
    pad = _padded(cshape, len(shape))
    cpos = tuple(ix if size > 1 else np.zeros_like(ix)
                 for ix, size in zip(cidx, pad, strict=True))
    return np.ravel_multi_index(cpos, pad)


def _scan(r0, lim, d_k, z_k, g_k, steps=None, peak=True):
    """The stuck-on junction scan of :func:`stuck_on_transient` on the (other axes, circuits)
    layout: per step ``k`` the rise ``r0 x d_k + z_k``; the first maximum (a strictly higher
    value replaces; the start ``r0`` at time 0 first) and the first step at or above ``lim``.

    ``steps`` (circuits, m) lists, per circuit and in increasing order, the only steps that
    can change either answer (:func:`_steps_that_matter`); None scans every step. Returns
    (peak, peak time, first crossing step (-1: at the start or never), still below the limit);
    with ``peak`` False the maximum is not tracked (peak and its time NaN) and ``steps``
    need only hold the steps that can change the first crossing.
    """
    pk, pt = (r0.copy(), np.zeros(r0.shape)) if peak else (np.full(r0.shape, np.nan),) * 2
    bk = np.full(r0.shape, -1)
    open_ = ~(r0 >= lim)
    rise = np.empty(r0.shape)
    hit = np.empty(r0.shape, dtype=bool)
    higher = np.empty(r0.shape, dtype=bool)
    if steps is None:
        order = ((k, d_k[k], z_k[k], g_k[k]) for k in range(d_k.shape[0]))
    else:
        cols = np.arange(steps.shape[0])
        order = ((steps[:, m], d_k[steps[:, m], cols], z_k[steps[:, m], cols],
                  g_k[steps[:, m], cols]) for m in range(steps.shape[1]))
    for k, d, z, g in order:
        np.multiply(r0, d, out=rise)
        np.add(rise, z, out=rise)
        np.greater_equal(rise, lim, out=hit)
        np.logical_and(hit, open_, out=hit)
        if np.ndim(k):
            np.copyto(bk, np.broadcast_to(k, bk.shape), where=hit)
        else:
            np.copyto(bk, k, where=hit)
        np.logical_and(open_, ~hit, out=open_)
        if not peak:
            continue
        np.greater(rise, pk, out=higher)
        np.copyto(pk, rise, where=higher)
        np.copyto(pt, g, where=higher)
    return pk, pt, bk, open_


SCAN_SAMPLES = 4  # [1] intervals of the start-rise range per circuit in _steps_that_matter
SCAN_TOLERANCE = 1e-9  # [1] margin (relative to the figures' size) a skipped step must clear


def _steps_that_matter(r0, lim, d_k, z_k, peak=True):
    """Per circuit, the steps of the stuck-on scan that can change its answers, as (circuits,
    m) step indices in increasing order (the last repeated to fill a row), or None (scan all).
    With ``peak`` False only the first crossing's steps (the last part below; the envelope
    test is skipped): for a scan that does not track the maximum.

    Every step is a line in the start rise: ``rise_k(r0) = d_k r0 + z_k``; the circuit's
    candidates have their ``r0`` in ``[a, b]``. A step is skipped only when, for every ``r0``
    in ``[a, b]``, it is below the upper envelope of the steps (and the start line ``r0``) by
    more than a margin (``SCAN_TOLERANCE`` of the figures' size, far above the rounding of
    ``d r0 + z``): it can then neither be the maximum nor tie with it. The test uses a
    piecewise-linear lower bound of the envelope: at ``SCAN_SAMPLES + 1`` points of
    ``[a, b]`` the highest step (the envelope's value there) is taken, and on each interval
    between two points both of those steps are below the envelope. A line below the left
    one at the interval's left end and at an inner point ``p``, and below the right one at
    ``p`` and at the right end, is below the left one on ``[left, p]`` and below the right
    one on ``[p, right]`` (lines), so below the envelope on the whole interval; ``p`` is the
    two steps' intersection (clipped to the interval), which makes the bound tight. For
    the first crossing of ``lim`` only steps up to the first one above every limit at every
    ``r0`` matter, and among them only those not below every limit at every ``r0`` (a
    line's extremes on ``[a, b]`` are at its ends). Skipped steps change nothing: the scan
    over the rest gives the same bits (a candidate's figures come from the same arithmetic
    on the same step).
    """
    n_steps, n_c = d_k.shape
    if n_c == 0 or n_steps <= 2 * (SCAN_SAMPLES + 2):
        return None
    finite = np.isfinite(r0).all(axis=0) & np.isfinite(lim).all(axis=0)
    if not finite.all() or not (np.isfinite(d_k).all() and np.isfinite(z_k).all()):
        return None
    a, b = r0.min(axis=0), r0.max(axis=0)  # (circuits,)
    lo_lim, hi_lim = lim.min(axis=0), lim.max(axis=0)
    d, z = d_k.T, z_k.T  # (circuits, steps)
    size = 1.0 + np.maximum(np.abs(a), np.abs(b)) + np.max(np.abs(z), axis=1) \
        + np.maximum(np.abs(lo_lim), np.abs(hi_lim))
    tol = SCAN_TOLERANCE * size  # (circuits,)
    near = np.zeros(d.shape, dtype=bool) if not peak else _near_envelope(a, b, d, z, tol)
    # The first crossing.
    ra, rb = a[:, None] * d + z, b[:, None] * d + z  # (c, steps): the line's two ends
    never = np.maximum(ra, rb) < (lo_lim - tol)[:, None]
    always = np.minimum(ra, rb) >= (hi_lim + tol)[:, None]
    first_always = np.where(always.any(axis=1), np.argmax(always, axis=1), n_steps)
    before = np.arange(n_steps)[None, :] <= first_always[:, None]
    keep = near | (before & ~never)
    count = keep.sum(axis=1)
    m = int(count.max(initial=0))
    if m == 0:
        m, keep[:, 0], count = 1, True, np.maximum(count, 1)
    if m * 2 > n_steps:
        return None
    return _listed(keep, count, m)


def _listed(keep, count, m):
    """Each row's True columns of ``keep`` (``count`` per row, ``m`` at most) in increasing
    order, the row's last one repeated to fill ``m`` (a row with none: column 0)."""
    rows, cols = np.nonzero(keep)  # (row by row, columns increasing)
    ends = np.cumsum(count)
    steps = np.empty((keep.shape[0], m), dtype=np.intp)
    steps[:] = np.where(count > 0, cols[np.maximum(ends - 1, 0)], 0)[:, None] if cols.size else 0
    steps[rows, np.arange(rows.size) - (ends - count)[rows]] = cols
    return steps


def _near_envelope(a, b, d, z, tol):
    """(circuits, steps): the steps of :func:`_steps_that_matter` not provably below the
    envelope by ``tol`` on ``[a, b]`` (its envelope test)."""
    # The envelope at the sample points (the start line r0 itself is step "-1").
    x = a[:, None] + (b - a)[:, None] * np.linspace(0.0, 1.0, SCAN_SAMPLES + 1)  # (c, s)
    best = np.empty(x.shape, dtype=np.intp)
    top = np.empty(x.shape)
    for j in range(x.shape[1]):
        vals = x[:, j:j + 1] * d + z  # (c, steps)
        best[:, j] = np.argmax(vals, axis=1)
        top[:, j] = np.take_along_axis(vals, best[:, j:j + 1], axis=1)[:, 0]
    start_wins = x >= top
    sd = np.where(start_wins, 1.0, np.take_along_axis(d, best, axis=1))  # seed slopes
    sz = np.where(start_wins, 0.0, np.take_along_axis(z, best, axis=1))  # seed intercepts
    env = np.maximum(top, x)  # the envelope at the samples
    # A point between neighbouring samples (their seeds' intersection, kept inside the
    # interval) and the lower of the two seeds there: a line below the left seed at the left
    # end and at that point, and below the right seed there and at the right end, is below
    # the envelope on the whole interval, wherever the point is (so the intersection's
    # rounding cannot matter).
    dd = sd[:, :-1] - sd[:, 1:]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        xi = (sz[:, 1:] - sz[:, :-1]) / dd
    xi = np.clip(np.where(np.isfinite(xi), xi, x[:, :-1]), x[:, :-1], x[:, 1:])
    env_i = np.minimum(sd[:, :-1] * xi + sz[:, :-1], sd[:, 1:] * xi + sz[:, 1:])
    px = np.concatenate([x, xi], axis=1)  # (c, points)
    pv = np.concatenate([env, env_i], axis=1) - tol[:, None]
    near = np.zeros(d.shape, dtype=bool)
    for j in range(px.shape[1]):
        near |= px[:, j:j + 1] * d + z >= pv[:, j:j + 1]
    return near


def _bisect_crossing(start_state, heat, r, tau, lim, length, iterations=60):
    """Time into an interval of constant ``heat`` at which the junction (the sum of the Foster
    terms advanced from ``start_state`` by :func:`strobeplan.physics.thermal.foster_advance`)
    first reaches ``lim``: the upper end of a bisection bracket ``[0, length]`` after
    ``iterations`` halvings. Rows are candidates, the terms along the last axis.

    The arithmetic is foster_advance's (``target + (state - target) exp(-t/tau)``, summed
    over the terms in order), laid out term by term so each operation is one run of memory;
    the parts that do not depend on the time are computed once.
    """
    target = heat[:, None] * r
    gap = start_state - target
    lo, up = np.zeros(length.shape), length.copy()
    n_terms = r.shape[-1]
    if n_terms >= 8:  # (np.sum's pairwise order from 8 terms on: keep its own arithmetic)
        for _ in range(iterations):
            mid = 0.5 * (lo + up)
            above = np.sum(target + gap * np.exp(-mid[:, None] / tau), axis=-1) >= lim
            up, lo = np.where(above, mid, up), np.where(above, lo, mid)
        return up
    # Below 8 terms np.sum adds them one after another: the same order here.
    target_t, gap_t, tau_t = (np.ascontiguousarray(x.T) for x in (target, gap, tau))
    mid, neg = np.empty(lo.shape), np.empty(lo.shape)
    term, total = np.empty(lo.shape), np.empty(lo.shape)
    above = np.empty(lo.shape, dtype=bool)
    for _ in range(iterations):
        np.add(lo, up, out=mid)
        np.multiply(mid, 0.5, out=mid)
        np.negative(mid, out=neg)
        for j in range(n_terms):
            part = total if j == 0 else term
            np.divide(neg, tau_t[j], out=part)
            np.exp(part, out=part)
            np.multiply(gap_t[j], part, out=part)
            np.add(target_t[j], part, out=part)
            if j:
                np.add(total, term, out=total)
        np.greater_equal(total, lim, out=above)
        np.copyto(up, mid, where=above)
        np.copyto(lo, mid, where=~above)
    return up


class _CircuitResponse(NamedTuple):
    """What :func:`stuck_on_transient` computes over the circuit's shape alone."""

    cshape: tuple
    i_ss: np.ndarray
    i0: np.ndarray
    rser: np.ndarray
    pulse_energy: np.ndarray
    share: np.ndarray
    r: np.ndarray
    tau: np.ndarray
    grid: np.ndarray
    heat: np.ndarray
    dt: np.ndarray
    zero: np.ndarray
    free: np.ndarray
    rise_zero: np.ndarray
    decay: np.ndarray
    decay_k: np.ndarray  # decay, rise_zero and grid as (steps, circuits): the scan's layout
    rise_zero_k: np.ndarray
    grid_k: np.ndarray
    n_steps: int  # the longest of the circuits' grids (the others padded to it)
    own: np.ndarray  # each circuit's own number of steps (circuit shape)


_LAST_CIRCUIT: list = []  # [(key, _CircuitResponse)]: the last circuit computed
# [(points_per_decade, {circuit row's bytes: flat index}, _CircuitResponse)]: the response
# with the most circuits computed so far, whose rows later arrays of its circuits reuse
_POOL: list = []


def forget_circuits() -> None:
    """Drop the remembered stuck-on circuit responses (a design search calls this when it
    starts and ends, so the memory is held only during one search)."""
    _LAST_CIRCUIT.clear()
    _POOL.clear()


def _circuit_key(circuit, points_per_decade):
    arrays = [np.asarray(x, dtype=float) for x in circuit]
    return (points_per_decade, tuple((a.shape, a.tobytes()) for a in arrays))


def _circuit_params(circuit):
    """(circuit shape, one row of parameters per circuit: (circuits, 10 + 2 x terms)), the
    circuits laid out as :func:`_compute_circuit_response` lays them out."""
    arrays = [np.asarray(x, dtype=float) for x in circuit]
    scalars, (r, tau) = np.broadcast_arrays(*arrays[:10]), np.broadcast_arrays(*arrays[10:])
    cshape = np.broadcast_shapes(scalars[0].shape, r.shape[:-1], tau.shape[:-1])
    n = math.prod(cshape)
    cols = [np.broadcast_to(x, cshape).reshape(n, 1) for x in scalars]
    cols += [np.broadcast_to(x, cshape + x.shape[-1:]).reshape(n, -1) for x in (r, tau)]
    return cshape, np.ascontiguousarray(np.concatenate(cols, axis=1))


def _row_keys(rows):
    return [row.tobytes() for row in rows]


def _gathered(pool: _CircuitResponse, at: np.ndarray, cshape: tuple) -> _CircuitResponse:
    """The response of the circuits at flat rows ``at`` of ``pool``, shaped ``cshape``: each
    circuit's arrays are its own (see _compute_circuit_response: no circuit's numbers depend
    on the others'), cut to the longest of their grids."""
    n_steps = int(np.max(pool.own.reshape(-1)[at], initial=1))
    cut = n_steps + 1

    def per(x):  # (circuit shape) arrays
        return np.array(np.broadcast_to(x, pool.cshape).reshape(-1)[at].reshape(cshape))

    def rows(x, steps=False):  # (circuit shape, ...) arrays
        flat = x.reshape((-1,) + x.shape[len(pool.cshape):])[at]
        flat = flat[:, :cut] if steps else flat
        return np.ascontiguousarray(flat).reshape(cshape + flat.shape[1:])

    out = _CircuitResponse(
        cshape, per(pool.i_ss), per(pool.i0), per(pool.rser), per(pool.pulse_energy),
        rows(pool.share), rows(pool.r), rows(pool.tau),
        *(rows(x, steps=True) for x in (pool.grid, pool.heat, pool.dt, pool.zero, pool.free,
                                     pool.rise_zero, pool.decay)),
        *(np.ascontiguousarray(x[:cut, at]) for x in (pool.decay_k, pool.rise_zero_k,
                                                      pool.grid_k)),
        n_steps, per(pool.own))
    return out


def _circuit_response(circuit, points_per_decade) -> _CircuitResponse:
    """The circuit part of :func:`stuck_on_transient`, remembered.

    A design search solves chunk after chunk of pulse widths over the same grid of series
    resistors and supply voltages: the circuit's arrays are equal from chunk to chunk, so
    their response is computed once (the key is the arrays' exact bytes; the result is
    the same arrays the computation gives, read-only). The search's later evaluations (its
    best rows, their neighbours, its frontier, its verification) meet circuits of that grid
    again, in other arrays: their rows are taken from the largest response computed so far
    when every circuit is found there (by its parameters' exact bytes), the same numbers
    as computing them (each circuit's response is its own).
    """
    key = _circuit_key(circuit, points_per_decade)
    if _LAST_CIRCUIT and _LAST_CIRCUIT[0][0] == key:
        return _LAST_CIRCUIT[0][1]
    out = None
    cshape, rows = _circuit_params(circuit)
    if _POOL and _POOL[0][0] == points_per_decade:
        index = _POOL[0][1]
        at = [index.get(k) for k in _row_keys(rows)]
        if None not in at:
            out = _gathered(_POOL[0][2], np.array(at, dtype=np.intp), cshape)
    if out is None:
        out = _compute_circuit_response(circuit, points_per_decade)
        if not _POOL or len(_POOL[0][1]) < rows.shape[0]:
            index = {k: i for i, k in enumerate(_row_keys(rows))}
            _POOL[:] = [(points_per_decade, index, out)]
    for x in out[1:-2]:
        x.setflags(write=False)
    _LAST_CIRCUIT[:] = [(key, out)]
    return out


def _compute_circuit_response(circuit, points_per_decade) -> _CircuitResponse:
    (supply_voltage, capacitance, esr, series_resistor, on_resistance, current_limit, n_vt,
     saturation_current, led_series_resistance, efficiency, resistances,
     time_constants) = circuit
    vs, c, esr_, rser, ron, ib, a, i_s, rs, eff = np.broadcast_arrays(
        *[np.asarray(x, dtype=float) for x in (
            supply_voltage, capacitance, esr, series_resistor, on_resistance, current_limit,
            n_vt, saturation_current, led_series_resistance, efficiency)])
    r = np.asarray(resistances, dtype=float)
    tau = np.asarray(time_constants, dtype=float)
    cshape = np.broadcast_shapes(vs.shape, r.shape[:-1], tau.shape[:-1])
    vs, c, esr_, rser, ron, ib, a, i_s, rs, eff = (
        np.broadcast_to(x, cshape) for x in (vs, c, esr_, rser, ron, ib, a, i_s, rs, eff))
    r, tau = (np.broadcast_to(x, cshape + x.shape[-1:]) for x in np.broadcast_arrays(r, tau))

    def discharge(t):
        return pulse_operating_point(vs, c, esr_, rser, ron, ib, t, a, i_s, rs)

    steady = stuck_on_state(vs, ib, rser, ron, a, i_s, rs)
    i_ss = np.asarray(steady.current, dtype=float)
    i0 = np.asarray(discharge(1.0).peak_current, dtype=float)
    r_tot = rs + esr_ + rser + ron
    t_rc = c * (r_tot + a / (i0 + i_s))  # shortest local discharge time constant
    with np.errstate(divide="ignore"):
        t_slow = c * (r_tot + a / (ib + i_s))  # longest, near the boost limit
    droops = i0 > ib
    # Resistor: the dump's energy above the steady dissipation.
    t_end = np.minimum(DISCHARGE_END * t_slow, TAIL_FACTOR * t_rc)
    i2t = np.asarray(discharge(t_end).i2t, dtype=float)
    pulse_energy = np.where(droops, rser * np.maximum(i2t - i_ss**2 * t_end, 0.0), 0.0)
    # Junction: exact Foster steps under the interval-mean heat on a log-spaced grid.
    rth = np.sum(r, axis=-1)
    share = r / rth[..., None]
    t_lo = 1e-3 * np.minimum(np.min(tau, axis=-1), t_rc)
    t_hi = DISCHARGE_END * np.max(tau, axis=-1)
    decades = np.log10(t_hi / t_lo)
    # Each circuit's own number of steps (what it gets solved alone: a candidate's figures
    # do not depend on the circuits solved beside it); the shorter grids are padded to the
    # longest by repeating their last time, a step of no length and no heat that changes
    # nothing (the same rise again: neither a higher peak nor a first crossing).
    own = np.maximum(np.ceil(points_per_decade * np.maximum(decades, 1.0)), 1.0)
    own = np.where(np.isfinite(own), own, 1.0).astype(np.int64)
    n_steps = int(np.max(own, initial=1))
    step = decades / own  # per circuit, at most 1/points_per_decade decades
    index = np.arange(n_steps + 1)
    padding = index > own[..., None]
    grid = t_lo[..., None] * 10.0 ** (step[..., None] * np.minimum(index, own[..., None]))
    # LED energy up to each grid time, the grid axis in chunks of about 2**20 elements.
    energy = np.empty(grid.shape)
    per = max(1, (1 << 20) // max(1, math.prod(cshape)))
    cols = [x[..., None] for x in (vs, c, esr_, rser, ron, ib, a, i_s, rs)]
    for j in range(0, n_steps + 1, per):
        energy[..., j:j + per] = pulse_operating_point(
            *cols[:6], grid[..., j:j + per], *cols[6:]).led_energy
    dt = np.diff(grid, axis=-1, prepend=0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        heat = (1.0 - eff)[..., None] * np.diff(energy, axis=-1, prepend=0.0) / dt
    heat = np.where(padding, 0.0, heat)
    # Zero-state response of each term after each step (circuit shape, steps, terms).
    # (foster_advance step by step: its target and decay factors for every step at once,
    # then the recurrence, steps first so each step is one run of memory)
    target = np.moveaxis(heat, -1, 0)[..., None] * r  # (steps, circuit, terms)
    factor = np.exp(-np.moveaxis(dt, -1, 0)[..., None] / tau)
    steps_first = np.empty(target.shape)
    state = np.zeros(r.shape)
    gap = np.empty(r.shape)
    for k in range(n_steps + 1):
        np.subtract(state, target[k], out=gap)
        np.multiply(gap, factor[k], out=gap)
        state = steps_first[k]
        np.add(target[k], gap, out=state)
    zero = np.ascontiguousarray(np.moveaxis(steps_first, 0, -2))
    free = np.exp(-grid[..., None] / tau[..., None, :])  # free decay of a unit initial state
    rise_zero = np.sum(zero, axis=-1)  # (circuit, steps)
    decay = np.sum(share[..., None, :] * free, axis=-1)  # (circuit, steps)
    return _CircuitResponse(cshape, i_ss, i0, np.array(rser), pulse_energy, share,
                            np.array(r), np.array(tau), grid, heat, dt, zero, free,
                            rise_zero, decay, *(np.ascontiguousarray(
                                x.reshape(math.prod(cshape), -1).T) for x in (
                                    decay, rise_zero, grid)), n_steps,
                            np.broadcast_to(own, cshape).copy())
