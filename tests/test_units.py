"""units.parse / render: every quantiphy trap (DEVELOPERS.md), aliases, rejections."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.units import KINDS, UnitError, parse, render


@pytest.mark.parametrize(
    "text, kind, expected",
    [
        # Traps measured on quantiphy 2.23 (DEVELOPERS.md): each must come out right here.
        ("5 m", "length", 5.0),             # quantiphy: 5 milli-nothing
        ("50 ppm", "ppm", 50e-6),          # quantiphy: 50 picometres
        ("23 degC", "temperature", 296.15),  # absolute: +273.15 K (SI Brochure §2.3.1)
        ("23 degC", "temperature_difference", 23.0),  # a difference has no offset
        ("45 %", "ratio", 0.45),           # quantiphy: 45
        ("0.45", "ratio", 0.45),
        ("1.5 K/W", "thermal_resistance", 1.5),
        ("1.5 degC/W", "thermal_resistance", 1.5),
        # Aliases
        ("2.2 kohm", "resistance", 2200.0),
        ("2.2 k\u03a9", "resistance", 2200.0),
        ("2.2 k\u2126", "resistance", 2200.0),
        ("1.5 us", "time", 1.5e-6),
        ("1.5 \u00b5s", "time", 1.5e-6),
        ("1.5 \u03bcs", "time", 1.5e-6),
        ("23 \u00b0C", "temperature", 296.15),
        ("300 K", "temperature", 300.0),
        ("90 deg", "angle", math.pi / 2),
        ("90\u00b0", "angle", math.pi / 2),
        ("40kHz", "frequency", 40e3),
        ("1e3 Hz", "frequency", 1e3),
        ("101.325 kPa", "pressure", 101325.0),
        ("1.01325 bar", "pressure", 101325.0),
        ("470 uF", "capacitance", 470e-6),
        ("20 nH", "inductance", 20e-9),
        ("30 nC", "charge", 30e-9),
        ("2 mJ", "energy", 2e-3),
        ("250 mW", "power", 0.25),
        ("120 dB", "sound_level", 120.0),
        ("343 m/s", "speed", 343.0),
        ("-2 us", "time", -2e-6),
    ],
)
def test_parse(text, kind, expected):
    assert parse(text, kind) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "text, kind, words",
    [
        ("40 ms", "frequency", "is a time"),   # quantiphy would relabel silently
        ("40 kHz", "time", "is a frequency"),
        ("nan Hz", "frequency", "finite"),
        ("inf s", "time", "finite"),
        ("-inf s", "time", "finite"),
        ("5", "time", "missing unit"),
        (5, "time", "missing unit"),
        (float("nan"), "ratio", "finite"),
        ("5 px", "length", "unknown unit"),
        ("1 kg/m3", "length", "unknown unit"),
        ("fast", "time", "expected a time"),
        ("", "time", "expected a time"),
        (True, "ratio", "boolean"),
        ("23 C", "temperature_difference", "is a charge"),
    ],
)
def test_rejects(text, kind, words):
    with pytest.raises(UnitError) as info:
        parse(text, kind)
    assert words in str(info.value)
    assert "\n" not in str(info.value)


def test_render_prefixes():
    assert render(40e3, "frequency") == "40 kHz"
    assert render(1.5e-6, "time") == "1.5 us"
    assert render(2200.0, "resistance") == "2.2 k\u03a9"
    assert render(296.15, "temperature") == "23 \u00b0C"
    assert render(0.45, "ratio") == "45 %"
    assert render(math.pi / 3, "angle") == "60 deg"
    assert render(float("nan"), "time") == "n/a"
    assert render(None, "time") == "n/a"


@settings(max_examples=150, deadline=None)
@given(st.floats(min_value=1e-12, max_value=1e12, allow_nan=False),
       st.sampled_from(["frequency", "time", "voltage", "current", "resistance",
                        "capacitance", "power", "length"]))
def test_render_parse_round_trip(value, kind):
    """render() then parse() returns the value within the rendered precision."""
    text = render(value, kind, digits=6)
    assert parse(text, kind) == pytest.approx(value, rel=1e-5)


def test_every_kind_has_a_parsing_example():
    for name, kind in KINDS.items():
        assert math.isfinite(parse(kind.example, name))
