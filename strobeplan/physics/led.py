"""LED forward voltage, its fit to datasheet points, the pulse operating point, pulse ratings.

The LED is a Shockley diode with an apparent ideality and a series resistance,
``V = n*Vt*ln(I/Is + 1) + I*Rs``. The product ``n*Vt`` is carried as one parameter
(``n_vt``, volts) because only the product enters; InGaN and AlInGaP LEDs show apparent
idealities of 2-7 [1].

The pulse operating point treats the gate as an ideal switch (edges are handled by
``physics.switching`` and ``physics.exposure``) and the boost converter as an ideal
current source at its current limit while the capacitor is below its set voltage [2].
The capacitor-discharge ODE is solved exactly: with ``u = ln(I - Ib)`` the time along
the discharge is a closed-form function of ``u``, so the end-of-pulse current follows
from one monotone root find, and the integrals over the pulse (LED energy, ``I^2 t``)
are smooth in ``u`` and taken by Gauss-Legendre quadrature. Everything broadcasts over
arrays of candidate rigs.

All quantities SI: amperes, volts, ohms, farads, seconds, joules, kelvin.

References
----------
1. E. F. Schubert, *Light-Emitting Diodes*, 2nd ed., Cambridge University Press (2006),
   ch. 4 "Electrical properties". doi:10.1017/CBO9780511790546
2. W. Shockley, "The theory of p-n junctions in semiconductors and p-n junction
   transistors", Bell Syst. Tech. J. 28(3), 435-489 (1949).
   doi:10.1002/j.1538-7305.1949.tb03645.x
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .arrays import compact, unique

BOLTZMANN = 1.380649e-23  # [J/K], CODATA 2018 exact
ELEMENTARY_CHARGE = 1.602176634e-19  # [C], CODATA 2018 exact
DEFAULT_IDEALITY = 2.0  # apparent ideality assumed with < 3 datasheet points (common practice)


def thermal_voltage(temperature):
    """Thermal voltage kT/q.

    Parameters
    ----------
    temperature : float or ndarray
        Junction temperature. [K]

    Returns
    -------
    float or ndarray
        Thermal voltage. [V]

    References
    ----------
    1. Shockley (1949), eq. for the ideal diode; CODATA 2018 constants.
    """
    return BOLTZMANN * np.asarray(temperature, dtype=float) / ELEMENTARY_CHARGE


class DiodeFit(NamedTuple):
    """Fitted LED forward-voltage model.

    n_vt : float -- ideality times thermal voltage. [V]
    saturation_current : float -- Shockley saturation current. [A]
    series_resistance : float -- series resistance. [ohm]
    assumed : str -- what was assumed to make the fit determinate ("" if nothing).
    """

    n_vt: float
    saturation_current: float
    series_resistance: float
    assumed: str


def forward_voltage(current, n_vt, saturation_current, series_resistance):
    """Forward voltage of the LED at a current.

    Parameters
    ----------
    current : float or ndarray
        Forward current (>= 0). [A]
    n_vt : float or ndarray
        Ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        Saturation current. [A]
    series_resistance : float or ndarray
        Series resistance. [ohm]

    Returns
    -------
    float or ndarray
        Forward voltage ``n*Vt*ln(I/Is + 1) + I*Rs``. [V]

    References
    ----------
    1. Schubert (2006), sec. 4.2, diode equation with series resistance.
    """
    i = np.asarray(current, dtype=float)
    return n_vt * np.log1p(i / saturation_current) + i * series_resistance


def current_at_voltage(voltage, n_vt, saturation_current, series_resistance, iterations=60):
    """Current through a diode plus series resistance at a given terminal voltage.

    Solves ``v = a*u + R*Is*expm1(u)`` for ``u = ln(I/Is + 1)`` by Newton's method. The
    right-hand side is convex and increasing in ``u``; starting from an upper bound
    (the smaller of the diode-only and resistor-only solutions) the iterates decrease
    monotonically to the root. Each element stops on its own converged step, so its
    current does not depend on the other elements of the array.
    Reverse bias is not modelled: ``voltage <= 0`` gives 0 A.

    Parameters
    ----------
    voltage : float or ndarray
        Voltage across the diode and its series resistance. [V]
    n_vt : float or ndarray
        Ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        Saturation current. [A]
    series_resistance : float or ndarray
        Total series resistance (LED plus any external resistance). [ohm]
    iterations : int
        Maximum Newton iterations (each element stops once its own step is below 1e-14 of
        ``max(1, u)``).

    Returns
    -------
    float or ndarray
        Forward current. [A]

    References
    ----------
    1. Schubert (2006), sec. 4.2.
    """
    v = np.clip(np.asarray(voltage, dtype=float), 0.0, None)
    a, i_s, r = np.broadcast_arrays(
        np.asarray(n_vt, dtype=float),
        np.asarray(saturation_current, dtype=float),
        np.asarray(series_resistance, dtype=float),
    )
    v, a, i_s, r = np.broadcast_arrays(v, a, i_s, r)
    ris = r * i_s
    with np.errstate(divide="ignore", invalid="ignore"):
        u_resistor = np.log1p(v / ris)  # inf when r == 0 (NaN at v == 0 too: not taken)
    has_r = ris > 0
    u = np.where(has_r, np.minimum(v / a, u_resistor), v / a)
    # Without resistance u = v/a is already exact. Each element is iterated until its own
    # step is negligible, and no further: its current is the same whatever else is in the
    # array (a design search's candidate gets the bits ``check`` gives it alone). The
    # unconverged elements' arguments are narrowed as the others finish.
    uf = u.reshape(-1)
    if has_r.all():  # (every element iterates: its arguments as they are, not gathered)
        active = np.arange(uf.size)
        part = [_narrowed(x, np.ravel) for x in (a, ris, v)]
    else:
        active = np.flatnonzero(has_r)
        part = [_narrowed(x, lambda y: y.ravel()[active]) for x in (a, ris, v)]
    ua = uf[active]
    for _ in range(iterations):
        if active.size == 0:
            break
        a_, ris_, v_ = part
        e = np.expm1(ua)
        g = a_ * ua + ris_ * e - v_
        dg = a_ + ris_ * (e + 1.0)
        step = g / dg
        ua = ua - step
        done = np.abs(step) <= 1e-14 * np.maximum(1.0, np.abs(ua))
        if done.all():
            uf[active] = ua
            break
        uf[active[done]] = ua[done]
        more = ~done
        active, ua = active[more], ua[more]
        part = [x[more] if x.ndim else x for x in part]
    else:
        uf[active] = ua  # (the iterations ran out: the last iterate)
    with np.errstate(over="ignore"):
        out = i_s * np.expm1(np.maximum(uf.reshape(u.shape), 0.0))
    return out[()] if out.ndim == 0 else out


def _narrowed(x, take):
    """``x``'s one value as a 0-d array when every element is that broadcast value (e.g. a
    circuit constant over a grid), else ``take(x)`` (its elements for the active set)."""
    c = compact(x)
    return c.reshape(()) if c.size == 1 else take(x)


def _fit_residuals(x, free, fixed, i, v):
    """Residuals and Jacobian of the diode model in the unknowns (a, ln Is, Rs)."""
    p = fixed.copy()
    p[free] = x
    a, ln_is, rs = p
    y = i * np.exp(-ln_is)
    lg = np.log1p(y)
    res = a * lg + rs * i - v
    jac = np.stack([lg, -a * y / (1.0 + y), i], axis=1)[:, free]
    return res, jac


def fit_forward_voltage(currents, voltages, series_resistance=None, temperature=298.15,
                        ideality=DEFAULT_IDEALITY):
    """Fit the diode model to 1-3 datasheet (current, voltage) points.

    What is determined and what is assumed:

    - 3 points, no ``series_resistance``: ``n_vt``, ``Is`` and ``Rs`` solved exactly. If
      the exact solution is unphysical (``Rs < 0`` or ``n_vt <= 0``), ``Rs`` is set to 0
      and ``n_vt``, ``Is`` are fitted by least squares (stated in ``assumed``).
    - 3 points with ``series_resistance``: ``n_vt`` and ``Is`` by least squares.
    - 2 points with ``series_resistance``: ``n_vt`` and ``Is`` exactly.
    - 2 points without: the apparent ideality ``ideality`` (default 2, common practice)
      is assumed at ``temperature`` and ``Is``, ``Rs`` are solved; if that gives
      ``Rs < 0``, ``Rs = 0`` and ``n_vt`` is solved instead.
    - 1 point: the ideality is assumed and ``Rs`` is ``series_resistance`` or 0.
      ``Rs = 0`` under-estimates the voltage at high current, so the predicted overdrive
      current is high: conservative for heating, optimistic for brightness.

    The fit is per LED (datasheet points are scalars); it does not broadcast.

    Parameters
    ----------
    currents : sequence of float
        Datasheet forward currents (distinct, > 0). [A]
    voltages : sequence of float
        Forward voltages at those currents. [V]
    series_resistance : float, optional
        Known series resistance. [ohm]
    temperature : float
        Junction temperature for the assumed ideality. [K]
    ideality : float
        Apparent ideality assumed when the points do not determine it. [1]

    Returns
    -------
    DiodeFit
        ``n_vt`` [V], ``saturation_current`` [A], ``series_resistance`` [ohm], ``assumed``.

    References
    ----------
    1. Schubert (2006), sec. 4.2-4.4 (diode equation, ideality, series resistance).
    """
    i = np.asarray(currents, dtype=float).ravel()
    v = np.asarray(voltages, dtype=float).ravel()
    order = np.argsort(i)
    i, v = i[order], v[order]
    if i.size != v.size or not 1 <= i.size <= 3:
        raise ValueError("fit_forward_voltage needs 1 to 3 (current, voltage) points")
    if np.any(i <= 0) or unique(i).size != i.size:
        raise ValueError("datasheet currents must be positive and distinct")
    n_vt_assumed = ideality * float(thermal_voltage(temperature))
    assumed = []
    if i.size == 3 and series_resistance is None:
        free = np.array([True, True, True])
        fixed = np.zeros(3)
    elif series_resistance is not None and i.size >= 2:
        free = np.array([True, True, False])
        fixed = np.array([0.0, 0.0, float(series_resistance)])
        assumed.append("series resistance given")
    elif i.size == 2:
        free = np.array([False, True, True])
        fixed = np.array([n_vt_assumed, 0.0, 0.0])
        assumed.append(f"ideality {ideality:g} assumed")
    else:
        rs = 0.0 if series_resistance is None else float(series_resistance)
        free = np.array([False, True, False])
        fixed = np.array([n_vt_assumed, 0.0, rs])
        assumed.append(f"ideality {ideality:g} assumed")
        assumed.append("series resistance given" if series_resistance is not None
                       else "series resistance 0 assumed")

    x = _solve_fit(free, fixed, i, v)
    p = fixed.copy()
    p[free] = x
    if -1e-9 * float(np.max(v / i)) < p[2] < 0:
        p[2] = 0.0  # round-off around an exact zero
    if p[2] < 0 or p[0] <= 0:
        # Unphysical: drop the series resistance and fit the ideality instead.
        free = np.array([True, True, False])
        fixed = np.array([0.0, 0.0, 0.0])
        if i.size == 1:
            free = np.array([False, True, False])
            fixed = np.array([n_vt_assumed, 0.0, 0.0])
        x = _solve_fit(free, fixed, i, v)
        p = fixed.copy()
        p[free] = x
        assumed.append("series resistance 0 (fit gave a negative value)")
    return DiodeFit(float(p[0]), float(np.exp(p[1])), float(p[2]), "; ".join(assumed))


def _solve_fit(free, fixed, i, v):
    """Gauss-Newton on the diode model from a linearised start (ln(I/Is + 1) ~ ln I - ln Is)."""
    # Linear start: v = a*ln(i) - a*ln_is + rs*i  with unknowns (a, c = -a ln_is, rs).
    cols = np.stack([np.log(i), np.ones_like(i), i], axis=1)
    known = ~free
    rhs = v - cols[:, known] @ np.array([fixed[0], 0.0, fixed[2]])[known]
    sel = free.copy()
    sol, *_ = np.linalg.lstsq(cols[:, sel], rhs, rcond=None)
    start = fixed.copy()
    k = 0
    if free[0]:
        start[0] = sol[k]
        k += 1
    a0 = start[0] if start[0] > 0 else 0.05
    start[0] = a0
    c = sol[k] if free[1] else 0.0
    k += 1 if free[1] else 0
    start[1] = -c / a0
    if free[2]:
        start[2] = sol[k]
    x = start[free]
    for _ in range(100):
        res, jac = _fit_residuals(x, free, fixed, i, v)
        dx, *_ = np.linalg.lstsq(jac, -res, rcond=None)
        x = x + dx
        if np.all(np.abs(dx) <= 1e-13 * np.maximum(1.0, np.abs(x))):
            break
    return x


class OperatingPoint(NamedTuple):
    """Result of :func:`pulse_operating_point` (arrays broadcast over candidates).

    peak_current [A], charge [C] (through the LED), led_energy [J] (electrical, into the
    LED incl. its series resistance), end_voltage [V] (ideal capacitor voltage at the end of
    the pulse), droop [V] (capacitor fall over the pulse, ESR step excluded), mean_current
    [A], end_current [A], i2t [A^2 s] (integral of I^2, for resistor and switch losses).
    """

    peak_current: np.ndarray
    charge: np.ndarray
    led_energy: np.ndarray
    end_voltage: np.ndarray
    droop: np.ndarray
    mean_current: np.ndarray
    end_current: np.ndarray
    i2t: np.ndarray


_PI2_6 = np.pi**2 / 6.0
# Gauss-Legendre nodes and weights of order 6 on [-1, 1] (Abramowitz & Stegun, table 25.4),
# written out to the last bit of numpy.polynomial.legendre.leggauss(6) (tests/physics/
# test_led.py compares them), which would import numpy.polynomial on every check.
_GL6 = (np.array([-0.9324695142031519, -0.6612093864662645, -0.2386191860831969,
                  0.2386191860831969, 0.6612093864662645, 0.9324695142031519]),
        np.array([0.17132449237917027, 0.3607615730481387, 0.46791393457269104,
                  0.46791393457269104, 0.3607615730481387, 0.17132449237917027]))
# B_n / (n + 1)! for the Bernoulli-number series of the dilogarithm, n = 0, 1, 2, 4, ... 20.
_LI2_COEF = np.array([
    1.0, -1.0 / 4.0, 1.0 / 36.0, 0.0, -1.0 / 3600.0, 0.0, 1.0 / 211680.0, 0.0,
    -1.0 / 10886400.0, 0.0, 1.0 / 526901760.0, 0.0, -4.064761645144226e-11, 0.0,
    8.921691020456453e-13, 0.0, -1.993929586072108e-14, 0.0, 4.518980029619918e-16, 0.0,
    -1.035651761218125e-17,
])


def dilog_neg(ln_y):
    """Dilogarithm at a negative argument, ``Li2(-y)`` with ``y = exp(ln_y)``.

    For ``y <= 1`` the Bernoulli-number series in ``w = -ln(1 + y)``; for ``y > 1`` the
    inversion formula ``Li2(-y) = -pi^2/6 - ln(y)^2/2 - Li2(-1/y)``. Takes ``ln y`` so that
    ``y`` may be far outside the floating-point range.

    Parameters
    ----------
    ln_y : float or ndarray
        Natural logarithm of ``y`` (``y > 0``). [1]

    Returns
    -------
    float or ndarray
        ``Li2(-y)``. [1]

    References
    ----------
    1. L. Lewin, *Polylogarithms and Associated Functions*, North-Holland (1981),
       eqs. (1.12) (inversion) and (1.37) (Bernoulli series).
    """
    ly = np.asarray(ln_y, dtype=float)
    big = ly > 0
    z = np.exp(np.where(big, -ly, ly))
    w = -np.log1p(z)
    s = np.zeros_like(w)
    for c in _LI2_COEF[::-1]:  # Horner in w: sum c_n w^(n+1)
        s = s * w + c
    s = s * w
    return np.where(big, -_PI2_6 - 0.5 * ly * ly - s, s)


def _discharge_time(v, i0, ib, i_s, a, r_tot, c):
    """Time for the loop current to fall from i0 to ib + (i0 - ib)*e^-v (closed form).

    With ``B = Ib + Is``: ``t = C [R_tot v + (a/B) ln(1 + x)]``,
    ``x = (I0 - I) B / ((I - Ib)(I0 + Is)) = (e^v - 1) B / (I0 + Is)``.
    """
    b = ib + i_s
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_x = v + np.log(-np.expm1(-v)) + np.log(b) - np.log(i0 + i_s)
    return c * (r_tot * v + a / b * np.logaddexp(0.0, ln_x))


def pulse_operating_point(supply_voltage, capacitance, esr, series_resistor, on_resistance,
                          recharge_current, width, n_vt, saturation_current,
                          led_series_resistance):
    """Operating point of one flash: storage capacitor discharging into the LED string.

    Circuit: ideal capacitor ``C`` (at ``supply_voltage`` when the pulse starts, the boost
    having recharged it) in series with ``esr``; at its terminal the boost injects
    ``recharge_current`` (its current limit) and the string draws ``I`` through the series
    resistor, the LED and the switch's on-resistance (ideal switch, no edges). With
    ``F(I) = I*R_tot + n_vt*ln(I/Is + 1) - esr*Ib`` (``R_tot`` = LED + ESR + resistor + on
    resistance) the capacitor voltage is ``Vc = F(I)`` and ``C dVc/dt = -(I - Ib)``, so
    with ``u = ln(I - Ib)``, ``dt = -C F'(I) du``. This ODE is integrated exactly: the
    elapsed time, the charge, ``integral I^2 dt`` and the LED energy are closed-form in
    ``u`` (the LED energy through the dilogarithm); the end-of-pulse current is the root of
    ``t(u) = width`` (safeguarded Newton). No time steps, so no step-size error. If the
    boost alone can carry the string current (``I <= Ib`` at the start) the capacitor does
    not droop and the current is constant.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Capacitor voltage at the start of the pulse (boost set point). [V]
    capacitance : float or ndarray
        Storage capacitance. [F]
    esr : float or ndarray
        Equivalent series resistance of the capacitor. [ohm]
    series_resistor : float or ndarray
        Current-setting series resistor. [ohm]
    on_resistance : float or ndarray
        Switch on-resistance. [ohm]
    recharge_current : float or ndarray
        Boost current limit, delivered while the capacitor is below its set point. [A]
    width : float or ndarray
        Gate-on time. [s]
    n_vt : float or ndarray
        LED ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        LED saturation current. [A]
    led_series_resistance : float or ndarray
        LED series resistance. [ohm]

    Returns
    -------
    OperatingPoint
        Peak current [A], charge [C], LED energy [J], end voltage [V], droop [V], mean
        current [A], end current [A], integral of I^2 [A^2 s].

    References
    ----------
    1. Schubert (2006), sec. 4.2 (LED I-V).
    2. Lewin (1981), dilogarithm identities used for the LED-energy integral.
    """
    return _pulse(supply_voltage, capacitance, esr, series_resistor, on_resistance,
                  recharge_current, width, n_vt, saturation_current, led_series_resistance)


def pulse_end(supply_voltage, capacitance, esr, series_resistor, on_resistance,
              recharge_current, width, n_vt, saturation_current, led_series_resistance):
    """Peak current and end voltage of one flash: :func:`pulse_operating_point`'s
    ``peak_current`` and ``end_voltage`` alone, by its arithmetic (the pulse's integrals,
    which a burst's flash-by-flash sag does not read, are not computed).

    Parameters
    ----------
    supply_voltage : float or ndarray
        Capacitor voltage at the start of the pulse. [V]
    capacitance : float or ndarray
        Storage capacitance. [F]
    esr : float or ndarray
        Equivalent series resistance of the capacitor. [ohm]
    series_resistor : float or ndarray
        Current-setting series resistor. [ohm]
    on_resistance : float or ndarray
        Switch on-resistance. [ohm]
    recharge_current : float or ndarray
        Boost current limit. [A]
    width : float or ndarray
        Gate-on time. [s]
    n_vt : float or ndarray
        LED ideality times thermal voltage. [V]
    saturation_current : float or ndarray
        LED saturation current. [A]
    led_series_resistance : float or ndarray
        LED series resistance. [ohm]

    Returns
    -------
    tuple of ndarray
        Peak current [A] and the ideal capacitor voltage at the end of the pulse [V].

    References
    ----------
    1. Schubert (2006), sec. 4.2 (LED I-V).
    """
    return _pulse(supply_voltage, capacitance, esr, series_resistor, on_resistance,
                  recharge_current, width, n_vt, saturation_current, led_series_resistance,
                  end_only=True)


def _pulse(supply_voltage, capacitance, esr, series_resistor, on_resistance, recharge_current,
           width, n_vt, saturation_current, led_series_resistance, end_only=False):
    """:func:`pulse_operating_point` (or, with ``end_only``, :func:`pulse_end`)."""
    vs, c, esr_, rser, ron, ib, tp, a, i_s, rs = np.broadcast_arrays(
        *[np.asarray(x, dtype=float) for x in (
            supply_voltage, capacitance, esr, series_resistor, on_resistance,
            recharge_current, width, n_vt, saturation_current, led_series_resistance)])
    r_tot = rs + esr_ + rser + ron
    # The start currents do not depend on the width: solve them once per circuit, not once
    # per width when an array of widths is broadcast against the circuits.
    circuit = np.broadcast_arrays(*[np.asarray(x, dtype=float) for x in (
        supply_voltage, esr, series_resistor, on_resistance, recharge_current, n_vt,
        saturation_current, led_series_resistance)])
    vs_c, esr_c, rser_c, ron_c, ib_c, a_c, is_c, rs_c = circuit
    # (r_tot's own sum when the circuit spans every candidate, e.g. a burst's flashes)
    r_c = r_tot if vs_c.shape == vs.shape else rs_c + esr_c + rser_c + ron_c
    # Start current if the capacitor supplies the difference I - Ib through its ESR.
    i0_cap = np.broadcast_to(current_at_voltage(vs_c + esr_c * ib_c, a_c, is_c, r_c),
                             vs.shape)
    droops = np.asarray(i0_cap > ib)
    # (every candidate drooping, e.g. a burst's later flashes: the boost-only branch below is
    # selected nowhere, so it is not solved)
    hold = not droops.all()
    if hold:
        # Start current if the boost carries the whole string (no capacitor current, no ESR
        # drop).
        i_hold = np.broadcast_to(current_at_voltage(vs_c, a_c, is_c, rs_c + rser_c + ron_c),
                                 vs.shape)
        i0 = np.where(droops, i0_cap, i_hold)
    else:
        i0 = np.array(i0_cap)

    # Safe placeholders where the capacitor does not droop.
    ib_d = np.where(droops, ib, 0.0) if hold else ib
    i0_d = np.where(droops, i0, 1.0) if hold else i0
    f_min = r_tot + a / (i0_d + i_s)  # smallest F'(I) along the discharge
    du = _solve_end(tp / (c * f_min), tp, i0_d, ib_d, i_s, a, r_tot, c, droops)  # t(hi) >= tp
    e0 = i0_d - ib_d
    e1 = e0 * np.exp(-du)
    de = -e0 * np.expm1(-du)  # e0 - e1 without cancellation
    d = ib_d + i_s  # X = I + Is = d + e^u
    x1 = d + e1
    dl = np.log1p(de / x1)  # ln X0 - ln X1
    vc_drop = r_tot * de + a * dl
    if end_only:
        return i0, vs - (np.where(droops, vc_drop, 0.0) if hold else vc_drop)
    with np.errstate(divide="ignore", invalid="ignore"):
        u0 = np.log(i0_d - ib_d)
    u1 = u0 - du
    i1 = ib_d + e1
    x0 = d + e0
    lx1 = np.log(x1)
    with np.errstate(divide="ignore"):
        ln_d = np.log(d)
    charge = c * vc_drop + ib_d * tp
    # integral of du/X from u1 to u0, times D:  ln((X-D)/X) difference
    d_inv_x = np.logaddexp(0.0, ln_d - u1) - np.logaddexp(0.0, ln_d - u0)
    i2_r = ib_d**2 * du + 2.0 * ib_d * de + 0.5 * de * (e0 + e1)
    i2_a = (ib_d - i_s) * du + de + i_s * (i_s / d) * d_inv_x
    i2t = c * (r_tot * i2_r + a * i2_a)
    # P1 = int ln X du (dilogarithm; short intervals by 6-node Gauss-Legendre, where the
    # difference of two dilogarithms would cancel), P2 = int X ln X du,
    # P3 = int (1 - Is/X) ln X du
    # (a form no candidate selects is not computed: e.g. a burst's short flashes)
    short = du < 0.5
    dp1_li = dp1_gl = 0.0
    if not short.all():
        dp1_li = ln_d * du - (dilog_neg(u0 - ln_d) - dilog_neg(u1 - ln_d))
    if short.any():
        gx, gw = _GL6
        un = 0.5 * (u0 + u1)[..., None] + 0.5 * du[..., None] * gx
        dp1_gl = 0.5 * du * np.sum(gw * np.logaddexp(ln_d[..., None], un), axis=-1)
    dp1 = np.where(short, dp1_gl, dp1_li)
    dp2 = de * (lx1 - 1.0) + x0 * dl + d * dp1  # [X ln X - X] difference + D*P1
    dp3 = (ib_d / d) * dp1 + (i_s / d) * 0.5 * dl * (2.0 * lx1 + dl)
    j = r_tot * (dp2 - i_s * dp1) + a * dp3  # int I ln(I + Is) F'(I) du
    e_led = rs * i2t + a * (c * j - np.log(i_s) * charge)

    charge = np.where(droops, charge, i0 * tp)
    i2t = np.where(droops, i2t, i0**2 * tp)
    if hold:
        e_led = np.where(droops, e_led, i0 * forward_voltage(i0, a, i_s, rs) * tp)
    i_end = np.where(droops, i1, i0)
    vc_drop = np.where(droops, vc_drop, 0.0)
    out = OperatingPoint(i0, charge, e_led, vs - vc_drop, vc_drop, charge / tp, i_end, i2t)
    if np.ndim(out.peak_current) == 0:
        return OperatingPoint(*(float(x) for x in out))
    return out


def _solve_end(hi, tp, i0, ib, i_s, a, r_tot, c, mask, iterations=100):
    """Root ``v`` of ``t(v) = tp`` on ``[0, hi]`` (t increasing), with active-set compaction.

    Solving for the e-folds ``v = ln((I0 - Ib)/(I1 - Ib))`` rather than for ``ln(I1 - Ib)``
    keeps full relative precision for tiny droops. Newton's method on ``ln t(v) - ln tp``
    (nearly linear where either the series resistance or the diode term dominates), with
    bisection when a step leaves the bracket.
    """
    v = np.array(hi, dtype=float)
    vf = v.ravel()
    active = np.flatnonzero(np.broadcast_to(mask, v.shape))
    # The unsolved candidates' arguments and bracket, narrowed as they finish (one value
    # broadcast to all, e.g. a circuit constant over a grid, stays one value); each
    # candidate's arithmetic is its own.
    part = [_narrowed(x, lambda y: np.broadcast_to(y, v.shape).ravel()[active])
            for x in (np.asarray(y, dtype=float) for y in (tp, i0, ib, i_s, a, r_tot, c))]
    va = vf[active]
    lo_a, hi_a = np.zeros(active.size), va.copy()
    for _ in range(iterations):
        if active.size == 0:
            break
        tp_, i0_, ib_, is_, a_, r_, c_ = part
        t = _discharge_time(va, i0_, ib_, is_, a_, r_, c_)
        e = (i0_ - ib_) * np.exp(-va)
        dt = c_ * (r_ + a_ / (ib_ + e + is_))
        big = t > tp_
        lo_a = np.where(big, lo_a, va)
        hi_a = np.where(big, va, hi_a)
        with np.errstate(divide="ignore", invalid="ignore"):
            new = va - (np.log(t) - np.log(tp_)) * t / dt
        inside = (new > lo_a) & (new < hi_a)
        new = np.where(inside, new, 0.5 * (lo_a + hi_a))
        done = (np.abs(t - tp_) <= 1e-13 * tp_) | (np.abs(new - va) <= 1e-15 * va)
        vf[active[done]] = va[done]
        if done.all():
            return v
        more = ~done
        active, va, lo_a, hi_a = active[more], new[more], lo_a[more], hi_a[more]
        part = [x[more] if x.ndim else x for x in part]
    vf[active] = va  # (the iterations ran out: the last iterate)
    return v


def rated_pulse_current(width, duty, table_width, table_duty, table_current):
    """Allowed peak current from a datasheet pulse-rating table.

    Each duty in the table is one curve of current against pulse width, interpolated
    linearly in log(width)-log(current); below its shortest width it is held at the
    shortest entry (no credit for shorter pulses), beyond its longest width it is
    extrapolated along the last segment (flagged as outside). A duty
    between two table duties uses the curve of the next higher duty (the lower current:
    conservative); below the lowest it uses the lowest-duty curve (conservative). The
    point is ``inside`` the table when its width is not beyond the chosen curve's longest
    width (shorter pulses are never rated lower, common practice) and its duty is not
    above the highest table duty.

    Parameters
    ----------
    width : float or ndarray
        Planned pulse width. [s]
    duty : float or ndarray
        Planned duty cycle (fraction). [1]
    table_width, table_duty, table_current : sequence of float
        The table rows: pulse width [s], duty [1], allowed peak current [A].

    Returns
    -------
    current : float or ndarray
        Allowed peak current. [A]
    inside : bool or ndarray
        True when no extrapolation beyond the table was needed.

    References
    ----------
    1. LED datasheet practice: peak pulsed current vs pulse duration at stated duty
       cycles (e.g. "tp <= 0.1 ms, D <= 1/10"); log-log interpolation, common practice.
    """
    tw = np.asarray(table_width, dtype=float).ravel()
    td = np.asarray(table_duty, dtype=float).ravel()
    ti = np.asarray(table_current, dtype=float).ravel()
    w = np.asarray(width, dtype=float)
    d = np.asarray(duty, dtype=float)
    w, d = np.broadcast_arrays(w, d)
    duties = unique(td)
    lw = np.log(w)
    curves, w_max = [], []
    for dv in duties:  # a handful of table duties, not candidates
        m = td == dv
        x, y = np.log(tw[m]), np.log(ti[m])
        o = np.argsort(x)
        x, y = x[o], y[o]
        if x.size == 1:
            val = np.full(lw.shape, y[0])
        else:
            val = np.interp(lw, x, y)  # held at the shortest entry below the table
            right = y[-1] + (lw - x[-1]) * (y[-1] - y[-2]) / (x[-1] - x[-2])
            val = np.where(lw > x[-1], right, val)
        curves.append(val)
        w_max.append(x[-1])
    curves = np.stack(curves, axis=-1)
    k = np.clip(np.searchsorted(duties, d, side="left"), 0, duties.size - 1)
    current = np.exp(np.take_along_axis(curves, k[..., None], axis=-1)[..., 0])
    inside = (lw <= np.asarray(w_max)[k] + 1e-12) & (d <= duties[-1] * (1 + 1e-12))
    if current.ndim == 0:
        return current[()], bool(inside)
    return current, inside
