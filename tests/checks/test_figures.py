"""A finding's figures: the SI value, its unit symbol, and a text that reads back as the value.

Sources: the report schema (docs/report-schema.md, "Figure object": `value`
the SI value, `unit` the SI unit symbol, `text` the value as shown to people);
the SI prefixes (SI Brochure, 9th edition, table 7) to read a text back; IEEE
754 for the sign of a zero (a margin of exactly -0 V keeps its sign).
"""

from __future__ import annotations

import math
import re

import pytest

from drc.checks import run_stage_rules
from drc.checks.context import figure, part_figure
from tests.checks.builders import LIMITS, level, result

PREFIX = {"G": 1e9, "M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "µ": 1e-6, "n": 1e-9, "p": 1e-12}


def read_back(text: str, unit: str) -> float:
    """The value a person reads in "4.7 kΩ", "1.5 ms", "0 V"."""
    match = re.fullmatch(rf"(-?[\d.]+) ?([GMkmµnp]?){re.escape(unit)}", text)
    assert match is not None, f"{text!r} is not a figure in {unit}"
    return float(match.group(1)) * PREFIX[match.group(2)]


@pytest.mark.parametrize("value, unit", [(0.0, "V"), (-0.0, "V"), (1.5e-3, "s"), (2.2e-9, "F"),
                                         (4.7e3, "Ω"), (-3.7, "V"), (1e-6, "A"), (2.5e-7, "s/V")])
@pytest.mark.parametrize("make", [figure, part_figure])
def test_a_figure_holds_its_value_and_unit_and_reads_back(make, value, unit):
    f = make(value, unit)
    assert f.value == value and math.copysign(1.0, f.value) == math.copysign(1.0, value)
    assert f.unit == unit
    assert read_back(f.text, unit) == pytest.approx(value, rel=1e-3, abs=1e-15)


def test_a_zero_keeps_its_sign_after_the_other_zero():
    # Remembered figures are keyed by value, and 0.0 == -0.0: each must still keep its own sign.
    assert math.copysign(1.0, figure(0.0, "V").value) == 1.0
    assert math.copysign(1.0, figure(-0.0, "V").value) == -1.0
    assert math.copysign(1.0, figure(0.0, "V").value) == 1.0


def test_a_level_exactly_on_its_threshold_reports_a_zero_margin_in_volts():
    # leakage-headroom's figure is the margin (worst level - VT+ max); on the threshold it is 0 V.
    levels = {"released": level("released", "high", 3.5, 3.5, 0.0), "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    [f] = run_stage_rules(result(levels=levels), LIMITS, selected_ids={"leakage-headroom"})
    assert f.measured.value == 0.0 and f.measured.unit == "V" and read_back(f.measured.text, "V") == 0.0
    assert f.limit.unit == "V" and read_back(f.limit.text, "V") == pytest.approx(0.5)


def test_a_value_that_cannot_be_remembered_is_still_written_out():
    # A 0-d numpy array (what a reduction over corners can hand a rule) is unhashable:
    # its text must read back as its value all the same (SI prefixes).
    import numpy as np

    from drc.checks.context import quantity_text
    assert read_back(quantity_text(np.array(1.5e-3), "s"), "s") == pytest.approx(1.5e-3)
    assert read_back(quantity_text(np.array(4.7e3), "Ω"), "Ω") == pytest.approx(4.7e3)
