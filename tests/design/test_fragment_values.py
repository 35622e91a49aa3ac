"""The values `drc design --netlist` writes: engineering notation that reads back as the value.

A user pastes the fragment into a schematic or a netlist, so each value is
written the way such values are usually written (common practice, no source):
engineering notation, a mantissa from 1 to below 1000 with four significant
digits at most, and SPICE's scale suffixes in lower case (Meg k m u n p; none
for units; the ngspice manual's table "Scale factors"). Read back by ngspice's
rules (our reader's `spice_number`, which follows the ngspice manual's
"Numeric values", and ngspice itself for one value per suffix), and by the
person (`parse_value(...).si`, the same number here), each must be the value
written: exactly for IEC 60063 values (three significant digits at most, from
the `eseries` package), to half a unit of the fourth digit otherwise.
"""

from __future__ import annotations

import re

import eseries as oracle
import pytest

from drc.design.forward import _spice
from drc.netlist.values import parse_value, spice_number
from tests.support.ngspice import measure

# 1 pF (the least capacitor the fix search proposes) to 10 MOhm (the largest resistor).
LOWEST, HIGHEST = 1e-12, 10e6
CANONICAL = re.compile(r"([1-9][0-9]{0,2}(?:\.[0-9]+)?)(Meg|k|m|u|n|p)?")
SCALE = {"Meg": 1e6, "k": 1e3, None: 1.0, "m": 1e-3, "u": 1e-6, "n": 1e-9, "p": 1e-12}


def canonical(text: str) -> tuple[float, float] | None:
    """(mantissa, scale) of engineering notation as above, or None."""
    m = CANONICAL.fullmatch(text)
    if m is None or len(m.group(1).replace(".", "").lstrip("0")) > 4:
        return None
    return float(m.group(1)), SCALE[m.group(2)]


def reads_back(text: str) -> float:
    value = parse_value(text)
    assert value is not None, text
    assert value.si == spice_number(text), f"{text!r}: a person and ngspice read it differently"
    return value.si


@pytest.mark.parametrize("series", ["E3", "E6", "E12", "E24", "E48", "E96", "E192"])
def test_series_values_are_written_in_engineering_notation_and_read_back_exactly(series):
    values = list(oracle.erange(getattr(oracle, series), LOWEST, HIGHEST))
    assert len(values) > 18 * int(series[1:])  # every decade from 1 p to 10 Meg
    for v in values:
        text = _spice(v)
        form = canonical(text)
        assert form is not None and 1 <= form[0] < 1000, f"{v!r} written {text!r}"
        assert reads_back(text) == pytest.approx(v, rel=1e-12), f"{v!r} written {text!r}"


# Values near each unit's rounding edge: from x.xxx95 of a unit on, four digits of the
# smaller unit would round to 1000 (999.95 -> "1000"), so they are 1 of the larger unit.
EDGES = ["0.9994", "0.99949", "0.9995", "0.9997", "0.99994", "0.99995", "0.999951", "0.99999", "1",
         "1.0001", "999.4", "999.9", "999.94"]


@pytest.mark.parametrize("power", [-9, -6, -3, 0, 3, 6])  # the unit: 1 n to 1 Meg
def test_values_at_a_units_rounding_edge_are_written_in_engineering_notation(power):
    for mantissa in EDGES:
        v = float(f"{mantissa}e{power}")
        text = _spice(v)
        form = canonical(text)
        assert form is not None and 1 <= form[0] < 1000, f"{v!r} written {text!r}"
        # Four significant digits: within half a unit of the fourth digit (5e-4 of the mantissa).
        assert reads_back(text) == pytest.approx(v, rel=5e-4), f"{v!r} written {text!r}"


@pytest.mark.ngspice
def test_ngspice_reads_one_value_per_suffix_as_written():
    # Capacitors from node a to ground (open at DC), each value as ngspice holds it.
    values = [4.7e-12, 22e-9, 3.3e-6, 1e-3, 1.5, 470.0, 4.7e3, 1e6, 2.2e6]
    lines = ["values as written", "V1 a 0 1"]
    lines += [f"C{i} a 0 {_spice(v)}" for i, v in enumerate(values)]
    lines += ["R1 a 0 1k", ".control", "op"]
    lines += [f"let c{i}v = @c{i}[capacitance]" for i in range(len(values))]
    lines += ["print " + " ".join(f"c{i}v" for i in range(len(values))), ".endc", ".end"]
    got = measure("\n".join(lines) + "\n", [f"c{i}v" for i in range(len(values))])
    for i, v in enumerate(values):
        assert got[f"c{i}v"] == pytest.approx(v, rel=1e-9), f"{v!r} written {_spice(v)!r}"
