"""Where a finding points: its contact's netlist line, the other parts' lines as related places.

Source: the netlist text written here (its line numbers are counted by
hand below), and the finding conventions of DESIGN.md section 4: a stage
finding names the contact first and the receiver's part last, and is
located at the contact, with the other parts as related locations;
designators match case-insensitively and the first of a duplicate wins.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import pytest

from drc.checks.context import locations_of
from drc.pipeline import check_netlist_text

# Line 1 is the title line of a SPICE deck.
BOARD = """place test
V1 +5V 0 DC 5
XU1 IN o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V SWN 10k
R2 SWN IN 39k
C1 IN 0 100n
SW1 SWN 0 TACTILE
"""
LINE = {"V1": 2, "XU1": 3, "R1": 4, "R2": 5, "C1": 6, "SW1": 7}


def test_a_stage_finding_sits_at_its_contact_with_its_parts_related():
    _board, _results, findings = check_netlist_text(BOARD, "place.cir")
    [f] = [f for f in findings if f.rule == "bounce-window"][:1]
    assert f.parts[0] == "SW1" and f.parts[-1] == "U1"
    assert (f.location.file, f.location.line) == ("place.cir", LINE["SW1"])
    related = sorted(loc.line for loc in f.related)
    # The parts that time the edge and the receiver's part: every line but the contact's.
    assert LINE["SW1"] not in related and LINE["XU1"] in related
    assert set(related) <= {LINE["R1"], LINE["R2"], LINE["C1"], LINE["XU1"]} and LINE["C1"] in related
    assert len(related) == len(set(related))
    for g in (g for g in findings if g.rule == "bounce-window"):  # each part named, the contact aside
        named = [LINE["XU1" if p == "U1" else p] for p in g.parts[1:]]
        assert sorted(loc.line for loc in g.related) == sorted(named)
    assert f.contact == "SW1" and f.receiver == "U1:1" and f.board == "place.cir"
    assert "SWN" in f.nets and "IN" in f.nets


def test_a_part_finding_sits_at_its_part():
    text = BOARD.replace("R2 SWN IN 39k", "R2 SWN IN 39K\nR3 IN 0 1M")  # 1M: one milliohm in SPICE
    _board, _results, findings = check_netlist_text(text, "place.cir")
    [f] = [f for f in findings if f.rule == "ambiguous-value"]
    assert f.parts == ("R3",) and f.location.line == LINE["C1"]  # R3 is the sixth line now
    assert f.severity == "warning" and f.measured.value == pytest.approx(1e-3) and f.measured.unit == "Ω"
    assert f.nets == ("IN", "0") and f.related == ()  # the part's own nets, as written on its line


def test_locations_index_every_element_and_part():
    board, _results, _findings = check_netlist_text(BOARD, "place.cir")
    where = locations_of(board)
    assert isinstance(where, Mapping)
    assert where["sw1"].line == LINE["SW1"] and where["r2"].line == LINE["R2"] and where["xu1"].line == LINE["XU1"]
    assert where.get("u1") is not None and where["u1"].line == LINE["XU1"]  # the part by its own name
    assert where.get("nothing") is None and where.get("nothing", 7) == 7
    with pytest.raises(KeyError) as missing:
        where["nothing"]
    assert missing.value.args == ("nothing",)  # the Mapping protocol: a dict's KeyError carries the key
    names = list(where)
    assert len(names) == len(set(names)) == len(where)
    assert {"v1", "xu1", "r1", "r2", "c1", "sw1", "u1"} <= set(names)
    assert locations_of(None) == {}


def test_the_first_of_a_duplicate_designator_wins_and_elements_before_parts():
    # The reader refuses duplicates in one scope; the index must still be deterministic.
    from types import SimpleNamespace

    from drc.checks.context import Locations
    from drc.errors import SourceLocation
    loc = [SourceLocation("x.cir", n, 1) for n in range(5)]
    elements = [SimpleNamespace(designator="R1", location=loc[1]), SimpleNamespace(designator="r1", location=loc[2]),
                SimpleNamespace(designator="C1", location=loc[3])]
    where = Locations(elements, {"r1": loc[4], "u1": loc[0], "u2": loc[4]})
    assert where["r1"] == loc[1] and where["c1"] == loc[3] and where["u1"] == loc[0]
    assert sorted(where) == ["c1", "r1", "u1", "u2"]
    assert len(where) == 4 == len(list(where))  # a Mapping's length is the number of keys it iterates


def test_a_rule_context_finds_each_name_as_the_definition_says_in_any_order():
    # One context is asked many names in turn (one per finding), and the index answers the
    # first of them from its quick paths and later ones from the folded index once a name
    # written otherwise built it. The definition, by hand for the index below: the first
    # element whose designator equals the name case-insensitively, else the part or
    # contact of that name (an element named like a part or contact comes first).
    from types import SimpleNamespace

    from drc.checks.context import Locations, RuleContext
    from drc.errors import SourceLocation
    from drc.severity import Severity
    loc = [SourceLocation("x.cir", n, 1) for n in range(10)]
    elements = [SimpleNamespace(designator="R1", location=loc[1]), SimpleNamespace(designator="r1", location=loc[2]),
                SimpleNamespace(designator="C1", location=loc[3]), SimpleNamespace(designator="SW1", location=loc[5]),
                SimpleNamespace(designator="U2", location=loc[6]), SimpleNamespace(designator="C1", location=loc[8])]
    others = {"r1": loc[4], "u1": loc[0], "u2": loc[4], "sw1": loc[7]}
    expected = {"R1": loc[1], "r1": loc[1], "C1": loc[3], "c1": loc[3], "U1": loc[0], "u2": loc[6],
                "U2": loc[6], "SW1": loc[5], "sw1": loc[5], "Q9": None}
    for near in ((), (elements[3],)):
        for order in (list(expected), list(reversed(expected))):
            ctx = RuleContext(rule_id="x", default_severity=Severity.ERROR, board_name="b", limits={},
                              locations=Locations(elements, others, near))
            assert [ctx.location(n) for n in order] == [expected[n] for n in order], (near, order)


def test_a_board_without_a_netlist_locates_its_parts_and_contacts():
    # The same definition where only the parts and contacts are known (no netlist elements).
    from types import SimpleNamespace

    from drc.checks.context import RuleContext
    from drc.errors import SourceLocation
    from drc.severity import Severity
    part, contact = SourceLocation("b.cir", 3, 1), SourceLocation("b.cir", 7, 1)
    board = SimpleNamespace(parts={"u1": SimpleNamespace(designator="U1", location=part)},
                            contacts=[SimpleNamespace(designator="SW1", location=contact)], netlist=None)
    ctx = RuleContext(rule_id="x", default_severity=Severity.ERROR, board_name="b", limits={},
                      locations=locations_of(board))
    assert [ctx.location(n) for n in ("U1", "u1", "SW1", "sw1", "R9")] == [part, part, contact, contact, None]


def test_a_timing_finding_names_the_parts_its_edge_charges_through():
    # Pull-up R1 to the contact node, series R2, C1 at the pin, contact to ground.
    # By hand (Thevenin seen from C1): the press discharges C1 through R2 and the
    # closed contact (R1 only feeds the contact); the release charges it through R1 + R2.
    from drc.checks import run_stage_rules
    from tests.checks.builders import LIMITS, analysed, rc_stage
    res = analysed(rc_stage(r1=10e3, r2=10e3, c1=10e-9))  # τ ≈ 0.1-0.2 ms: both edges under a 10 ms bounce
    found = {f.message.split()[0]: f for f in run_stage_rules(res, LIMITS, selected_ids={"bounce-window"})}
    assert set(found) == {"press", "release"}
    assert found["press"].parts == ("SW1", "R2", "C1", "U1")
    assert found["release"].parts == ("SW1", "R1", "R2", "C1", "U1")
    for f in found.values():  # the fix names the same parts, no others
        assert re.findall(r"\b[RC]\d+\b", f.fix) == list(f.parts[1:-1])


def test_a_resistor_across_the_capacitor_is_on_both_edges_paths():
    # R9 from the pin to ground (neither pull nor series: role "other") sits in parallel with
    # C1, so by hand (Thevenin seen from C1) it sets both edges' time constants.
    from dataclasses import replace

    from drc.board.stage import Resistor
    from drc.checks import run_stage_rules
    from tests.checks.builders import LIMITS, analysed, rc_stage
    stage = rc_stage(r1=10e3, r2=10e3, c1=10e-9)
    bled = replace(stage, circuit=replace(stage.circuit, resistors=stage.circuit.resistors + (
        Resistor("R9", "in", "0", 100e3, role="other"),)), parts=stage.parts + ("R9",))
    res = analysed(bled)
    found = {f.message.split()[0]: f for f in run_stage_rules(res, LIMITS, selected_ids={"bounce-window"})}
    assert found["press"].parts == ("SW1", "R2", "R9", "C1", "U1")
    assert found["release"].parts == ("SW1", "R1", "R2", "R9", "C1", "U1")


def test_no_latency_finding_when_the_edge_starts_from_a_floating_level():
    from dataclasses import replace

    from drc.checks import run_stage_rules
    from tests.checks.builders import LIMITS, edge, level, result
    res = result(levels={"released": level("released", "high", 4.7, 3.5, 1.2),
                         "pressed": level("pressed", "undefined")},
                 edges={"release": edge("release", 0.2, 0.3, "rising", start_v=0.0, final_v=5.0)})
    assert run_stage_rules(res, LIMITS, selected_ids={"response-latency"}) == []
    defined = replace(res, levels={**res.levels, "pressed": level("pressed", "low", 0.0, 0.9, 0.9)})
    assert len(run_stage_rules(defined, LIMITS, selected_ids={"response-latency"})) == 1


def test_a_finding_without_a_place_sits_at_its_first_part():
    # RuleContext.finding, what a rule pack calls for a finding about parts: located at the
    # first part's line, the others' lines related (the lines of BOARD, counted by hand).
    from drc.checks.context import RuleContext
    from drc.severity import Severity
    board, _results, _findings = check_netlist_text(BOARD, "place.cir")
    ctx = RuleContext("x-pack", Severity.NOTE, "place.cir", {}, locations_of(board))
    f = ctx.finding(parts=("R2", "C1", "R1"), message="m", fix="f", measured=None, limit=None)
    assert f.location.line == LINE["R2"] and [loc.line for loc in f.related] == [LINE["C1"], LINE["R1"]]
    g = ctx.finding(parts=("C1", "C1"), message="m", fix="f", measured=None, limit=None)
    assert g.location.line == LINE["C1"] and g.related == ()  # its own place is not a related one
