"""Resistive divider between two logic families: worst case and search over an E-series.

A controller output (the *source* family) drives a camera or gate-driver input (the
*destination* family) through a resistive divider: ``top`` from the output to the input node,
``bottom`` from the node to ground. Everything is SI: volts, amperes, ohms, farads, seconds;
tolerances are fractions (1 % -> 0.01).

The worst case is exact over the whole box of the source's supply range and both resistors'
tolerances, each point with the source's guarantee at that point's own current:

- lowest high level: the least node voltage over the box, the output at its guaranteed VOH
  for the current it delivers there (nothing is guaranteed above the family's rated output
  current), input leakage drawn out through the top resistor (:func:`_lowest_high_level`);
  with stepped guarantees this is either the corner (lowest supply, top at +tol, bottom at
  -tol) or a point where the current just passes a test current;
- highest high level: source at its highest supply with no output drop, top at -tol, bottom
  at +tol, leakage pushed in (that corner's own Thevenin resistance);
- the destination's VIH at its highest supply, its VIL and input maximum at its lowest.

References
----------
1. JEDEC JESD8C.01, "Interface Standard for Nominal 3 V/3.3 V Supply Digital Integrated
   Circuits" (2007): LVTTL and LVCMOS levels.
2. JEDEC JESD8-5A.01, "2.5 V +/- 0.2 V (Normal Range) and 1.8 V to 2.7 V (Wide Range) Power
   Supply Voltage and Interface Standard" (2007).
3. JEDEC JESD8-7A, "1.8 V +/- 0.15 V (Normal Range) and 1.2 V - 1.95 V (Wide Range) Power
   Supply Voltage and Interface Standard" (2006).
4. JEDEC JESD8-12A.01, "1.2 V +/- 0.1 V (Normal Range) and 0.8 - 1.3 V (Wide Range) Power
   Supply Voltage and Interface Standard" (2007).
5. JEDEC JESD7A, "Standard for Description of 54/74HCXXXX and 54/74HCTXXXX High-Speed CMOS
   Devices" (1986): 5 V CMOS levels.
6. IEC 60063:2015, "Preferred number series for resistors and capacitors".
"""

from __future__ import annotations

import numpy as np

from strobeplan.physics.arrays import unique
from strobeplan.physics.eseries import series_tolerance, series_values
from strobeplan.physics.logic_families import TOLERANT_INPUT_MAX, Family
from strobeplan.quickdc import dataclass

LN9 = float(np.log(9.0))  # 10-90 % rise of a first-order step = ln 9 * tau [1]
RANK_QUANTUM = 1e-3  # [V] margins are compared to 1 mV when ranking, then current decides




@dataclass(frozen=True)
class DividerCheck:
    """Worst-case figures of a divider (floats, or arrays of the candidates' shape).

    Levels in V, resistances in ohm, current in A, times in s; margins are positive when met.
    """

    top: np.ndarray | float  # [ohm] source -> node
    bottom: np.ndarray | float  # [ohm] node -> ground
    tolerance: float  # [1]
    ratio_nominal: np.ndarray | float  # [1]
    v_nominal: np.ndarray | float  # [V] source at nominal supply, unloaded, nominal resistors
    v_high_min: np.ndarray | float  # [V] NaN: nothing guaranteed (source overloaded)
    v_high_max: np.ndarray | float  # [V]
    v_low_max: np.ndarray | float  # [V]
    vih: float  # [V] destination VIH at its highest supply
    vil: float  # [V] destination VIL at its lowest supply
    input_max: float  # [V] destination input maximum at its lowest supply
    margin_high: np.ndarray | float  # [V] v_high_min - vih
    margin_max: np.ndarray | float  # [V] input_max - v_high_max
    margin_low: np.ndarray | float  # [V] vil - v_low_max
    current: np.ndarray | float  # [A] largest current drawn from the source
    rated_current: float  # [A] source family's rated output current
    overloaded: np.ndarray | bool  # current above the rated current
    thevenin: np.ndarray | float  # [ohm] nominal (top + r_out) || bottom
    tau: np.ndarray | float  # [s] nominal thevenin * capacitance
    edge_time: np.ndarray | float  # [s] nominal 10-90 %: ln 9 * tau
    edge_time_max: np.ndarray | float  # [s] with the resistors at + tolerance
    delay_to_vih: np.ndarray | float  # [s] worst-case time from the step to crossing VIH
    edge_limit: float  # [s]
    feasible: np.ndarray | bool  # every worst-case condition met

    @property
    def margin(self):
        """The smaller of the VIH and input-maximum margins (the ranking score). [V]"""
        return np.fmin(self.margin_high, self.margin_max) if np.ndim(self.margin_high) else \
            float(min(self.margin_high, self.margin_max))

    def problems(self) -> tuple[str, ...]:
        """Scalar check only: short reasons it fails, empty when feasible."""
        out = []
        if bool(self.overloaded):
            out.append(f"divider current {self.current * 1e3:.3g} mA exceeds the source's "
                       f"rated {self.rated_current * 1e3:.3g} mA: no high level guaranteed")
        if not self.margin_max >= 0:
            out.append(f"high level up to {self.v_high_max:.3f} V exceeds the input maximum "
                       f"{self.input_max:.3f} V")
        if not self.margin_high >= 0:
            out.append(f"high level down to {self.v_high_min:.3f} V is below VIH "
                       f"{self.vih:.3f} V")
        if not self.margin_low >= 0:
            out.append(f"low level up to {self.v_low_max:.3f} V is above VIL {self.vil:.3f} V")
        if not self.edge_time_max <= self.edge_limit:
            out.append(f"edge {self.edge_time_max * 1e9:.3g} ns is slower than the limit "
                       f"{self.edge_limit * 1e9:.3g} ns")
        return tuple(out)


def _scalar(x):
    return x if np.ndim(x) else x.item() if isinstance(x, np.ndarray | np.generic) else x


def _lowest_high_level(source: Family, rt_lo, rt_hi, rb_lo, rb_hi, ro, leak):
    """Lowest guaranteed node voltage over every supply in the source's range and every
    resistor within tolerance, each point with the guarantee at its own current. [V]

    With the output pin at ``V`` the node is ``f = (V - leak rt) rb/(rt + rb)``, which falls
    with ``rt`` and (for ``V > leak rt``) rises with ``rb``; the source current
    ``I = (vdd + leak rb)/(rt + rb + ro)`` rises with ``vdd`` and falls with both resistors.
    Guarantee ``g`` (levels ``L_g(vdd)`` falling as the test current rises) holds at least
    wherever ``I`` exceeds the previous test current ``I_(g-1)``, so the lowest level is the
    least over ``g`` of ``f`` with ``V = L_g(vdd)`` minimised over that set: the first
    guarantee at the corner (lowest supply, top at +tol, bottom at -tol); each later one on
    ``I = I_(g-1)`` with the bottom at -tol, where ``f`` is monotone along the curve
    ``vdd = I_(g-1) (rt + rb + ro) - leak rb``, so at its ends inside the box (top at either
    tolerance, or the supply at either end of its range). Exact for the model whenever the
    output level exceeds the leakage drop across the top resistor.
    """
    steps = sorted(source.voh, key=lambda g: g.current)
    vmin, vmax = source.vdd_min, source.vdd_max

    def node(level, vdd, rt, rb):
        return (level.at(vdd) - leak * rt) * rb / (rt + rb)

    first = steps[0].level
    low = np.fmin(node(first, vmin, rt_hi, rb_lo), node(first, vmin, rt_hi, rb_hi))
    rb = rb_lo
    for prev, g in zip(steps, steps[1:], strict=False):
        i_b = prev.current
        on_curve = []
        for rt in (rt_lo, rt_hi):  # the curve's supply at either top resistor
            vdd = i_b * (rt + rb + ro) - leak * rb
            on_curve.append((np.maximum(vdd, vmin), rt, vdd <= vmax))
        for vdd in (vmin, vmax):  # the top resistor where the curve meets either supply end
            rt = (vdd + leak * rb) / i_b - rb - ro
            on_curve.append((vdd, np.clip(rt, rt_lo, rt_hi), (rt >= rt_lo) & (rt <= rt_hi)))
        for vdd, rt, inside in on_curve:
            low = np.where(inside, np.fmin(low, node(g.level, vdd, rt, rb)), low)
    return low


def evaluate_divider(
    top,
    bottom,
    source: Family,
    destination: Family,
    tolerance: float,
    capacitance: float,
    *,
    tolerant: bool = False,
    tolerant_max: float = TOLERANT_INPUT_MAX,
    source_resistance: float = 0.0,
    leakage: float | None = None,
    edge_limit: float = np.inf,
) -> DividerCheck:
    """Worst-case levels, current and edge of a resistive divider between two families.

    Element-wise over arrays of ``top`` and ``bottom`` (broadcast together).

    Parameters
    ----------
    top : float or ndarray
        Resistor from the source output to the input node. [ohm]
    bottom : float or ndarray
        Resistor from the input node to ground. [ohm]
    source, destination : Family
        Driving and receiving logic families.
    tolerance : float
        Resistor tolerance, e.g. 0.01. [1]
    capacitance : float
        Input plus trace capacitance at the node. [F]
    tolerant : bool, optional
        The destination input is over-voltage tolerant (its maximum is ``tolerant_max``).
    tolerant_max : float, optional
        Input maximum of a tolerant input. [V]
    source_resistance : float, optional
        Source output resistance when known: the output is also modelled as its lowest
        supply behind this resistance (the lower of that and the guarantee counts), and it
        adds to the Thevenin resistance. [ohm]
    leakage : float, optional
        Destination input leakage magnitude; default the family's. [A]
    edge_limit : float, optional
        Longest acceptable 10-90 % edge (worst case). [s]

    Returns
    -------
    DividerCheck

    References
    ----------
    1. JESD8C.01 / JESD8-5A.01 / JESD8-7A / JESD8-12A.01 DC tables (levels).
    2. First-order RC step response: 10-90 % time ln(9)*R*C, time to reach V:
       -R*C*ln(1 - V/V_final).
    """
    rt = np.asarray(top, dtype=float)
    rb = np.asarray(bottom, dtype=float)
    tol = float(tolerance)
    ro = float(source_resistance)
    c = float(capacitance)
    leak_hi = destination.input_leakage_high if leakage is None else float(leakage)
    leak_lo = destination.input_leakage_low if leakage is None else float(leakage)

    rt_lo, rt_hi = rt * (1 - tol), rt * (1 + tol)
    rb_lo, rb_hi = rb * (1 - tol), rb * (1 + tol)
    ratio_nom = rb / (rt + rb)
    thevenin = (rt + ro) * rb / (rt + ro + rb)
    thevenin_max = (rt_hi + ro) * rb_hi / (rt_hi + ro + rb_hi)

    # largest current from the source: highest supply, both resistors at -tol, the input's
    # leakage drawn out of the node
    current = (source.vdd_max + leak_hi * rb_lo) / (rt_lo + rb_lo + ro)
    rated = source.rated_current
    overloaded = current > rated * (1 + 1e-12)

    v_high_min = np.where(overloaded, np.nan,
                          _lowest_high_level(source, rt_lo, rt_hi, rb_lo, rb_hi, ro, leak_hi))
    if ro > 0:  # the output as its lowest supply behind ro: a plain divider with top + ro
        model = (source.vdd_min - leak_hi * (rt_hi + ro)) * rb_lo / (rt_hi + ro + rb_lo)
        v_high_min = np.fmin(v_high_min, model)
    # highest levels: rb (V + leak rt)/(rt + rb) rises with rb and falls with rt (ro = 0)
    v_high_max = rb_hi * (source.vdd_max + leak_hi * rt_lo) / (rt_lo + rb_hi)
    v_low_max = rb_hi * (source.vol_max(0.0, source.vdd_max) + leak_lo * rt_lo) / (rt_lo + rb_hi)
    v_nominal = source.vdd_nominal * ratio_nom

    vih = destination.vih_worst
    vil = destination.vil_worst
    vin_max = destination.input_max(tolerant, tolerant_max)
    margin_high = v_high_min - vih
    margin_max = vin_max - v_high_max
    margin_low = vil - v_low_max

    tau = thevenin * c
    edge = LN9 * tau
    edge_max = LN9 * thevenin_max * c
    with np.errstate(divide="ignore", invalid="ignore"):
        reach = v_high_min > vih
        frac = np.where(reach, vih / np.where(reach, v_high_min, 1.0), 0.5)
        delay = np.where(reach, -thevenin_max * c * np.log1p(-frac), np.inf)

    feasible = ((margin_high >= 0) & (margin_max >= 0) & (margin_low >= 0) & ~overloaded
                & (edge_max <= edge_limit))
    s = _scalar
    return DividerCheck(
        top=s(rt), bottom=s(rb), tolerance=tol, ratio_nominal=s(ratio_nom),
        v_nominal=s(v_nominal), v_high_min=s(v_high_min), v_high_max=s(v_high_max),
        v_low_max=s(v_low_max), vih=vih, vil=vil, input_max=vin_max,
        margin_high=s(margin_high), margin_max=s(margin_max), margin_low=s(margin_low),
        current=s(current), rated_current=rated, overloaded=s(overloaded),
        thevenin=s(thevenin), tau=s(tau), edge_time=s(edge), edge_time_max=s(edge_max),
        delay_to_vih=s(delay), edge_limit=float(edge_limit), feasible=s(feasible),
    )


# ---------------------------------------------------------------------------------------------
# Search
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FailureCounts:
    """Why pairs fail: how many lie outside the worst-case ratio window, and how many of
    those inside fail each condition (a pair may fail several)."""

    outside_ratio_window: int
    below_vih: int
    over_input_max: int
    low_above_vil: int
    overloaded: int
    edge_too_slow: int


@dataclass(frozen=True)
class DividerSearch:
    """Result of :func:`search_dividers`: the ranked feasible pairs, or why there are none."""

    series: str
    tolerance: float  # [1]
    pairs_evaluated: int
    pairs_feasible: int
    best: tuple[DividerCheck, ...]  # ranked, each a scalar check; empty when none feasible
    closest: DividerCheck | None  # the best infeasible pair, when none is feasible
    failures: FailureCounts | None  # counted only when no pair is feasible
    reason: str | None  # why no pair is feasible
    recommendation: str | None  # what to do instead


TRANSLATOR_ADVICE = ("use a logic-level translator (a buffer powered from the destination's "
                     "supply) instead of a divider")


def search_dividers(
    source: Family,
    destination: Family,
    series: str = "E24",
    tolerance: float | None = None,
    capacitance: float = 10e-12,
    *,
    edge_limit: float = np.inf,
    tolerant: bool = False,
    tolerant_max: float = TOLERANT_INPUT_MAX,
    source_resistance: float = 0.0,
    leakage: float | None = None,
    count: int = 5,
    r_min: float = 10.0,
    r_max: float = 1e6,
    values=None,
) -> DividerSearch:
    """Every (top, bottom) pair of a series, worst-case checked and ranked.

    Feasible pairs are ranked by the smaller of the VIH and input-maximum margins (compared to
    1 mV), then by lower current, then by lower top and bottom (deterministic).

    Parameters
    ----------
    source, destination : Family
        Driving and receiving families.
    series : str, optional
        IEC 60063 series, default "E24".
    tolerance : float, optional
        Resistor tolerance; default the series' own (E24: 0.05). [1]
    capacitance : float, optional
        Node capacitance. [F]
    edge_limit : float, optional
        Longest acceptable worst-case 10-90 % edge. [s]
    tolerant, tolerant_max, source_resistance, leakage
        As in :func:`evaluate_divider`. [-, V, ohm, A]
    count : int, optional
        How many ranked pairs to return.
    r_min, r_max : float, optional
        Value range of both resistors, default 10 ohm to 1 Mohm. [ohm]
    values : ndarray, optional
        Candidate values instead of the series (same ranking rules). [ohm]

    Returns
    -------
    DividerSearch

    References
    ----------
    1. IEC 60063:2015 (values); see :func:`evaluate_divider` for the worst case.
    """
    tol = series_tolerance(series) if tolerance is None else float(tolerance)
    vals = series_values(series, r_min, r_max) if values is None else np.asarray(values, float)
    vals = unique(vals)  # sorted, so candidate order never depends on the caller's order
    kw = dict(tolerant=tolerant, tolerant_max=tolerant_max,
              source_resistance=source_resistance, leakage=leakage, edge_limit=edge_limit)
    n_pairs = vals.size**2

    # Exact pre-filter (a necessary condition, so no feasible pair is lost): the worst-case
    # high level can be no better than the light-load guarantee through the lowest ratio, and
    # no lower than the highest supply through the highest ratio. With x = top/bottom this
    # bounds top to [x_min, x_max] * bottom: a contiguous run of the sorted values per bottom.
    vih = destination.vih_worst
    voh_light = float(source.voh_min(0.0, source.vdd_min))
    k_low = vih / voh_light if voh_light > 0 else np.inf
    k_high = destination.input_max(tolerant, tolerant_max) / source.vdd_max
    slack = 1e-9
    if k_low >= 1:
        x_max = -1.0
    else:
        x_max = (1 - tol) * (1 - k_low) / ((1 + tol) * k_low) * (1 + slack)
    x_min = 0.0 if k_high >= 1 else (1 + tol) * (1 - k_high) / ((1 - tol) * k_high) * (1 - slack)
    lo = np.searchsorted(vals, x_min * vals, side="left")
    hi = np.searchsorted(vals, x_max * vals, side="right")
    runs = np.maximum(hi - lo, 0)
    bottom_idx = np.repeat(np.arange(vals.size), runs)
    starts = np.repeat(lo - np.concatenate(([0], np.cumsum(runs)[:-1])), runs)
    top_idx = np.arange(bottom_idx.size) + starts
    top, bottom = vals[top_idx], vals[bottom_idx]

    cand = evaluate_divider(top, bottom, source, destination, tol, capacitance, **kw)
    feasible = np.asarray(cand.feasible, dtype=bool)

    def scalar_check(t, b):
        return evaluate_divider(float(t), float(b), source, destination, tol, capacitance, **kw)

    n_feasible = int(np.count_nonzero(feasible))
    if n_feasible:
        idx = np.flatnonzero(feasible)
        score = np.floor(np.fmin(cand.margin_high, cand.margin_max)[idx] / RANK_QUANTUM)
        # lexsort: last key is primary -> score descending, then current, top, bottom ascending
        order = idx[np.lexsort((bottom[idx], top[idx], cand.current[idx], -score))][:count]
        best = tuple(scalar_check(top[i], bottom[i]) for i in order)
        return DividerSearch(series.upper(), tol, n_pairs, n_feasible, best, None, None,
                             None, None)

    # nothing feasible: count the failures among the pairs inside the ratio window (the rest
    # fail on the ratio alone) and find the closest pair (a guaranteed level first)
    if top.size:
        pool_check = cand
        p_top, p_bottom = top, bottom
    else:  # no value falls in the window: look at the whole grid once
        p_top = np.repeat(vals, vals.size)
        p_bottom = np.tile(vals, vals.size)
        pool_check = evaluate_divider(p_top, p_bottom, source, destination, tol, capacitance,
                                      **kw)
    failures = FailureCounts(
        outside_ratio_window=n_pairs - top.size,
        below_vih=int(np.count_nonzero(~(cand.margin_high >= 0))),
        over_input_max=int(np.count_nonzero(~(cand.margin_max >= 0))),
        low_above_vil=int(np.count_nonzero(~(cand.margin_low >= 0))),
        overloaded=int(np.count_nonzero(cand.overloaded)),
        edge_too_slow=int(np.count_nonzero(~(cand.edge_time_max <= edge_limit))),
    )
    p_score = np.floor(np.fmin(pool_check.margin_high, pool_check.margin_max) / RANK_QUANTUM)
    p_score = np.where(np.isnan(p_score), -np.inf, p_score)
    usable = ~np.asarray(pool_check.overloaded, dtype=bool)
    pool = np.flatnonzero(usable) if usable.any() else np.arange(p_top.size)
    first = pool[np.lexsort((p_bottom[pool], p_top[pool],
                             np.asarray(pool_check.current)[pool], -p_score[pool]))[0]]
    closest = scalar_check(p_top[first], p_bottom[first])
    reason = _why_none(source, destination, tol, closest, failures, n_pairs, tolerant,
                       tolerant_max)
    return DividerSearch(series.upper(), tol, n_pairs, 0, (), closest, failures, reason,
                         TRANSLATOR_ADVICE)


def _why_none(source, destination, tol, closest, failures, n, tolerant, tolerant_max):
    vih = destination.vih_worst
    voh_light = float(source.voh_min(0.0, source.vdd_min))
    if voh_light <= vih:
        return (f"the source guarantees at most {voh_light:.3f} V high, not above the "
                f"destination's VIH {vih:.3f} V: a divider can only lower a level")
    vin_max = destination.input_max(tolerant, tolerant_max)
    # the ratio k = bottom/(top+bottom) must keep k_min >= k_low (VIH from the weakest light-load
    # source) and k_max <= k_high (input maximum from the strongest); with x = top/bottom:
    # x <= (1-t)(1-k_low)/((1+t)k_low) and x >= (1+t)(1-k_high)/((1-t)k_high)
    k_low, k_high = vih / voh_light, vin_max / source.vdd_max
    if k_low > k_high:
        return (f"no divider ratio can work even with exact resistors: reaching VIH {vih:.3f} V "
                f"from the weakest source ({voh_light:.3f} V) needs at least {k_low:.4f}, "
                f"staying under the input maximum {vin_max:.3f} V from {source.vdd_max:.3f} V "
                f"allows at most {k_high:.4f}")
    if k_high < 1:
        x_max = (1 - tol) * (1 - k_low) / ((1 + tol) * k_low)
        x_min = (1 + tol) * (1 - k_high) / ((1 - tol) * k_high)
        if x_min > x_max:
            return (f"the worst-case divider ratio must stay within [{k_low:.4f}, "
                    f"{k_high:.4f}], narrower than the spread of {100 * tol:g} % resistors")
    why = "; ".join(closest.problems()) or "every pair fails a condition"
    f = failures
    return (f"none of {n} pairs meets every worst-case condition ({f.outside_ratio_window} "
            f"outside the ratio window; of the rest {f.below_vih} below VIH, "
            f"{f.over_input_max} over the input maximum, {f.overloaded} above the rated "
            f"current, {f.low_above_vil} low level above VIL, {f.edge_too_slow} edge too "
            f"slow); closest {closest.top:g}/"
            f"{closest.bottom:g} ohm: {why}")
