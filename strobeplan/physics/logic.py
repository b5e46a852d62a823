"""Trigger link: logic families, IEC 60063 resistor series, worst-case dividers, divider search.

A controller output (the *source* family) drives a camera or gate-driver input (the
*destination* family) through a resistive divider: ``top`` from the output to the input node,
``bottom`` from the node to ground. Everything is SI: volts, amperes, ohms, farads, seconds;
tolerances are fractions (1 % -> 0.01).

The worst case is taken corner by corner (the divider ratio is monotone in each resistor, the
levels are monotone in each supply), so the bounds below are exact for the model:

- lowest high level: source at its lowest supply, its guaranteed VOH *at the divider's
  largest current* (nothing is guaranteed above the family's rated output current), top at
  +tol, bottom at -tol, input leakage drawn out through the largest Thevenin resistance;
- highest high level: source at its highest supply with no output drop, top at -tol, bottom
  at +tol, leakage pushed in;
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

from dataclasses import dataclass, field

import numpy as np

LN9 = float(np.log(9.0))  # 10-90 % rise of a first-order step = ln 9 * tau [1]
INPUT_MAX_ABOVE_VDD = 0.3  # [V] input maximum = VDD + 0.3 V (common practice, datasheets)
TOLERANT_INPUT_MAX = 5.5  # [V] "5 V tolerant" inputs (common practice; the datasheet rules)
DEFAULT_LEAKAGE = 1e-6  # [A] CMOS input leakage, +/- 1 uA (common practice, from memory)
RANK_QUANTUM = 1e-3  # [V] margins are compared to 1 mV when ranking, then current decides

# ---------------------------------------------------------------------------------------------
# Logic families
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Level:
    """A threshold or guaranteed level: ``offset + fraction * VDD``. [V]"""

    offset: float = 0.0  # [V]
    fraction: float = 0.0  # [1] of the family's own supply

    def at(self, vdd):
        """The level at supply ``vdd`` [V] (float or ndarray). [V]"""
        return self.offset + self.fraction * np.asarray(vdd, dtype=float)


@dataclass(frozen=True)
class OutputGuarantee:
    """A guaranteed output level at a test current (VOH min or VOL max)."""

    current: float  # [A] magnitude of the test current
    level: Level  # [V]
    source: str = ""


@dataclass(frozen=True)
class Family:
    """A logic family: supply range, input thresholds, guaranteed output levels.

    ``voh``/``vol`` list the guarantees in ascending test current; a load between two test
    currents gets the guarantee of the heavier one, a load above the last (the *rated
    current*) gets none.
    """

    name: str
    vdd_nominal: float  # [V]
    vdd_min: float  # [V]
    vdd_max: float  # [V]
    vih: Level  # VIH min [V]
    vil: Level  # VIL max [V]
    voh: tuple[OutputGuarantee, ...]  # VOH min at each current
    vol: tuple[OutputGuarantee, ...]  # VOL max at each current
    input_leakage_high: float = DEFAULT_LEAKAGE  # [A] |input current| while high
    input_leakage_low: float = DEFAULT_LEAKAGE  # [A] |input current| while low
    input_max_above_vdd: float = INPUT_MAX_ABOVE_VDD  # [V]
    source: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def rated_current(self) -> float:
        """Largest output current with a guaranteed high level. [A]"""
        return max(g.current for g in self.voh)

    @property
    def vih_worst(self) -> float:
        """VIH at the highest supply (the level an input may need). [V]"""
        return float(self.vih.at(self.vdd_max))

    @property
    def vil_worst(self) -> float:
        """VIL at the lowest supply (the level an input may already read as high). [V]"""
        return float(self.vil.at(self.vdd_min))

    def input_max(self, tolerant: bool = False, tolerant_max: float = TOLERANT_INPUT_MAX):
        """Input maximum: VDD + 0.3 V at the lowest supply, or ``tolerant_max`` if tolerant. [V]"""
        if tolerant:
            return float(tolerant_max)
        return float(self.vdd_min + self.input_max_above_vdd)

    def voh_min(self, current, vdd=None):
        """Guaranteed lowest high output level at a load current (NaN: not guaranteed).

        Parameters
        ----------
        current : float or ndarray
            Magnitude of the current drawn from the output. [A]
        vdd : float or ndarray, optional
            The family's supply; default its lowest. [V]

        Returns
        -------
        float or ndarray
            VOH min, NaN where the current exceeds the rated current. [V]

        References
        ----------
        1. JESD8C.01, JESD8-5A.01, JESD8-7A, JESD8-12A.01 DC output tables.
        """
        return _guarantee(self.voh, current, self.vdd_min if vdd is None else vdd)

    def vol_max(self, current, vdd=None):
        """Guaranteed highest low output level at a sink current (NaN: not guaranteed).

        Parameters
        ----------
        current : float or ndarray
            Magnitude of the current sunk by the output. [A]
        vdd : float or ndarray, optional
            The family's supply; default its highest. [V]

        Returns
        -------
        float or ndarray
            VOL max, NaN where the current exceeds the largest test current. [V]

        References
        ----------
        1. JESD8C.01, JESD8-5A.01, JESD8-7A, JESD8-12A.01 DC output tables.
        """
        return _guarantee(self.vol, current, self.vdd_max if vdd is None else vdd)

    @classmethod
    def custom(
        cls,
        name: str,
        vdd: float,
        vih: float,
        vil: float,
        voh: float,
        vol: float,
        output_current: float,
        vdd_min: float | None = None,
        vdd_max: float | None = None,
        input_leakage: float = DEFAULT_LEAKAGE,
    ) -> Family:
        """A family from absolute thresholds (a part's datasheet).

        Parameters
        ----------
        name : str
            Label.
        vdd : float
            Nominal supply. [V]
        vih, vil : float
            Input thresholds VIH min and VIL max. [V]
        voh, vol : float
            Guaranteed VOH min and VOL max at ``output_current``. [V]
        output_current : float
            Test (rated) output current of ``voh`` and ``vol``. [A]
        vdd_min, vdd_max : float, optional
            Supply range; default +/- 10 % of ``vdd`` (common practice). [V]
        input_leakage : float, optional
            Input leakage magnitude, both levels. [A]
        """
        lo = 0.9 * vdd if vdd_min is None else vdd_min
        hi = 1.1 * vdd if vdd_max is None else vdd_max
        src = f"custom family {name!r} (the part's datasheet)"
        return cls(
            name=name, vdd_nominal=vdd, vdd_min=lo, vdd_max=hi,
            vih=Level(vih), vil=Level(vil),
            voh=(OutputGuarantee(output_current, Level(voh), src),),
            vol=(OutputGuarantee(output_current, Level(vol), src),),
            input_leakage_high=input_leakage, input_leakage_low=input_leakage, source=src,
        )


def _guarantee(points, current, vdd):
    i = np.asarray(current, dtype=float)
    v = np.asarray(vdd, dtype=float)
    out = np.full(np.broadcast_shapes(i.shape, v.shape), np.nan)
    # loop over the family's few guarantee points (not over elements): the lightest test
    # current that still covers the load wins
    for g in sorted(points, key=lambda g: g.current, reverse=True):
        out = np.where(i <= g.current, g.level.at(v), out)
    return out if out.ndim else float(out)


def _vdd_minus(x):
    return Level(offset=-x, fraction=1.0)


_J8C = ("JEDEC JESD8C.01 (3.3 V), table values as quoted in docs/references.md, "
        "'Logic levels (JEDEC)' [src2]")
_MEM = "from memory, not confirmed in the standard's text"

FAMILIES: dict[str, Family] = {
    "lvttl33": Family(
        name="lvttl33", vdd_nominal=3.3, vdd_min=3.0, vdd_max=3.6,
        vih=Level(2.0), vil=Level(0.8),
        voh=(OutputGuarantee(2e-3, Level(2.4), _J8C),),
        vol=(OutputGuarantee(2e-3, Level(0.4), _J8C),),
        source=_J8C + "; supply 3.0-3.6 V " + _MEM,
    ),
    "lvcmos33": Family(
        name="lvcmos33", vdd_nominal=3.3, vdd_min=3.0, vdd_max=3.6,
        vih=Level(2.0), vil=Level(0.8),
        voh=(
            OutputGuarantee(100e-6, _vdd_minus(0.2), _J8C),
            OutputGuarantee(2e-3, Level(2.4), "JESD8C LVTTL level at 2 mA, " + _MEM),
        ),
        vol=(
            OutputGuarantee(100e-6, Level(0.2), _J8C),
            OutputGuarantee(2e-3, Level(0.4), "JESD8C LVTTL level at 2 mA, " + _MEM),
        ),
        source=_J8C + "; supply 3.0-3.6 V " + _MEM,
        notes=("VDD - 0.2 V holds only up to 100 uA; above, the LVTTL 2.4 V at 2 mA level "
               "(most LVCMOS outputs meet it) is used; the part's datasheet rules",),
    ),
    "lvcmos25": Family(
        name="lvcmos25", vdd_nominal=2.5, vdd_min=2.3, vdd_max=2.7,
        vih=Level(1.7), vil=Level(0.7),
        voh=(
            OutputGuarantee(100e-6, Level(2.1), "JESD8-5, " + _MEM),
            OutputGuarantee(1e-3, Level(2.0), "JESD8-5 [src2]"),
            OutputGuarantee(2e-3, Level(1.7), "JESD8-5, " + _MEM),
        ),
        vol=(
            OutputGuarantee(100e-6, Level(0.2), "JESD8-5, " + _MEM),
            OutputGuarantee(1e-3, Level(0.4), "JESD8-5 [src2]"),
            OutputGuarantee(2e-3, Level(0.7), "JESD8-5, " + _MEM),
        ),
        source="JEDEC JESD8-5A.01 [src2]; supply 2.3-2.7 V " + _MEM,
    ),
    "lvcmos18": Family(
        name="lvcmos18", vdd_nominal=1.8, vdd_min=1.65, vdd_max=1.95,
        vih=Level(fraction=0.65), vil=Level(fraction=0.35),
        voh=(
            OutputGuarantee(100e-6, _vdd_minus(0.2), "JESD8-7A, " + _MEM),
            OutputGuarantee(2e-3, _vdd_minus(0.45), "JESD8-7A [src2]"),
        ),
        vol=(
            OutputGuarantee(100e-6, Level(0.2), "JESD8-7A, " + _MEM),
            OutputGuarantee(2e-3, Level(0.45), "JESD8-7A [src2]"),
        ),
        source="JEDEC JESD8-7A [src2]; supply 1.65-1.95 V " + _MEM,
    ),
    "lvcmos12": Family(
        name="lvcmos12", vdd_nominal=1.2, vdd_min=1.1, vdd_max=1.3,
        vih=Level(fraction=0.65), vil=Level(fraction=0.35),
        voh=(
            OutputGuarantee(100e-6, _vdd_minus(0.1), "JESD8-12A, " + _MEM),
            OutputGuarantee(1e-3, Level(fraction=0.75), "JESD8-12A [src2]"),
        ),
        vol=(
            OutputGuarantee(100e-6, Level(0.1), "JESD8-12A, " + _MEM),
            OutputGuarantee(1e-3, Level(fraction=0.25), "JESD8-12A [src2]"),
        ),
        source="JEDEC JESD8-12A.01 [src2]; supply 1.1-1.3 V " + _MEM,
    ),
    "ttl5": Family(
        name="ttl5", vdd_nominal=5.0, vdd_min=4.75, vdd_max=5.25,
        vih=Level(2.0), vil=Level(0.8),
        voh=(OutputGuarantee(400e-6, Level(2.4), "SN74 standard TTL, " + _MEM),),
        vol=(OutputGuarantee(16e-3, Level(0.4), "SN74 standard TTL, " + _MEM),),
        # a standard TTL input sources 1.6 mA when low and takes 40 uA when high
        input_leakage_high=40e-6, input_leakage_low=1.6e-3,
        source="standard (74xx) TTL data-book levels, " + _MEM,
    ),
    "cmos5": Family(
        name="cmos5", vdd_nominal=5.0, vdd_min=4.5, vdd_max=5.5,
        vih=Level(fraction=0.7), vil=Level(fraction=0.3),
        voh=(
            OutputGuarantee(20e-6, _vdd_minus(0.1), "JESD7A (74HC), " + _MEM),
            OutputGuarantee(4e-3, _vdd_minus(0.66), "JESD7A (74HC, 3.84 V at 4.5 V), " + _MEM),
        ),
        vol=(
            OutputGuarantee(20e-6, Level(0.1), "JESD7A (74HC), " + _MEM),
            OutputGuarantee(4e-3, Level(0.33), "JESD7A (74HC), " + _MEM),
        ),
        source="JEDEC JESD7A 74HC levels (0.7/0.3 VDD), " + _MEM,
    ),
}


def family(name: str) -> Family:
    """The named family from :data:`FAMILIES` (case-insensitive); KeyError lists the names."""
    key = name.strip().lower()
    if key not in FAMILIES:
        raise KeyError(f"unknown logic family {name!r}; known: {', '.join(FAMILIES)}")
    return FAMILIES[key]


# ---------------------------------------------------------------------------------------------
# IEC 60063 preferred numbers
# ---------------------------------------------------------------------------------------------

# IEC 60063 E24 (two significant figures), including its historical values that differ from
# round(10**(i/24)): 27 30 33 36 39 43 47 82.
_E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68,
        75, 82, 91)
# E192's one irregular value (IEC 60063): 920 where round(10**(185/192)*100) gives 919.
_E192_IRREGULAR = {185: 920}

SERIES_TOLERANCE: dict[str, float] = {
    # IEC 60063: E6 20 %, E12 10 %, E24 5 %, E48 2 %, E96 1 %, E192 0.5 % (and finer).
    # E3 is for tolerances above 20 %; 40 % is the customary figure (common practice).
    "E3": 0.40, "E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.02, "E96": 0.01, "E192": 0.005,
}


def _series_key(name: str) -> str:
    key = name.strip().upper()
    if key not in SERIES_TOLERANCE:
        raise KeyError(f"unknown E-series {name!r}; known: {', '.join(SERIES_TOLERANCE)}")
    return key


def series_mantissas(name: str) -> tuple[int, ...]:
    """One decade of an IEC 60063 series as integers (E3-E24: 10..91, E48-E192: 100..988).

    References
    ----------
    1. IEC 60063:2015, tables 1-3.
    """
    key = _series_key(name)
    n = int(key[1:])
    if n <= 24:
        return _E24[:: 24 // n]
    return tuple(_E192_IRREGULAR.get(i * (192 // n), round(10 ** (i / n) * 100))
                 for i in range(n))


def series_tolerance(name: str) -> float:
    """The tolerance customarily paired with a series (E24 -> 0.05). [1]"""
    return SERIES_TOLERANCE[_series_key(name)]


def series_values(name: str, r_min: float = 10.0, r_max: float = 1e6) -> np.ndarray:
    """All values of a series between ``r_min`` and ``r_max`` inclusive, ascending. [ohm]

    Parameters
    ----------
    name : str
        "E3" ... "E192".
    r_min, r_max : float
        Range, default 10 ohm to 1 Mohm. [ohm]

    Returns
    -------
    ndarray
        Resistances. [ohm]

    References
    ----------
    1. IEC 60063:2015.
    """
    mant = series_mantissas(name)
    digits = len(str(mant[0]))  # 2 for E3-E24, 3 for E48-E192
    values = []
    for exp in range(-digits - 2, 12):
        scale = 10**exp
        for m in mant:
            v = m * scale if exp >= 0 else m / 10**-exp  # exact decimal, no 10**-k drift
            if r_min * (1 - 1e-12) <= v <= r_max * (1 + 1e-12):
                values.append(float(v))
    return np.array(sorted(values))


# ---------------------------------------------------------------------------------------------
# Worst-case divider
# ---------------------------------------------------------------------------------------------


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
    ratio_min = rb_lo / (rt_hi + rb_lo)
    ratio_max = rb_hi / (rt_lo + rb_hi)
    thevenin = (rt + ro) * rb / (rt + ro + rb)
    thevenin_max = (rt_hi + ro) * rb_hi / (rt_hi + ro + rb_hi)

    # largest current from the source: highest supply, both resistors at -tol
    current = source.vdd_max / (rt_lo + rb_lo + ro)
    rated = source.rated_current
    overloaded = current > rated * (1 + 1e-12)

    voh_guaranteed = source.voh_min(current, source.vdd_min)
    if ro > 0:
        voh_model = source.vdd_min - current * ro
        voh_low = np.where(np.isnan(voh_guaranteed), voh_model, np.fmin(voh_guaranteed,
                                                                         voh_model))
    else:
        voh_low = voh_guaranteed
    v_high_min = voh_low * ratio_min - leak_hi * thevenin_max
    v_high_max = source.vdd_max * ratio_max + leak_hi * thevenin_max
    v_low_max = source.vol_max(0.0, source.vdd_max) * ratio_max + leak_lo * thevenin_max
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
    vals = np.unique(vals)  # sorted, so candidate order never depends on the caller's order
    kw = dict(tolerant=tolerant, tolerant_max=tolerant_max,
              source_resistance=source_resistance, leakage=leakage, edge_limit=edge_limit)
    n_pairs = vals.size**2

    # Exact pre-filter (a necessary condition, so no feasible pair is lost): the worst-case
    # high level can be no better than the light-load guarantee through the lowest ratio, and
    # no lower than the highest supply through the highest ratio. With x = top/bottom this
    # bounds top to [x_min, x_max] * bottom: a contiguous run of the sorted values per bottom.
    vih = destination.vih_worst
    voh_light = float(_guarantee(source.voh, 0.0, source.vdd_min))
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
    voh_light = float(_guarantee(source.voh, 0.0, source.vdd_min))
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


# ---------------------------------------------------------------------------------------------
# Direct connection (no divider), e.g. controller -> gate-driver logic input
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class DirectLink:
    """Worst-case levels of an output wired straight to an input. [V]"""

    v_high_min: float  # source VOH min at its lowest supply, carrying the input leakage
    v_high_max: float  # source highest supply
    v_low_max: float  # source VOL max at its highest supply
    vih: float  # destination VIH at its highest supply
    vil: float  # destination VIL at its lowest supply
    input_max: float  # destination input maximum
    margin_high: float  # v_high_min - vih
    margin_max: float  # input_max - v_high_max
    margin_low: float  # vil - v_low_max


def direct_link(source: Family, destination: Family, *, tolerant: bool = False,
                tolerant_max: float = TOLERANT_INPUT_MAX,
                leakage: float | None = None) -> DirectLink:
    """Worst-case levels of a direct output-to-input connection.

    Parameters
    ----------
    source, destination : Family
        Driving and receiving families.
    tolerant : bool, optional
        The input is over-voltage tolerant up to ``tolerant_max``.
    tolerant_max : float, optional
        Input maximum of a tolerant input (e.g. a gate driver's own supply). [V]
    leakage : float, optional
        Input current magnitude drawn from the output; default the destination's. [A]

    Returns
    -------
    DirectLink

    References
    ----------
    1. JESD8C.01 / JESD8-5A.01 / JESD8-7A / JESD8-12A.01 DC tables.
    """
    i_hi = destination.input_leakage_high if leakage is None else float(leakage)
    i_lo = destination.input_leakage_low if leakage is None else float(leakage)
    v_hi_min = float(source.voh_min(i_hi, source.vdd_min))
    v_hi_max = float(source.vdd_max)
    v_lo_max = float(source.vol_max(i_lo, source.vdd_max))
    vih, vil = destination.vih_worst, destination.vil_worst
    vin_max = destination.input_max(tolerant, tolerant_max)
    return DirectLink(v_hi_min, v_hi_max, v_lo_max, vih, vil, vin_max, v_hi_min - vih,
                      vin_max - v_hi_max, vil - v_lo_max)
