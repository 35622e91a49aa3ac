"""Values SPICE reads differently than a person: what each reading is, and how the fix spells it.

Sources: ngspice itself (Debian package `ngspice`): its reading of each
value is measured (a resistor of that value fed 1 A; the voltage across it
is its resistance): an `M` on a resistor is read as ngspice reads it (the
finding's figure), a letter-digit code as IEC 60062 means it, which
ngspice reads otherwise; the SPICE
scale-factor table (ngspice manual, section 2.1.3: T G Meg k m u n p f, and
`mil`) for the plain spelling the fix proposes; IEC 60062 for the
letter-digit code (`4k7` is 4.7 kΩ, `2R2` is 2.2 Ω).
"""

from __future__ import annotations

import re

import pytest

from drc.checks.ambiguous_value import classify_value_text
from drc.pipeline import check_netlist_text
from tests.support.ngspice import measure

SPICE_SCALE = {"T": 1e12, "G": 1e9, "Meg": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "u": 1e-6, "n": 1e-9, "p": 1e-12}


def spice_reads(value: str) -> float:
    """ngspice's resistance for a resistor written `value` (1 A through it, V = R)."""
    deck = f"value\nI1 0 a DC 1\nR1 a 0 {value}\n.control\nop\nlet r_read = v(a)\nprint r_read\n.endc\n.end\n"
    return measure(deck, ["r_read"])["r_read"]


def finding_for(value: str, kind: str = "R"):
    part = f"R9 IN 0 {value}" if kind == "R" else f"C9 IN 0 {value}"
    text = ("values\nV1 +5V 0 DC 5\nXU1 IN o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14\n"
            f"R1 +5V IN 10k\n{part}\nSW1 IN 0 TACTILE\n")
    _b, _r, findings = check_netlist_text(text, "v.cir")
    return [f for f in findings if f.rule == "ambiguous-value"]


@pytest.mark.ngspice
@pytest.mark.parametrize("value, meant", [("4k7", 4.7e3), ("2R2", 2.2), ("1M5", 1.5e6)])
def test_a_letter_digit_code_is_read_as_meant_and_ngspice_reads_otherwise(value, meant):
    # The finding's figure is the value drc analyses: the IEC 60062 meaning; ngspice reads less.
    assert classify_value_text("R", value) == "code"
    [f] = finding_for(value)
    assert f.severity == "note" and f.parts == ("R9",) and f.limit is None
    assert f.measured.value == pytest.approx(meant, rel=1e-12) and f.measured.unit == "Ω"
    assert spice_reads(value) != pytest.approx(meant, rel=1e-3)


@pytest.mark.ngspice
@pytest.mark.parametrize("value", ["1M", "470m", "10M"])
def test_an_m_on_a_resistor_is_read_as_ngspice_reads_it(value):
    assert classify_value_text("R", value) == "milli"
    [f] = finding_for(value)
    assert f.severity == "warning" and f.parts == ("R9",)
    assert f.measured.value == pytest.approx(spice_reads(value), rel=1e-9) and f.measured.unit == "Ω"


@pytest.mark.parametrize("kind, value, meant", [
    ("R", "4k7", 4.7e3), ("R", "2R2", 2.2), ("R", "1M5", 1.5e6), ("R", "8k2", 8.2e3),
    ("R", "1M", 1e-3), ("R", "10M", 10e-3), ("R", "470m", 0.47),
    ("C", "4u7", 4.7e-6), ("C", "4n7", 4.7e-9), ("C", "2n2", 2.2e-9), ("C", "4p7", 4.7e-12)])
def test_the_fix_spells_the_value_with_the_spice_scale_letters(kind, value, meant):
    # Engineering notation (SI prefixes in steps of 1000): the mantissa is in [1, 1000).
    [f] = finding_for(value, kind)
    spelled = [w.strip("',") for w in f.fix.split() if w.startswith("'")][-1]  # the value as read
    number = next(s for s in sorted(SPICE_SCALE, key=len, reverse=True) if spelled.endswith(s))
    mantissa = float(spelled[:len(spelled) - len(number)])
    assert mantissa * SPICE_SCALE[number] == pytest.approx(meant, rel=1e-3)
    assert 1.0 <= mantissa < 1000.0, spelled


def test_a_capacitor_with_a_farad_letter_is_femto():
    assert classify_value_text("C", "47F") == "femto" and classify_value_text("C", "1f") == "femto"
    [f] = finding_for("47F", "C")
    assert f.severity == "warning" and f.measured.value == pytest.approx(47e-15) and f.measured.unit == "F"
    assert finding_for("47uF", "C") == [] and finding_for("100n", "C") == []


@pytest.mark.parametrize("kind, text", [("R", "10k"), ("R", "1Meg"), ("R", "2mil"), ("R", "4700"), ("C", "1u"),
                                        ("R", "k4"), ("C", "1M"), ("R", "1f")])
def test_plain_values_are_not_ambiguous(kind, text):
    assert classify_value_text(kind, text) is None


@pytest.mark.parametrize("value, number", [("1M", 1.0), ("10M", 10.0), ("4.7M", 4.7), ("470m", 470.0)])
def test_an_m_on_a_resistor_offers_the_megohm_spelling(value, number):
    # If a megohm was meant, the written number with SPICE's Meg (1e6, ngspice manual 2.1.3).
    [f] = finding_for(value)
    first = [w.strip("',") for w in f.fix.split() if w.startswith("'")][0]
    assert first.endswith("Meg") and float(first[:-3]) * SPICE_SCALE["Meg"] == pytest.approx(number * 1e6)


def _quoted(text: str, unit: str) -> float:
    prefixes = {"M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "µ": 1e-6, "n": 1e-9, "p": 1e-12, "f": 1e-15}
    number, scaled = text.split()
    assert scaled.endswith(unit), text
    return float(number) * prefixes[scaled[:-len(unit)]]


@pytest.mark.ngspice
@pytest.mark.parametrize("value, pattern", [
    ("4k7", r"ngspice's default mode reads (\S+ \S+)$"), ("2R2", r"ngspice's default mode reads (\S+ \S+)$"),
    ("1M5", r"ngspice's default mode reads (\S+ \S+)$"),
    ("1M", r"is (\S+ \S+) in SPICE"), ("470m", r"is (\S+ \S+) in SPICE")])
def test_the_message_quotes_what_ngspice_reads(value, pattern):
    [f] = finding_for(value)
    [quoted] = re.findall(pattern, f.message)
    assert _quoted(quoted, "Ω") == pytest.approx(spice_reads(value), rel=1e-3)


def test_the_message_quotes_a_farad_letter_as_femto():
    # SPICE scale table (ngspice manual 2.1.3): f is 1e-15, whatever its case.
    [f] = finding_for("47F", "C")
    [quoted] = re.findall(r"is (\S+ \S+) in SPICE", f.message)
    assert _quoted(quoted, "F") == pytest.approx(47e-15)
