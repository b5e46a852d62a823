"""Logic families: supply ranges, input thresholds, guaranteed output levels.

A family's levels are ``offset + fraction * VDD`` of its own supply; its outputs guarantee a
level up to a test current (the lightest test current that still covers a load sets the
guarantee; above the heaviest, the *rated current*, nothing is guaranteed). Also the worst
case of an output wired straight to an input (:func:`direct_link`). SI throughout: volts,
amperes.

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
"""

from __future__ import annotations

from dataclasses import field

import numpy as np

from ..quickdc import dataclass

INPUT_MAX_ABOVE_VDD = 0.3  # [V] input maximum = VDD + 0.3 V (common practice, datasheets)
TOLERANT_INPUT_MAX = 5.5  # [V] "5 V tolerant" inputs (common practice; the datasheet rules)
DEFAULT_LEAKAGE = 1e-6  # [A] CMOS input leakage, +/- 1 uA (common practice, from memory)




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


_J8C = "JEDEC JESD8C.01 (3.3 V), table values as quoted in docs/references.md [src2]"
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
