"""The only door for quantities: parse engineering strings to SI floats, render them back.

``parse("40 kHz", "frequency") -> 40000.0``. Every kind has a unit table; the unit written
by the user must be one of the kind's units, optionally preceded by one SI prefix. This
module does its own splitting of number, prefix and unit instead of trusting a generic
parser, because the generic readings are wrong in ways that matter here (all measured on
quantiphy 2.23, which this project therefore does not use): ``"5 m"`` reads as 5
milli-nothing, ``"50 ppm"`` as 50 picometres,
``"5 px"`` as 5 pico-x, ``"1 kg/m3"`` as 1000 g/m3, ``"23 degC"`` as 23 with no offset,
``"45 %"`` as 45, ``"nan Hz"`` and ``"inf s"`` as numbers, and ``Quantity("40 ms",
units="Hz")`` silently relabels a time as a frequency. Rendering with SI prefixes is done
here too (quantiphy's import builds regular expressions for ~30 ms, more than the whole
solve).

Conventions inside strobeplan (SI throughout): absolute temperatures in kelvin, temperature
differences in kelvin, angles in radians, ratios and ppm as fractions, sound levels in dB.

References
----------
1. BIPM, The International System of Units (SI Brochure), 9th ed., 2019, Table 7 (prefixes).
"""

from __future__ import annotations

import math
import re

from .physics.air import ZERO_CELSIUS
from .quickdc import dataclass

__all__ = ["UnitError", "KINDS", "parse", "render", "kind_example"]


class UnitError(ValueError):
    """A quantity string that does not fit the expected kind (message is one line)."""


# SI prefixes (SI Brochure Table 7). 'd' (deci) and 'da' are left out on purpose: "dB" is
# a unit here, and a deci-anything in a rig file is more likely a typo than intended.
_PREFIXES = {
    "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6, "\u03bc": 1e-6,
    "m": 1e-3, "c": 1e-2, "h": 1e2, "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
}


@dataclass(frozen=True)
class Kind:
    """One kind of quantity: its units (name -> (scale, offset)), display unit, example."""

    name: str
    units: dict[str, tuple[float, float]]
    display: str
    example: str
    prefixable: bool = True
    unitless_ok: bool = False  # a bare number is accepted (taken in the first unit)


def _k(name, units, display, example, prefixable=True, unitless_ok=False):
    return Kind(name, units, display, example, prefixable, unitless_ok)


_OHM = {"ohm": (1.0, 0.0), "Ohm": (1.0, 0.0), "ohms": (1.0, 0.0), "\u03a9": (1.0, 0.0),
        "\u2126": (1.0, 0.0)}
_DEGC = {"degC": (1.0, ZERO_CELSIUS), "\u00b0C": (1.0, ZERO_CELSIUS), "C": (1.0, ZERO_CELSIUS)}
_DELTA_T = {"K": (1.0, 0.0), "degC": (1.0, 0.0), "\u00b0C": (1.0, 0.0)}

KINDS: dict[str, Kind] = {k.name: k for k in [
    _k("frequency", {"Hz": (1.0, 0.0)}, "Hz", "40 kHz"),
    _k("time", {"s": (1.0, 0.0)}, "s", "1.5 us"),
    _k("voltage", {"V": (1.0, 0.0)}, "V", "24 V"),
    _k("current", {"A": (1.0, 0.0)}, "A", "3 A"),
    _k("resistance", _OHM, "\u03a9", "2.2 kohm"),
    _k("capacitance", {"F": (1.0, 0.0)}, "F", "470 uF"),
    _k("inductance", {"H": (1.0, 0.0)}, "H", "20 nH"),
    _k("charge", {"C": (1.0, 0.0)}, "C", "30 nC"),
    _k("power", {"W": (1.0, 0.0)}, "W", "2 W"),
    _k("energy", {"J": (1.0, 0.0)}, "J", "1 mJ"),
    _k("length", {"m": (1.0, 0.0)}, "m", "250 mm"),
    _k("speed", {"m/s": (1.0, 0.0)}, "m/s", "343 m/s", prefixable=False),
    # Absolute temperature: degC carries the 273.15 K offset; "C" alone only here.
    _k("temperature", {"K": (1.0, 0.0), **_DEGC}, "\u00b0C", "23 degC", prefixable=False),
    _k("temperature_difference", _DELTA_T, "K", "10 K", prefixable=False),
    _k("thermal_resistance", {"K/W": (1.0, 0.0), "degC/W": (1.0, 0.0),
                              "\u00b0C/W": (1.0, 0.0)}, "K/W", "0.5 K/W", prefixable=False),
    _k("pressure", {"Pa": (1.0, 0.0), "bar": (1e5, 0.0)}, "Pa", "101.325 kPa"),
    _k("angle", {"deg": (math.pi / 180, 0.0), "\u00b0": (math.pi / 180, 0.0),
                 "rad": (1.0, 0.0)}, "deg", "90 deg", prefixable=False),
    _k("ratio", {"%": (0.01, 0.0), "": (1.0, 0.0)}, "%", "45 %", prefixable=False,
       unitless_ok=True),
    _k("ppm", {"ppm": (1e-6, 0.0), "ppb": (1e-9, 0.0), "%": (0.01, 0.0)}, "ppm", "50 ppm",
       prefixable=False),
    _k("sound_level", {"dB": (1.0, 0.0)}, "dB", "120 dB", prefixable=False),
]}

# Which kind a unit belongs to, for "you wrote a time where a frequency was expected".
_UNIT_OWNER: dict[str, str] = {}
for _kind in KINDS.values():
    for _u in _kind.units:
        if _u:
            _UNIT_OWNER.setdefault(_u, _kind.name)

_NUMBER = re.compile(r"^\s*([-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)\s*(.*?)\s*$",
                     re.ASCII)

# Magnitudes accepted for a dimensioned quantity, in SI units (0 itself is fine): beyond
# these a value is a typo, and its reciprocal or square leaves the float range (1e-320 is
# subnormal; 1 / 1e-320 overflows). Ratios, angles, ppm and dB only refuse subnormal
# numbers.
MIN_MAGNITUDE = 1e-24
MAX_MAGNITUDE = 1e24
MIN_RATIO = 2.2250738585072014e-308  # the smallest normal double (sys.float_info.min)
_DIMENSIONLESS = ("ratio", "angle", "ppm", "sound_level")
_NONFINITE = re.compile(r"^\s*[-+]?(nan|inf|infinity)\b", re.IGNORECASE)


def kind_example(kind: str) -> str:
    """An example string of the kind, e.g. ``'40 kHz'`` for frequency."""
    return KINDS[kind].example


def _split_unit(unit: str, kind: Kind) -> tuple[float, float] | None:
    if unit in kind.units:
        return kind.units[unit]
    if kind.prefixable and len(unit) >= 2:
        for plen in (1,):
            prefix, base = unit[:plen], unit[plen:]
            if prefix in _PREFIXES and base in kind.units and base:
                scale, offset = kind.units[base]
                return _PREFIXES[prefix] * scale, offset
    return None


def _owner_of(unit: str) -> str | None:
    if unit in _UNIT_OWNER:
        return _UNIT_OWNER[unit]
    if len(unit) >= 2 and unit[0] in _PREFIXES and unit[1:] in _UNIT_OWNER:
        owner = KINDS[_UNIT_OWNER[unit[1:]]]
        if owner.prefixable:
            return owner.name
    return None


def parse(text, kind: str) -> float:
    """Parse a quantity string of the given kind to an SI float.

    Parameters
    ----------
    text : str or int or float
        What the user wrote, e.g. ``"40 kHz"``, ``"2.2 kohm"``, ``"23 degC"``. A bare number
        is accepted only for dimensionless kinds (``ratio``).
    kind : str
        One of :data:`KINDS`.

    Returns
    -------
    float
        The value in SI units (kelvin for temperatures, radians for angles, fractions for
        ratios and ppm).

    Raises
    ------
    UnitError
        One-line message saying what was expected.
    """
    k = KINDS[kind]
    expected = f"a {kind.replace('_', ' ')} like '{k.example}'"
    if isinstance(text, bool):
        raise UnitError(f"expected {expected}, got a boolean")
    if isinstance(text, (int, float)):
        if not k.unitless_ok:
            raise UnitError(f"missing unit: expected {expected} (a string with its unit)")
        try:
            value = float(text)
        except OverflowError:
            raise UnitError(f"a {len(str(abs(text)))}-digit number is out of range "
                            f"(magnitudes up to {MAX_MAGNITUDE:g} are accepted)") from None
        if not math.isfinite(value):
            raise UnitError(f"expected a finite number, got {text!r}")
        return _bounded(value, text, MIN_RATIO)
    if not isinstance(text, str):
        raise UnitError(f"expected {expected}, got {type(text).__name__}")
    if any(c.isdigit() and not c.isascii() for c in text):
        raise UnitError(f"only ASCII digits 0-9 are accepted, got {text!r}")
    if _NONFINITE.match(text):
        raise UnitError(f"expected a finite number, got {text!r}")
    m = _NUMBER.match(text)
    if not m:
        raise UnitError(f"expected {expected}, got {text!r}")
    number, unit = m.group(1), m.group(2)
    value = float(number)
    if value == 0 and re.search("[1-9]", number.partition("e")[0].partition("E")[0]):
        raise UnitError(f"{text!r} is out of range: it underflows to zero")
    if unit == "" and not k.unitless_ok:
        raise UnitError(f"missing unit in {text!r}: expected {expected}")
    found = _split_unit(unit, k)
    if found is None:
        owner = _owner_of(unit)
        if owner and owner != kind:
            raise UnitError(
                f"wrong unit in {text!r}: '{unit}' is a {owner.replace('_', ' ')}; "
                f"expected {expected}"
            )
        raise UnitError(f"unknown unit '{unit}' in {text!r}: expected {expected}")
    scale, offset = found
    result = value * scale + offset
    if not math.isfinite(result):
        raise UnitError(f"{text!r} is out of range")
    low = MIN_RATIO if kind in _DIMENSIONLESS else MIN_MAGNITUDE
    return _bounded(value * scale, text, low) + offset if offset else \
        _bounded(result, text, low)


def _bounded(value: float, text, low: float = MIN_MAGNITUDE) -> float:
    """``value`` if 0 or within [low, MAX_MAGNITUDE] in magnitude (SI)."""
    if value != 0 and not low <= abs(value) <= MAX_MAGNITUDE:
        raise UnitError(f"{text!r} is out of range: magnitudes between {low:g} and "
                        f"{MAX_MAGNITUDE:g} in SI units are accepted")
    return value


def render(value: float | None, kind: str, digits: int = 4) -> str:
    """Render an SI value with an SI prefix, e.g. ``render(40000.0, "frequency") -> '40 kHz'``.

    Parameters
    ----------
    value : float or None
        SI value (kelvin for temperatures, radians for angles, fractions for ratios).
    kind : str
        One of :data:`KINDS`.
    digits : int
        Significant digits.

    Returns
    -------
    str
        ``'n/a'`` for None or a non-finite value.
    """
    if value is None or not math.isfinite(value):
        return "n/a"
    k = KINDS[kind]
    if kind == "temperature":
        return f"{_fmt(value - ZERO_CELSIUS, digits)} \u00b0C"
    if kind == "angle":
        return f"{_fmt(math.degrees(value), digits)} deg"
    if kind == "ratio":
        return f"{_fmt(value * 100, digits)} %"
    if kind == "ppm":
        return f"{_fmt(value * 1e6, digits)} ppm"
    if not k.prefixable:
        return f"{_fmt(value, digits)} {k.display}"
    return f"{si_number(value, digits)}{k.display}"


_RENDER_PREFIXES = ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
                    (1e-6, "u"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def si_number(value: float, digits: int = 4) -> str:
    """``value`` with an SI prefix and a trailing space, e.g. ``si_number(4.7e-9) -> '4.7 n'``.

    Zeros after the decimal point are stripped; the mantissa lies in [1, 1000) unless the
    value is beyond the prefix table (then plain %g).
    """
    if value == 0:
        return "0 "
    mag = abs(value)
    for scale, prefix in _RENDER_PREFIXES:
        if mag >= scale * (1 - 0.5 * 10 ** (-digits)):
            mantissa = float(f"{value / scale:.{digits}g}")
            if abs(mantissa) >= 1000 and scale < 1e12:
                continue
            return f"{_fmt(mantissa, digits)} {prefix}"
    return f"{_fmt(value, digits)} "


def _fmt(x: float, digits: int) -> str:
    return f"{x + 0.0:.{digits}g}"  # + 0.0 turns -0.0 into 0.0
