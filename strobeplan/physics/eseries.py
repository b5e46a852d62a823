"""IEC 60063 preferred-number series (E3 ... E192) and their customary tolerances.

References
----------
1. IEC 60063:2015, "Preferred number series for resistors and capacitors".
"""

from __future__ import annotations

import numpy as np

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
