"""bounce-window's closure-and-opening finding: which parts it names, which threshold, which level.

Stages of our own, one capacitor at a Schmitt input (74HC14) and a contact
whose closure path is fast, so the edge it closes crosses at once and the
closure-and-opening reading judges it:

- pull-up R1 10 kΩ, C1 1 µF at the pin, contact to ground through R5 100 Ω
  (normally open: the press is the fast, falling edge; normally closed: the
  release is);
- pull-down R1 10 kΩ, contact to the rail through R5 100 Ω (the press is the
  fast, rising edge);
- pull-up R1 10 kΩ, C1 1 µF, a bare contact straight across C1.

Sources:
- Which parts the pull back runs through, by hand (Thevenin seen from C1,
  DEVELOPERS.md "Timing fix parts"): after a fast edge the bounce's openings
  pull the capacitor back through the *other* state's path. With the contact
  open, R5 hangs off the loop and carries none of C1's current, so the parts
  that slow the pull back are R1 and C1 alone, never R5.
- Which threshold the pull back must cross: a Schmitt input switches back
  only at its other threshold (JEDEC JESD7A: VT+ is the positive-going
  threshold, VT- the negative-going one): after a falling edge, VT+; after a
  rising one, VT-.
- The level a 1 µs closure leaves on the bare contact, by hand (RC law,
  *Lessons In Electric Circuits*, Vol. I, ch. 16): C1 discharges through the
  contact's closed resistance Rc towards the divider level V·Rc/(R1 + Rc), so
  u(1 µs) = V·Rc/(R1 + Rc) + V·exp(-1 µs / ((Rc ∥ R1)·C1)), between its values
  at the tolerance box's ends (V 4.75-5.25 V, R1 9.5-10.5 kΩ, C1 0.8-1.2 µF).
"""

from __future__ import annotations

import math
import re

import pytest

from drc.pipeline import check_netlist_text

U1 = "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n"
NC = "*@drc contact SW1 class=tactile form=SPST-NC\n"
PULL_UP = "V1 vcc 0 DC 5\nR1 vcc in 10k\nC1 in 0 1u\nSW1 in n2 TACTILE\nR5 n2 0 100\n"
PULL_DOWN = "V1 vcc 0 DC 5\nR1 in 0 10k\nC1 in 0 1u\nSW1 vcc n2 TACTILE\nR5 n2 in 100\n"
BARE = "V1 vcc 0 DC 5\nR1 vcc in 10k\nC1 in 0 1u\nSW1 in 0 TACTILE\n"
SI = {"": 1.0, "m": 1e-3, "µ": 1e-6, "n": 1e-9, "p": 1e-12, "k": 1e3}


def closure_findings(body: str, head: str = "") -> dict[str, object]:
    """The bounce-window findings of the closure-and-opening reading, by edge."""
    _board, _results, findings = check_netlist_text(f"* first edge\n{head}{body}{U1}.end\n")
    return {f.message.split()[0]: f for f in findings
            if f.rule == "bounce-window" and "closure-and-opening reading)" in f.message}


def volts(text: str) -> float:
    number, prefix = re.fullmatch(r"([-\d.]+) ?([mµnpk]?)V", text).groups()
    return float(number) * SI[prefix]


@pytest.mark.parametrize("head, edge", [("", "press"), (NC, "release")])
def test_the_pull_back_of_a_falling_edge_names_the_other_states_parts_and_vt_plus(head, edge):
    found = closure_findings(PULL_UP, head)
    assert set(found) == {edge}  # the fast edge is the one the contact closes
    f = found[edge]
    assert f.parts == ("SW1", "R1", "C1", "U1")  # R5 hangs off the open contact's loop
    assert " back across VT+ " in f.message and "VT-" not in f.message.split("back across")[1]
    # the limit is the bounce (10 ms, the tactile class) times the default margin 1
    assert f.measured.unit == "s" and f.limit.unit == "s" and f.limit.value == pytest.approx(10e-3)
    assert 0 < f.measured.value < f.limit.value


def test_the_pull_back_of_a_rising_edge_crosses_vt_minus():
    found = closure_findings(PULL_DOWN)
    assert set(found) == {"press"}
    f = found["press"]
    assert f.parts == ("SW1", "R1", "C1", "U1")
    assert " back across VT- " in f.message
    assert f.measured.unit == "s" and f.limit.unit == "s"


def test_a_slow_closure_path_leaves_the_crossing_threshold_itself():
    # Through R5 the closure's time constant is R5·C1 = 100 µs: a 1 µs closure has barely
    # begun when the edge crosses, so the level left is the crossing threshold itself.
    [f] = closure_findings(PULL_UP).values()
    assert "from the crossing threshold itself" in f.message and "closure the bounce" not in f.message


def test_a_bare_contact_leaves_the_level_of_a_one_microsecond_closure():
    [f] = closure_findings(BARE).values()
    assert "crossing threshold itself" not in f.message
    left = re.search(r"from (\S+ \S+) after a 1 µs closure", f.message)
    assert left is not None, f.message
    rc = 0.1  # a closed contact (contact_closed_resistance, rules/limits.toml: "common practice")

    def u(v, r1, c1):
        return v * rc / (r1 + rc) + v * math.exp(-1e-6 / (rc * r1 / (rc + r1) * c1))
    ends = [u(v, r1, c1) for v in (4.75, 5.25) for r1 in (9.5e3, 10.5e3) for c1 in (0.8e-6, 1.2e-6)]
    assert min(ends) * 0.99 <= volts(left.group(1)) <= max(ends) * 1.01


def test_a_time_finding_on_a_schmitt_input_quotes_the_closure_reading_it_also_fails():
    # The release edge (through R1) reaches VT+ in milliseconds; the bounce's closures pull it
    # back through R5 in microseconds: no faster than the edge, so the time-to-threshold
    # reading is reported, with the closure reading's own figure beside it.
    _board, _results, findings = check_netlist_text(f"* first edge\n{PULL_UP}{U1}.end\n")
    [f] = [f for f in findings if f.rule == "bounce-window" and f.message.startswith("release")]
    assert "time-to-threshold reading" in f.message and f.parts == ("SW1", "R1", "C1", "U1")
    assert f.message.startswith("release edge reaches VT+ ")  # a rising edge: the positive-going threshold
    [back] = re.findall(r"closure-and-opening reading pass it: .* in (\S+ \S+)\)$", f.message)
    number, unit = back.split()
    assert 0 < float(number) * SI[unit[:-1]] <= f.measured.value and unit.endswith("s")


def test_the_closure_and_opening_reading_passes_a_pull_back_of_at_least_the_bounce():
    # passes_by_pull_back's docstring: the reading applies and the bounce never brings the
    # input back, or takes "at least" the time needed (10 ms here): equality passes.
    from types import SimpleNamespace

    from drc.checks.bounce_window import passes_by_pull_back
    assert passes_by_pull_back(SimpleNamespace(fastest_s=0.010), 0.010)
    assert not passes_by_pull_back(SimpleNamespace(fastest_s=0.00999), 0.010)
    assert passes_by_pull_back(SimpleNamespace(fastest_s=None), 0.010)
    assert not passes_by_pull_back(None, 0.010)
