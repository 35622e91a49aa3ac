"""SPICE numbers and the letter-and-digit code.

Suffix table: ngspice manual, section "Numeric values" (T G MEG K M MIL U N P
F, M = milli, F = femto, trailing letters ignored). What ngspice's default
mode reads for letter-digit text: observed with ngspice-39, recorded in
shared/reference/spice-dialect.md. Letter-digit meaning: IEC 60062 (RKM code).
"""

import math

import pytest

from drc.netlist.values import parse_value, spice_number


@pytest.mark.parametrize("text, expected", [
    # ngspice manual scale factors, any case
    ("1T", 1e12), ("1g", 1e9), ("1MEG", 1e6), ("1Meg", 1e6), ("1k", 1e3), ("1K", 1e3),
    ("1M", 1e-3), ("1m", 1e-3), ("1MIL", 25.4e-6), ("1u", 1e-6), ("1µ", 1e-6),
    ("1n", 1e-9), ("1p", 1e-12), ("1F", 1e-15), ("1f", 1e-15),
    # trailing unit letters ignored (manual: "letters immediately following a number ... ignored")
    ("10V", 10.0), ("100pF", 100e-12), ("1kohm", 1e3), ("1Mohm", 1e-3), ("4.7µF", 4.7e-6),
    # exponent and suffix combine (manual example: 1e3k)
    ("1e3k", 1e6), ("2.5e-3", 2.5e-3), (".5", 0.5), ("-5", -5.0), ("+5V", 5.0),
])
def test_spice_suffixes(text, expected):
    value = parse_value(text)
    assert value is not None
    assert math.isclose(value.si, expected, rel_tol=1e-12)
    assert math.isclose(value.spice_si, expected, rel_tol=1e-12)
    assert value.text == text


@pytest.mark.parametrize("text, person, ngspice", [
    # IEC 60062 letter-digit code (person) vs ngspice-39 default mode (observed)
    ("4k7", 4700.0, 4000.0), ("2R2", 2.2, 2.0), ("0R1", 0.1, 0.0),
    ("1M5", 1.5e6, 1e-3), ("1meg5", 1.5e6, 1e6), ("4n7", 4.7e-9, 4e-9),
    ("4u7", 4.7e-6, 4e-6), ("4µ7", 4.7e-6, 4e-6), ("2p2", 2.2e-12, 2e-12),
])
def test_letter_digit_code(text, person, ngspice):
    value = parse_value(text)
    assert math.isclose(value.si, person, rel_tol=1e-12)
    assert math.isclose(value.spice_si, ngspice, rel_tol=1e-12)
    assert value.differs_from_spice


def test_plain_1M_stays_milli():
    # ngspice manual: M is milli; the ambiguous-value rule warns, the reader does not guess
    value = parse_value("1M")
    assert value.si == pytest.approx(1e-3)
    assert not value.differs_from_spice


@pytest.mark.parametrize("text", ["abc", "k1", "1k-2", "", "-", "1.2.3x-"])
def test_not_numbers(text):
    assert parse_value(text) is None


def test_values_are_cached_and_exact():
    assert parse_value("4.7n") is parse_value("4.7n")
    # common practice, no source: 4.7n should be the float nearest 4.7e-9
    assert parse_value("4.7n").si == 4.7e-9
    assert spice_number("1e999") == math.inf
