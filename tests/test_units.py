"""Quantities at the config edge: parsing with units, formatting with prefixes.

Expected values follow the SI prefixes (BIPM SI Brochure, 9th edition,
table 7: k = 1e3, M = 1e6, m = 1e-3, µ = 1e-6, n = 1e-9).
"""

import pytest

from drc.errors import ConfigError
from drc.units import format_quantity, parse_quantity


@pytest.mark.parametrize("text, dimension, expected", [
    ("5 ms", "time", 5e-3),
    ("5ms", "time", 5e-3),
    ("250 us", "time", 250e-6),
    ("10 kΩ", "resistance", 10e3),
    ("10 kohm", "resistance", 10e3),
    ("4.7k", "resistance", 4.7e3),  # bare prefix letter, as schematics write it
    ("1 M", "resistance", 1e6),
    ("2.2 MΩ", "resistance", 2.2e6),
    ("4700", "resistance", 4700.0),
    ("100 nF", "capacitance", 100e-9),
    ("4.7 µF", "capacitance", 4.7e-6),
    ("4.7 μF", "capacitance", 4.7e-6),  # Greek mu, not the micro sign
    ("3.3 V", "voltage", 3.3),
    ("5", "voltage", 5.0),
    ("0.4 mA", "current", 0.4e-3),
    ("5 %", "fraction", 0.05),
    ("0.05", "fraction", 0.05),
])
def test_parse_quantity(text, dimension, expected):
    assert parse_quantity(text, dimension, "x") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text, dimension, says", [
    ("3V3", "voltage", "'3.3 V'"),  # the letter-as-decimal-point marking code (IEC 60062, from memory)
    ("4k7", "resistance", "'4.7 kΩ'"),
    ("4n7", "capacitance", "'4.7 nF'"),
    ("5", "time", "has no unit"),
    ("100", "capacitance", "has no unit"),
    ("5 V", "time", "not a time"),
    ("10k", "time", "not a time"),
    ("fast", "time", "not a time"),
    ("", "voltage", "empty"),
])
def test_parse_quantity_refuses(text, dimension, says):
    with pytest.raises(ConfigError) as caught:
        parse_quantity(text, dimension, "drc.toml: rails[0].voltage")
    assert says in str(caught.value)
    assert "drc.toml: rails[0].voltage" in str(caught.value)


@pytest.mark.parametrize("value, unit, expected", [
    (0.0118, "s", "11.8 ms"),
    (4700.0, "Ω", "4.7 kΩ"),
    (2.53, "V", "2.53 V"),
    (0.0004, "A", "0.4 mA"),
    (0.45, "V", "0.45 V"),
    (0.05, "V", "50 mV"),
    (0.15, "A", "150 mA"),
    (470.0, "Ω", "470 Ω"),
    (100e-9, "F", "100 nF"),
    (50e-6, "A", "50 µA"),
    (999.96, "Ω", "1 kΩ"),  # rounding to three figures moves to the next prefix
    (-0.2, "V", "-0.2 V"),
    (0.0, "s", "0 s"),
    (0.05, "%", "5 %"),
    (1200.0, "V/s", "1.2 kV/s"),
    (1.5, "1", "1.5"),
])
def test_format_quantity(value, unit, expected):
    assert format_quantity(value, unit) == expected


# ---------------------------------------------------------------- the one validator

from drc.units import Range, checked_count, checked_quantity  # noqa: E402


@pytest.mark.parametrize("value, dimension, allowed, says", [
    ("-20 ms", "time", Range.POSITIVE, "expected a positive time"),
    ("0 ms", "time", Range.POSITIVE, "expected a positive time"),
    ("nan ms", "time", Range.POSITIVE, "is not a time"),
    (float("nan"), "ratio", Range.POSITIVE, "is not a ratio"),
    (float("inf"), "voltage", Range.FINITE, "is not a voltage"),
    ("1e999 V", "voltage", Range.FINITE, "not a finite voltage"),
    ("5 V", "ratio", Range.POSITIVE, "its unit is volt"),
    ("-1.5", "ratio", Range.POSITIVE, "expected a positive ratio"),
    ("1", "fraction", Range.FRACTION, "below 100 %"),
    ("-0.1 V", "voltage", Range.NON_NEGATIVE, "zero or positive"),
    ("10**10**10 ms", "time", Range.POSITIVE, "is not a time"),   # pint would compute for ever
    ("1e30", "resistance", Range.POSITIVE, "outside what drc evaluates (1 µΩ to 1 TΩ)"),
    ("1e-320 F", "capacitance", Range.POSITIVE, "outside what drc evaluates (1 aF to 10 kF)"),
    (True, "voltage", Range.FINITE, "got bool"),
])
def test_checked_quantity_refuses(value, dimension, allowed, says):
    with pytest.raises(ConfigError) as caught:
        checked_quantity(value, dimension, "where", allowed)
    assert says in str(caught.value) and str(caught.value).startswith("where: ")


@pytest.mark.parametrize("value, dimension, allowed, expected", [
    ("20 ms", "time", Range.POSITIVE, 0.02),
    ("20 milliseconds", "time", Range.POSITIVE, 0.02),          # through pint, short and plain
    ("150 %", "ratio", Range.POSITIVE, 1.5),
    (0, "ratio", Range.NON_NEGATIVE, 0.0),
    ("-12 V", "voltage", Range.FINITE, -12.0),
    ("1 TΩ", "resistance", Range.POSITIVE, 1e12),
    ("1 aF", "capacitance", Range.POSITIVE, 1e-18),
])
def test_checked_quantity_accepts(value, dimension, allowed, expected):
    assert checked_quantity(value, dimension, "x", allowed) == pytest.approx(expected)


def test_checked_count():
    assert checked_count(3, "--trials") == 3
    assert checked_count(0, "--seed", minimum=0) == 0
    for bad in (-1, 0, 2.0, True, "3"):
        with pytest.raises(ConfigError, match="--trials: expected a whole number >= 1"):
            checked_count(bad, "--trials")
    with pytest.raises(ConfigError, match="a huge number"):
        checked_count(-10 ** 5000, "--trials")
